// FITS files (the Flexible Image Transport System, FITS Standard 4.0, IAU FITS Working Group 2018):
// spectra in images and tables, and tables of band measurements, read from memory with cfitsio.
//
// What is read (section numbers are those of FITS 4.0, cited from memory):
//  - A 1-D spectrum in an image HDU (primary or IMAGE extension): NAXIS = 1, or NAXIS = 2 or 3 with
//    every axis after the first of length 1. Tile-compressed images (ZIMAGE = T, sec. 10) are listed
//    but refused: cfitsio crashed on damaged ones in testing (a division by zero while reading the
//    compression keywords), so it is shown them as the binary tables they are stored as, and never
//    expands them.
//    BSCALE/BZERO and BLANK are applied by cfitsio; NaN and BLANK pixels are dropped (and counted).
//    The spectral axis comes from the WCS keywords of axis 1 (sec. 8; Greisen & Calabretta 2002,
//    A&A 395, 1061; Greisen et al. 2006, A&A 446, 747): the intermediate coordinate
//        w = CD1_1 (p - CRPIX1)      or   w = CDELT1 PC1_1 (p - CRPIX1)   (p the 1-based pixel),
//    with the standard defaults CDELT1 = 1, PC1_1 = 1, CRPIX1 = 0 (sec. 8.2; noted when used) and
//    CRVAL1 required, and then by CTYPE1:
//        WAVE, AWAV, FREQ, WAVN, ENER           x = CRVAL1 + w                     (linear)
//        WAVE-LOG, AWAV-LOG, FREQ-LOG, ...      x = CRVAL1 exp(w / CRVAL1)          (Greisen et al.
//                                                                                   2006, eq. 5)
//        'LINEAR', 'LAMBDA', 'WAVELENGTH', none x = CRVAL1 + w, its kind told by the unit, which must
//                                               then be given (CUNIT1 or x_unit); with DC-FLAG = 1
//                                               (the IRAF convention) x = 10^(CRVAL1 + w)
//    CUNIT1 defaults to the standard's m (WAVE, AWAV), Hz (FREQ), m-1 (WAVN) and J (ENER). AWAV
//    (air) wavelengths are converted to vacuum (science/air_wavelength.h, Morton 2000). Velocity
//    and redshift axes, non-linear algorithms (F2W, TAB ...) and other CTYPE1s are refused.
//    The values' unit is BUNIT. Errors come from another image HDU of the same length: error_hdu,
//    or by default the first whose EXTNAME is ERR, ERROR, ERRORS, SIGMA, STAT, STDDEV or starts with
//    UNCERT (1-sigma), IVAR, INVVAR or INV_VAR (inverse variance) or VAR, VARIANCE (variance), or
//    whose HDUCLAS3 is RMSE, MSE or INVMSE (the HDUCLASn convention of ESO products, from memory). Errors
//    are in the values' unit (its square, its inverse square); a 1-sigma HDU's own BUNIT, when it is a
//    flux density of the same kind, is converted. Pixels whose error is not positive and finite
//    (an inverse variance of 0 marks a masked pixel) are dropped and counted.
//  - A spectrum in a binary (or ASCII) table (sec. 7.3, 7.2): one row per point, or a single row
//    whose columns are arrays of equal length (TFORMn repeat counts). Columns are found by name,
//    ignoring case, the first found in this order: spectral wave, wavelength, lambda, lam, wave_vac,
//    wavelength_vac, lambda_vac, loglam, freq, frequency, nu, wavenumber, awav, wave_air,
//    wavelength_air, lambda_air, x; values flux, flux_density, f_nu, fnu,
//    f_lambda, flam, flambda, intensity, radiance, spec, y; errors error, err, sigma, flux_err,
//    flux_error, err_flux, error_flux, uncertainty, y_error (1-sigma), ivar, invvar, inverse_variance
//    (inverse variance), var, variance (variance) -- or given by name or 1-based number in the
//    options ("none" for no errors). Units from TUNITn. `loglam` (and a TUNITn of the form
//    log(unit) or dex(unit)) is log10 of the wavelength, in Angstrom unless its unit says otherwise
//    (the SDSS convention). A spectral column is air when its name has the word "air", is "awav",
//    or its TCTYPn is AWAV.
//  - Band measurements: a table with a BAND column (any case) is photometry, read into the request's
//    "photometry" array (photometry_request.h): columns BAND (text), VALUE, ERROR, UNIT (text),
//    UPPER_LIMIT (logical, number or text true/false, yes/no, T/F, 1/0), ZERO_POINT (Jy, or the
//    column's TUNITn) and SYSTEMATIC_ERROR; the unit of a row is its UNIT, else VALUE's TUNITn.
//    Rows with a blank VALUE or BAND are dropped (and counted); other columns are ignored (noted).
//  - Units (CUNIT1, BUNIT, TUNITn) as planckton's unit parser reads them (science/units.h), after a
//    leading scale factor, "10**k", "10^k", "10+k", "10-k" (sec. 4.3) or a plain number such as
//    "1E-17" (common practice, e.g. SDSS), which multiplies the values. When the parser refuses a
//    unit as written, a few spellings in common use are tried in its place: Ang, Angs, A, Angstroms
//    and ANGSTROM(S) for Angstrom (in a FITS unit "A" is the ampere, but no spectrum is per ampere),
//    microns, ergs, sec, HZ, Jansky, and a parenthesised denominator erg/(s cm2 Angstrom); a note
//    says so.
//  - The options override the file: an x_unit or y_unit given replaces CUNIT1, BUNIT or TUNITn even
//    when the file has one (a note says so), and is what is used when it has none.
//
// The HDU read is `hdu` (EXTNAME, ignoring case, or 0-based number), by default the first with data
// that is not an error array. Bytes are checked before cfitsio sees them: they must begin with
// "SIMPLE  =" (sec. 4.4.1.1); compressed files (gzip, bzip2, compress, zip, xz) are refused rather than
// expanded (no decompression bombs, and one format per media type); every header must end with END, hold
// printable ASCII only (sec. 4.1.1), and have sane mandatory keywords (BITPIX one of 8, 16, 32, 64,
// -32, -64; NAXIS and TFIELDS at most 999; NAXISn, PCOUNT, GCOUNT not negative; sec. 4.4.1, 7.3.1);
// and every HDU must have the data its header declares, |BITPIX| GCOUNT (PCOUNT + NAXIS1 ... NAXISn)
// / 8 bytes (sec. 4.4.1.1, 7), within the bytes given (a missing final 2880-byte padding is
// tolerated and noted, sec. 3.1). Bytes after the last HDU that are not an extension header are
// ignored (sec. 3.5, noted). Images and tables of more than 1e7 points (photometry: 1e5 rows) are
// refused. cfitsio reads a private, padded copy of the bytes through its memory driver; nothing
// touches the file system and nothing is printed.
//
// Example:
//   planckton::api::FitsOptions options;
//   options.hdu = "SPECTRUM";
//   planckton::api::FitsContent content = planckton::api::read_fits(body, options);
//   if (content.spectrum) request.spectrum = *content.spectrum;   // x, x_unit, y, y_unit, y_error
//
// In: the file's bytes and the options. Out: FitsContent with the spectrum or the photometry array,
// and notes on what was read and converted. Problems (ProblemError): 400 malformed_document for
// bytes that are not a readable FITS file (not FITS, compressed, cut, shorter than declared, a
// header cfitsio or the checks above refuse); 413
// payload_too_large beyond the limits; 422 invalid_parameter naming the option at fault, or 422
// invalid_value when the file has no usable spectrum or table (no data, a 2-D image, no unit and no
// option, an unknown CTYPE1, lengths that differ ...). Every detail lists what the file holds (its
// HDUs with their types and EXTNAMEs, or the keywords and columns) and what to add or give.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

#include "science/spectrum.h"

namespace planckton::api {

// True when the bytes begin with the primary header's first keyword, "SIMPLE  =" (FITS 4.0,
// sec. 4.4.1.1).
bool looks_like_fits(std::string_view bytes);

// Each member is a query parameter of POST /v1/fit (application/fits) and a CLI flag of the same name.
struct FitsOptions {
  std::string hdu;           // EXTNAME (ignoring case) or 0-based number; empty: the first HDU with data
  std::string x_column;      // tables: column name (ignoring case) or 1-based number; empty: by common names
  std::string y_column;
  std::string error_column;  // also "none": no errors
  std::string error_hdu;     // images: EXTNAME or 0-based number of the errors; "none": no errors
  std::string x_unit;        // overrides CUNIT1 / TUNITn when given (a note says so)
  std::string y_unit;        // overrides BUNIT / TUNITn / the photometry UNIT column when given
};

struct FitsContent {
  std::optional<SpectrumInput> spectrum;     // x (vacuum for air input), x_unit, y, y_unit, y_error
  std::optional<nlohmann::json> photometry;  // the request's "photometry" array
  std::vector<std::string> notes;            // what was read and converted, one sentence each
};

FitsContent read_fits(std::string_view bytes, const FitsOptions& options);

}  // namespace planckton::api
