// Wavelengths measured in air, converted to vacuum (and back): for spectra whose axis is given in
// standard air, e.g. a FITS spectrum with CTYPE1 = 'AWAV' (Greisen et al. 2006, A&A 446, 747).
// planckton's spectral axis is always a vacuum wavelength (or a frequency, which has no air form).
//
// Method. D. C. Morton 2000 (ApJS 130, 403, eq. 8) gives the refractive index of dry standard air
// (15 C, 101325 Pa, after the Edlen formula as updated by Birch & Downs 1994) as a function of the
// VACUUM wavenumber s = 10^4 / lambda_vac (lambda in Angstrom, s in um^-1):
//     n = 1 + 8.34254e-5 + 2.406147e-2 / (130 - s^2) + 1.5998e-4 / (38.9 - s^2),
//     lambda_air = lambda_vac / n.
// Its inverse, as a function of the AIR wavenumber s = 10^4 / lambda_air, is the fit by
// N. Piskunov given on the VALD documentation pages ("Air to vacuum conversion", VALD3 manual):
//     n = 1 + 8.336624212083e-5 + 2.408926869968e-2 / (130.1065924522 - s^2)
//           + 1.599740894897e-4 / (38.92568793293 - s^2),
//     lambda_vac = lambda_air * n.
// The two agree to better than 1e-11 relative over the range below (air -> vacuum -> air), far
// below any spectrograph's calibration.
//
// Range: air wavelengths from 200 nm to 20 um. Below 200 nm (2000 Angstrom) wavelengths are
// quoted in vacuum by convention (the IAU's; VALD converts only above 2000 Angstrom), and the
// formula's resonance terms approach their poles (s^2 = 130 and 38.9, i.e. 877 and 1603 Angstrom).
// The upper limit is planckton's own: the formula was fitted to visible and near-infrared
// refractivity, and air wavelengths are not quoted beyond the mid-infrared, so rather than
// extrapolate further the conversion refuses. Outside the range: InputError.
//
// Example:
//   double vac = planckton::air_to_vacuum_wavelength(656.2801e-9);   // H-alpha: 656.4614e-9 m
//   double air = planckton::vacuum_to_air_wavelength(vac);            // 656.2801e-9 m again
//
// In: a wavelength in metres. Out: the wavelength in the other medium, in metres; values outside
// the range or not finite throw InputError (field "x", so that callers can name the pixel).
#pragma once

namespace planckton {

inline constexpr double kAirWavelengthMinM = 200e-9;  // 2000 Angstrom
inline constexpr double kAirWavelengthMaxM = 20e-6;

// Air -> vacuum: Piskunov's inverse of Morton 2000 eq. 8 (VALD).
double air_to_vacuum_wavelength(double air_wavelength_m);

// Vacuum -> air: Morton 2000 eq. 8. Its range is that of the air wavelengths it gives.
double vacuum_to_air_wavelength(double vacuum_wavelength_m);

}  // namespace planckton
