// FITS spectra and tables (core/api/fits_reader.h). Every file is made here, in memory, with cfitsio
// (fits_create_memfile), or is a FITS file of this kind spoiled on purpose.
//
// Sources of the checks: the FITS Standard 4.0 (IAU FITS Working Group, 2018; section numbers cited
// from memory), the WCS papers, Greisen & Calabretta 2002 (A&A 395, 1061; linear axes and the
// defaults of CRPIX, CDELT, PC) and Greisen et al. 2006 (A&A 446, 747; spectral types, their default
// units, and WAVE-LOG, eq. 5), Morton 2000 (ApJS 130, 403, eq. 8) for air wavelengths, the SDSS
// convention for loglam (log10 of the vacuum wavelength in Angstrom, from memory), and RFC 1951/1952
// for the gzip file. The spectra's values are invented for the tests.
#include <gtest/gtest.h>

#include <fitsio.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <ostream>
#include <random>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "api/fit_service.h"
#include "api/fits_reader.h"
#include "api/problem.h"
#include "api/table_reader.h"
#include "science/air_wavelength.h"
#include "science/constants.h"
#include "science/planck.h"
#include "science/units.h"
#include "test_support.h"

namespace {

using planckton::api::FitsContent;
using planckton::api::FitsOptions;
using planckton::api::Problem;
using planckton::api::ProblemError;
using planckton::api::read_fits;
using planckton::testing::RelativelyNear;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

::testing::AssertionResult Contains(const std::string& text, const std::string& part) {
  if (text.find(part) != std::string::npos) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "'" << part << "' is not in: " << text;
}

::testing::AssertionResult NotesContain(const FitsContent& content, const std::string& part) {
  std::string all;
  for (const std::string& note : content.notes) {
    if (note.find(part) != std::string::npos) return ::testing::AssertionSuccess();
    all += "\n  " + note;
  }
  return ::testing::AssertionFailure() << "no note has '" << part << "'; the notes are:" << all;
}

// ---- files made with cfitsio ----------------------------------------------------------------

struct ColumnSpec {
  std::string name, form, unit;
};

// A FITS file in memory. Each call adds an HDU or keywords to the current HDU; bytes() closes it.
class FitsWriter {
 public:
  FitsWriter() { fits_create_memfile(&file_, &memory_, &size_, 2880, std::realloc, &status_); }
  FitsWriter(const FitsWriter&) = delete;
  FitsWriter& operator=(const FitsWriter&) = delete;
  ~FitsWriter() {
    if (file_ != nullptr) {
      int status = 0;
      fits_close_file(file_, &status);
    }
    std::free(memory_);
  }

  FitsWriter& empty_primary() {
    fits_create_img(file_, BYTE_IMG, 0, nullptr, &status_);
    return *this;
  }

  FitsWriter& image(const std::vector<double>& values, std::vector<long> axes = {}, int bitpix = DOUBLE_IMG) {
    if (axes.empty()) axes = {static_cast<long>(values.size())};
    fits_create_img(file_, bitpix, static_cast<int>(axes.size()), axes.data(), &status_);
    if (!values.empty()) {
      fits_write_img(file_, TDOUBLE, 1, static_cast<LONGLONG>(values.size()), const_cast<double*>(values.data()), &status_);
    }
    return *this;
  }

  // A RICE-compressed integer image (FITS 4.0 sec. 10, tiled image compression), as an extension.
  FitsWriter& compressed_image(const std::vector<double>& values, long length) {
    fits_set_compression_type(file_, RICE_1, &status_);
    long axes[1] = {length};
    fits_create_img(file_, LONG_IMG, 1, axes, &status_);
    if (!values.empty()) {
      fits_write_img(file_, TDOUBLE, 1, static_cast<LONGLONG>(values.size()), const_cast<double*>(values.data()), &status_);
    }
    fits_set_compression_type(file_, NOCOMPRESS, &status_);
    return *this;
  }

  FitsWriter& text(const char* name, const std::string& value) {
    fits_update_key(file_, TSTRING, name, const_cast<char*>(value.c_str()), nullptr, &status_);
    return *this;
  }
  FitsWriter& real(const char* name, double value) {
    fits_update_key(file_, TDOUBLE, name, &value, nullptr, &status_);
    return *this;
  }
  FitsWriter& integer(const char* name, long value) {
    fits_update_key(file_, TLONG, name, &value, nullptr, &status_);
    return *this;
  }

  FitsWriter& table(const std::vector<ColumnSpec>& columns, long rows, const std::string& extname = "",
                    int type = BINARY_TBL) {
    std::vector<char*> names, forms, units;
    for (const ColumnSpec& c : columns) {
      names.push_back(const_cast<char*>(c.name.c_str()));
      forms.push_back(const_cast<char*>(c.form.c_str()));
      units.push_back(const_cast<char*>(c.unit.c_str()));
    }
    fits_create_tbl(file_, type, rows, static_cast<int>(columns.size()), names.data(), forms.data(), units.data(),
                    extname.empty() ? nullptr : extname.c_str(), &status_);
    return *this;
  }
  FitsWriter& numbers(int column, const std::vector<double>& values, long row = 1) {
    fits_write_col(file_, TDOUBLE, column, row, 1, static_cast<LONGLONG>(values.size()), const_cast<double*>(values.data()),
                   &status_);
    return *this;
  }
  FitsWriter& strings(int column, const std::vector<std::string>& values) {
    std::vector<char*> pointers;
    for (const std::string& v : values) pointers.push_back(const_cast<char*>(v.c_str()));
    fits_write_col(file_, TSTRING, column, 1, 1, static_cast<LONGLONG>(values.size()), pointers.data(), &status_);
    return *this;
  }
  FitsWriter& logicals(int column, const std::vector<bool>& values) {
    std::vector<char> flags;
    for (bool v : values) flags.push_back(v ? 1 : 0);
    fits_write_col(file_, TLOGICAL, column, 1, 1, static_cast<LONGLONG>(flags.size()), flags.data(), &status_);
    return *this;
  }

  std::string bytes() {
    fits_close_file(file_, &status_);
    file_ = nullptr;
    if (status_ != 0) {
      char text[FLEN_STATUS + 1] = {};
      fits_get_errstatus(status_, text);
      throw std::runtime_error(std::string("the test's cfitsio writer failed: ") + text);
    }
    return std::string(static_cast<const char*>(memory_), size_);
  }

 private:
  fitsfile* file_ = nullptr;
  void* memory_ = nullptr;
  std::size_t size_ = 0;
  int status_ = 0;
};

std::vector<double> ramp(std::size_t n, double start, double step) {
  std::vector<double> v(n);
  for (std::size_t i = 0; i < n; ++i) v[i] = start + step * static_cast<double>(i);
  return v;
}

// A linear wavelength axis, Angstrom, flux in erg/s/cm2/Angstrom.
FitsWriter& linear_wave_keys(FitsWriter& w, double crval = 4000.0, double cdelt = 2.0, double crpix = 1.0) {
  return w.text("CTYPE1", "WAVE").text("CUNIT1", "Angstrom").real("CRVAL1", crval).real("CDELT1", cdelt).real("CRPIX1", crpix);
}

std::string linear_spectrum_file(std::size_t n = 10, const std::string& bunit = "erg/s/cm2/Angstrom") {
  FitsWriter w;
  w.image(ramp(n, 1.0, 0.5));
  linear_wave_keys(w);
  if (!bunit.empty()) w.text("BUNIT", bunit);
  return w.bytes();
}

Problem problem_of(std::string_view bytes, const FitsOptions& options = {}) {
  try {
    read_fits(bytes, options);
  } catch (const ProblemError& e) {
    return e.problem();
  }
  ADD_FAILURE() << "read_fits accepted the file";
  return {};
}

// ---- the FITS signature --------------------------------------------------------------------

// FITS 4.0 sec. 4.4.1.1: SIMPLE is the first keyword of the primary header, "SIMPLE  =" in bytes 1-9.
TEST(FitsReader, LooksLikeFitsChecksTheFirstKeyword) {
  EXPECT_TRUE(planckton::api::looks_like_fits(linear_spectrum_file()));
  EXPECT_TRUE(planckton::api::looks_like_fits("SIMPLE  =                    T"));
  EXPECT_FALSE(planckton::api::looks_like_fits("SIMPLE ="));
  EXPECT_FALSE(planckton::api::looks_like_fits("x,y\n1,2\n"));
  EXPECT_FALSE(planckton::api::looks_like_fits(""));
  EXPECT_FALSE(planckton::api::looks_like_fits("XTENSION= 'IMAGE   '"));
}

// ---- images: the spectral axis ---------------------------------------------------------------

// Greisen & Calabretta 2002 sec. 2.1 / FITS 4.0 sec. 8.2: x = CRVAL1 + CDELT1 (p - CRPIX1), p 1-based.
TEST(FitsReader, LinearWaveImage) {
  const FitsContent content = read_fits(linear_spectrum_file(), {});
  ASSERT_TRUE(content.spectrum);
  EXPECT_FALSE(content.photometry);
  const auto& s = *content.spectrum;
  ASSERT_EQ(s.x.size(), 10u);
  EXPECT_DOUBLE_EQ(s.x[0], 4000.0);
  EXPECT_DOUBLE_EQ(s.x[9], 4018.0);
  EXPECT_EQ(s.x_unit, "Angstrom");
  EXPECT_EQ(s.y_unit, "erg/s/cm2/Angstrom");
  EXPECT_DOUBLE_EQ(s.y[3], 2.5);
  EXPECT_TRUE(s.y_error.empty());
  EXPECT_TRUE(NotesContain(content, "HDU 0 (primary): 10-point image, CTYPE1 = 'WAVE' in 'Angstrom'"));
}

TEST(FitsReader, ReferencePixelOtherThanTheFirst) {
  FitsWriter w;
  w.image(ramp(5, 1.0, 1.0));
  linear_wave_keys(w, 5000.0, 0.5, 3.0).text("BUNIT", "W/m2/nm");
  const auto s = *read_fits(w.bytes(), {}).spectrum;
  EXPECT_DOUBLE_EQ(s.x[0], 4999.0);  // p = 1: 5000 + 0.5 (1 - 3)
  EXPECT_DOUBLE_EQ(s.x[2], 5000.0);
}

// Greisen & Calabretta 2002 sec. 2.1.2: CDi_j replaces CDELTi and PCi_j; when both are present CD wins.
TEST(FitsReader, CdMatrixReplacesCdelt) {
  FitsWriter w;
  w.image(ramp(4, 1.0, 1.0)).text("CTYPE1", "WAVE").text("CUNIT1", "nm").real("CRVAL1", 500.0).real("CD1_1", 0.25)
      .real("CDELT1", 99.0).real("CRPIX1", 1.0).text("BUNIT", "W/m2/nm");
  const FitsContent content = read_fits(w.bytes(), {});
  EXPECT_DOUBLE_EQ(content.spectrum->x[3], 500.75);
  EXPECT_TRUE(NotesContain(content, "CD1_1 used, CDELT1 ignored"));
}

// FITS 4.0 sec. 8.2 (from memory): CRPIXj defaults to 0.0 and CDELTi to 1.0 when absent.
TEST(FitsReader, WcsDefaultsFollowTheStandardAndAreNoted) {
  FitsWriter w;
  w.image(ramp(3, 1.0, 1.0)).text("CTYPE1", "WAVE").text("CUNIT1", "nm").real("CRVAL1", 600.0).text("BUNIT", "W/m2/nm");
  const FitsContent content = read_fits(w.bytes(), {});
  EXPECT_DOUBLE_EQ(content.spectrum->x[0], 601.0);  // 600 + 1 (1 - 0)
  EXPECT_TRUE(NotesContain(content, "FITS defaults CDELT1 = 1 and CRPIX1 = 0"));
}

// Greisen et al. 2006 Table 1 (from memory): the default units are m for WAVE and AWAV, Hz for FREQ.
TEST(FitsReader, DefaultUnitsOfTheSpectralTypes) {
  {
    FitsWriter w;
    w.image(ramp(3, 1.0, 1.0)).text("CTYPE1", "WAVE").real("CRVAL1", 5e-7).real("CDELT1", 1e-9).real("CRPIX1", 1)
        .text("BUNIT", "W/m2/um");
    const FitsContent content = read_fits(w.bytes(), {});
    EXPECT_EQ(content.spectrum->x_unit, "m");
    EXPECT_TRUE(NotesContain(content, "CUNIT1 absent: the FITS default for WAVE, 'm'"));
  }
  {
    FitsWriter w;
    w.image(ramp(3, 1.0, 1.0)).text("CTYPE1", "FREQ").real("CRVAL1", 5e14).real("CDELT1", 1e12).real("CRPIX1", 1)
        .text("BUNIT", "Jy");
    const FitsContent content = read_fits(w.bytes(), {});
    EXPECT_EQ(content.spectrum->x_unit, "Hz");
    EXPECT_DOUBLE_EQ(content.spectrum->x[2], 5.02e14);
  }
}

// A WAVE axis without CUNIT1 whose values look like Angstrom is read in metres, as the standard says,
// with a note that says what to add.
TEST(FitsReader, MetreDefaultWithAngstromLikeValuesIsFlagged) {
  FitsWriter w;
  w.image(ramp(3, 1.0, 1.0)).text("CTYPE1", "WAVE").real("CRVAL1", 4000.0).real("CDELT1", 1.0).real("CRPIX1", 1)
      .text("BUNIT", "W/m2/um");
  EXPECT_TRUE(NotesContain(read_fits(w.bytes(), {}), "if they are in Angstrom or nm, add CUNIT1 or give x_unit"));
}

TEST(FitsReader, FrequencyAxisInGigahertz) {
  FitsWriter w;
  w.image(ramp(4, 1.0, 1.0)).text("CTYPE1", "FREQ").text("CUNIT1", "GHz").real("CRVAL1", 100.0).real("CDELT1", 10.0)
      .real("CRPIX1", 1).text("BUNIT", "mJy");
  const auto s = *read_fits(w.bytes(), {}).spectrum;
  EXPECT_EQ(s.x_unit, "GHz");
  EXPECT_DOUBLE_EQ(s.x[3], 130.0);
  EXPECT_EQ(s.y_unit, "mJy");
}

// Greisen et al. 2006, eq. 5: for CTYPE1 = 'WAVE-LOG', lambda = CRVAL1 exp(w / CRVAL1), w = CDELT1 (p -
// CRPIX1); so that at the reference pixel the step is CDELT1 (their sec. 3.2).
TEST(FitsReader, WaveLogAxisGreisen2006) {
  FitsWriter w;
  w.image(ramp(100, 1.0, 0.0)).text("CTYPE1", "WAVE-LOG").text("CUNIT1", "Angstrom").real("CRVAL1", 5000.0)
      .real("CDELT1", 1.2).real("CRPIX1", 50.0).text("BUNIT", "erg/s/cm2/Angstrom");
  const FitsContent content = read_fits(w.bytes(), {});
  const auto& x = content.spectrum->x;
  ASSERT_EQ(x.size(), 100u);
  EXPECT_DOUBLE_EQ(x[49], 5000.0);
  EXPECT_TRUE(RelativelyNear(x[0], 5000.0 * std::exp(1.2 * (1.0 - 50.0) / 5000.0), 1e-14));
  EXPECT_TRUE(RelativelyNear(x[99], 5000.0 * std::exp(1.2 * (100.0 - 50.0) / 5000.0), 1e-14));
  EXPECT_NEAR(x[50] - x[49], 1.2, 1.2 * 1.2 / 5000.0);  // the step at the reference pixel ~ CDELT1
  EXPECT_TRUE(NotesContain(content, "logarithmic, Greisen et al. 2006 eq. 5"));
}

// AWAV: air wavelengths (Greisen et al. 2006 Table 1), converted with Morton 2000 eq. 8 (Piskunov's
// inverse). H-alpha at 6562.801 Angstrom in air is 6564.614 in vacuum (NIST ASD, from memory).
TEST(FitsReader, AirWavelengthImageIsConvertedToVacuum) {
  FitsWriter w;
  w.image({1.0, 2.0, 3.0}).text("CTYPE1", "AWAV").text("CUNIT1", "Angstrom").real("CRVAL1", 6562.801)
      .real("CDELT1", 1.0).real("CRPIX1", 1).text("BUNIT", "erg/s/cm2/Angstrom");
  const FitsContent content = read_fits(w.bytes(), {});
  const auto& x = content.spectrum->x;
  EXPECT_NEAR(x[0], 6564.614, 0.005);
  EXPECT_DOUBLE_EQ(x[2], planckton::air_to_vacuum_wavelength(6564.801e-10) / 1e-10);
  EXPECT_TRUE(NotesContain(content, "CTYPE1 = 'AWAV' in 'Angstrom', converted to vacuum (Morton 2000"));
}

TEST(FitsReader, AirWavelengthLogAxis) {
  FitsWriter w;
  w.image({1.0, 2.0}).text("CTYPE1", "AWAV-LOG").text("CUNIT1", "nm").real("CRVAL1", 500.0).real("CDELT1", 0.1)
      .real("CRPIX1", 1).text("BUNIT", "W/m2/nm");
  const auto s = *read_fits(w.bytes(), {}).spectrum;
  const double air = 500.0 * std::exp(0.1 / 500.0);
  EXPECT_DOUBLE_EQ(s.x[1], planckton::air_to_vacuum_wavelength(air * 1e-9) / 1e-9);
}

// Air wavelengths below 200 nm are outside the conversion's range (science/air_wavelength.h).
TEST(FitsReader, AirWavelengthOutsideTheRangeIsRefused) {
  FitsWriter w;
  w.image({1.0, 2.0}).text("CTYPE1", "AWAV").text("CUNIT1", "nm").real("CRVAL1", 150.0).real("CDELT1", 1.0)
      .real("CRPIX1", 1).text("BUNIT", "W/m2/nm");
  const Problem p = problem_of(w.bytes());
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "air-to-vacuum conversion (Morton 2000"));
}

// 'LINEAR' (and no CTYPE1) is a linear axis whose kind the unit tells; without a unit it is refused.
TEST(FitsReader, LinearCtypeNeedsAUnit) {
  const auto file = [](bool with_unit) {
    FitsWriter w;
    w.image({1.0, 2.0, 3.0}).text("CTYPE1", "LINEAR").real("CRVAL1", 3000.0).real("CDELT1", 5.0).real("CRPIX1", 1)
        .text("BUNIT", "erg/s/cm2/Angstrom");
    if (with_unit) w.text("CUNIT1", "Angstrom");
    return w.bytes();
  };
  const FitsContent content = read_fits(file(true), {});
  EXPECT_DOUBLE_EQ(content.spectrum->x[2], 3010.0);
  EXPECT_TRUE(NotesContain(content, "a linear axis, a wavelength by its unit"));

  const Problem p = problem_of(file(false));
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "no unit for its spectral axis (no CUNIT1); add CUNIT1 to the header or give x_unit"));

  FitsOptions options;
  options.x_unit = "Angstrom";
  EXPECT_EQ(read_fits(file(false), options).spectrum->x_unit, "Angstrom");
}

// IRAF's convention (from memory of the IRAF onedspec documentation): DC-FLAG = 1 means CRVAL1 and
// CDELT1 are log10 of the wavelength.
TEST(FitsReader, IrafLogLinearAxis) {
  FitsWriter w;
  w.image({1.0, 2.0}).text("CTYPE1", "LINEAR").text("CUNIT1", "Angstrom").real("CRVAL1", 3.6).real("CDELT1", 1e-4)
      .real("CRPIX1", 1).integer("DC-FLAG", 1).text("BUNIT", "erg/s/cm2/Angstrom");
  const auto s = *read_fits(w.bytes(), {}).spectrum;
  EXPECT_TRUE(RelativelyNear(s.x[0], std::pow(10.0, 3.6), 1e-14));
  EXPECT_TRUE(RelativelyNear(s.x[1], std::pow(10.0, 3.6001), 1e-13));
}

// FITS 4.0 sec. 8: a 1-D spectrum may be stored as NAXIS = 2 or 3 with the other axes of length 1.
TEST(FitsReader, DegenerateAxesAreOneDimensional) {
  for (const std::vector<long>& axes : {std::vector<long>{6, 1}, std::vector<long>{6, 1, 1}}) {
    FitsWriter w;
    w.image(ramp(6, 1.0, 1.0), axes);
    linear_wave_keys(w).text("BUNIT", "erg/s/cm2/Angstrom");
    const auto s = *read_fits(w.bytes(), {}).spectrum;
    EXPECT_EQ(s.x.size(), 6u);
    EXPECT_DOUBLE_EQ(s.y[5], 6.0);
  }
}

// ---- images: values, units, blanks -----------------------------------------------------------

// FITS 4.0 sec. 4.3 (from memory): a unit string may start with a scale factor 10**k, 10^k or 10+k;
// "1E-17 ..." is the common spelling of SDSS files; "Ang" is SDSS's spelling of the angstrom.
TEST(FitsReader, BunitScaleFactorsMultiplyTheValues) {
  struct Case {
    std::string bunit, unit;
    double factor;
  };
  for (const Case& c : {Case{"1e-17 erg/s/cm2/Angstrom", "erg/s/cm2/Angstrom", 1e-17},
                        Case{"10**-17 erg/s/cm^2/Angstrom", "erg/s/cm^2/Angstrom", 1e-17},
                        Case{"10**(-17) erg.s**-1.cm**-2.Angstrom**-1", "erg.s**-1.cm**-2.Angstrom**-1", 1e-17},
                        Case{"10^-3 W/m2/nm", "W/m2/nm", 1e-3}, Case{"10+3 Jy", "Jy", 1e3},
                        Case{"1E-17 erg/cm^2/s/Ang", "erg/cm^2/s/Angstrom", 1e-17},
                        Case{"2.5 mJy", "mJy", 2.5}, Case{"1e-17 (erg/s/cm2/Angstrom)", "erg/s/cm2/Angstrom", 1e-17}}) {
    SCOPED_TRACE(c.bunit);
    const FitsContent content = read_fits(linear_spectrum_file(4, c.bunit), {});
    EXPECT_EQ(content.spectrum->y_unit, c.unit);
    EXPECT_TRUE(RelativelyNear(content.spectrum->y[2], 2.0 * c.factor, 1e-15));
    EXPECT_TRUE(NotesContain(content, "values multiplied by"));
    // Whatever was made of it is a unit planckton parses.
    EXPECT_NO_THROW(planckton::parse_flux_density_unit(content.spectrum->y_unit));
  }
}

TEST(FitsReader, CommonSpellingsOfUnitsAreNoted) {
  for (const std::string bunit : {"erg/cm2/s/A", "ergs/s/cm2/Angstroms", "erg/(s cm2 Angstrom)", "W/(m**2.um)"}) {
    SCOPED_TRACE(bunit);
    const FitsContent content = read_fits(linear_spectrum_file(4, bunit), {});
    EXPECT_NO_THROW(planckton::parse_flux_density_unit(content.spectrum->y_unit));
    EXPECT_TRUE(NotesContain(content, "a spelling in common use"));
  }
}

TEST(FitsReader, MissingBunitNeedsTheOption) {
  const std::string file = linear_spectrum_file(4, "");
  const Problem p = problem_of(file);
  EXPECT_EQ(p.status, 422);
  EXPECT_EQ(p.type, "/problems/invalid-value");
  EXPECT_TRUE(Contains(p.detail, "no unit for its values (no BUNIT); add BUNIT to the header or give y_unit"));
  EXPECT_FALSE(p.accepted.empty());
  FitsOptions options;
  options.y_unit = "W/m2/nm";
  EXPECT_EQ(read_fits(file, options).spectrum->y_unit, "W/m2/nm");
}

// The options override the file's units (fits_reader.h), and a note says so.
TEST(FitsReader, OptionsOverrideTheFilesUnits) {
  FitsOptions options;
  options.x_unit = "nm";
  options.y_unit = "1e-3 W/m2/nm";
  const FitsContent content = read_fits(linear_spectrum_file(), options);
  EXPECT_EQ(content.spectrum->x_unit, "nm");
  EXPECT_EQ(content.spectrum->y_unit, "W/m2/nm");
  EXPECT_DOUBLE_EQ(content.spectrum->y[0], 1e-3);
  EXPECT_TRUE(NotesContain(content, "x_unit 'nm' given: it replaces CUNIT1 = 'Angstrom'"));
  EXPECT_TRUE(NotesContain(content, "y_unit '1e-3 W/m2/nm' given: it replaces BUNIT = 'erg/s/cm2/Angstrom'"));
}

TEST(FitsReader, BadUnitOptionsNameTheParameter) {
  FitsOptions options;
  options.x_unit = "furlong";
  Problem p = problem_of(linear_spectrum_file(), options);
  EXPECT_EQ(p.status, 422);
  EXPECT_EQ(p.parameter, "x_unit");
  options = {};
  options.y_unit = "counts";
  p = problem_of(linear_spectrum_file(), options);
  EXPECT_EQ(p.parameter, "y_unit");
  // A frequency axis given a wavelength unit.
  FitsWriter w;
  w.image({1.0, 2.0}).text("CTYPE1", "FREQ").real("CRVAL1", 1e14).real("CDELT1", 1e12).real("CRPIX1", 1).text("BUNIT", "Jy");
  options = {};
  options.x_unit = "nm";
  p = problem_of(w.bytes(), options);
  EXPECT_EQ(p.parameter, "x_unit");
  EXPECT_TRUE(Contains(p.detail, "CTYPE1 = 'FREQ' needs a frequency unit"));
}

// FITS 4.0 sec. 5.3 and 4.4.2 (from memory): physical = BZERO + BSCALE x stored; BLANK marks undefined
// integer pixels. cfitsio applies both; blank pixels are dropped and counted.
TEST(FitsReader, BscaleBzeroAndBlankPixels) {
  // Stored values 10, 20, -99 (BLANK), 40, 50, written raw before BSCALE and BZERO exist.
  FitsWriter w;
  w.image({10, 20, -99, 40, 50}, {5}, SHORT_IMG);
  linear_wave_keys(w).text("BUNIT", "W/m2/nm").real("BSCALE", 0.5).real("BZERO", 100.0).integer("BLANK", -99);
  const FitsContent content = read_fits(w.bytes(), {});
  const auto& s = *content.spectrum;
  ASSERT_EQ(s.y.size(), 4u);
  EXPECT_DOUBLE_EQ(s.y[0], 105.0);
  EXPECT_DOUBLE_EQ(s.y[2], 120.0);
  EXPECT_DOUBLE_EQ(s.x[2], 4006.0);  // the blank pixel's wavelength is gone with it
  EXPECT_TRUE(NotesContain(content, "BSCALE = 0.5 and BZERO = 100 applied"));
  EXPECT_TRUE(NotesContain(content, "1 point with a blank (NaN or BLANK/TNULL) value dropped"));
}

// FITS 4.0 sec. 5.3 (IEEE NaN marks undefined floating-point pixels).
TEST(FitsReader, NanPixelsAreDroppedAndCounted) {
  FitsWriter w;
  w.image({1.0, kNaN, 3.0, kNaN, 5.0});
  linear_wave_keys(w).text("BUNIT", "W/m2/nm");
  const FitsContent content = read_fits(w.bytes(), {});
  EXPECT_EQ(content.spectrum->y, (std::vector<double>{1.0, 3.0, 5.0}));
  EXPECT_EQ(content.spectrum->x, (std::vector<double>{4000.0, 4004.0, 4008.0}));
  EXPECT_TRUE(NotesContain(content, "2 points with a blank"));
}

TEST(FitsReader, WcsGivingNonPositiveWavelengthsIsRefused) {
  FitsWriter w;
  w.image({1.0, 2.0, 3.0});
  linear_wave_keys(w, 2.0, -2.0, 1.0).text("BUNIT", "W/m2/nm");
  const Problem p = problem_of(w.bytes());
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "spectral coordinates must be positive"));
}

// ---- images: errors from other HDUs ------------------------------------------------------------

std::string spectrum_with_errors(const std::string& extname, const std::vector<double>& errors,
                                 const std::string& hduclas3 = "") {
  FitsWriter w;
  w.empty_primary();
  w.image({10.0, 20.0, 30.0, 40.0}).text("EXTNAME", "FLUX");
  linear_wave_keys(w).text("BUNIT", "1e-17 erg/s/cm2/Angstrom");
  w.image(errors);
  if (!extname.empty()) w.text("EXTNAME", extname);
  if (!hduclas3.empty()) w.text("HDUCLAS3", hduclas3);
  return w.bytes();
}

TEST(FitsReader, SigmaHduBesideTheSpectrum) {
  const FitsContent content = read_fits(spectrum_with_errors("ERR", {1.0, 2.0, 3.0, 4.0}), {});
  const auto& s = *content.spectrum;
  EXPECT_EQ(s.y_unit, "erg/s/cm2/Angstrom");
  ASSERT_EQ(s.y_error.size(), 4u);
  EXPECT_TRUE(RelativelyNear(s.y_error[1], 2e-17, 1e-15));  // in the values' unit, with their scale factor
  EXPECT_TRUE(RelativelyNear(s.y[1], 2e-16, 1e-15));
  EXPECT_TRUE(NotesContain(content, "HDU 1 'FLUX': 4-point image"));
  EXPECT_TRUE(NotesContain(content, "errors from HDU 2 'ERR' (1-sigma errors)"));
}

TEST(FitsReader, InverseVarianceHduAndMaskedPixels) {
  // ivar = 0 marks a masked pixel (common practice, e.g. SDSS): it is dropped.
  const FitsContent content = read_fits(spectrum_with_errors("IVAR", {4.0, 0.0, 0.25, 1.0}), {});
  const auto& s = *content.spectrum;
  ASSERT_EQ(s.y_error.size(), 3u);
  EXPECT_TRUE(RelativelyNear(s.y_error[0], 0.5e-17, 1e-15));
  EXPECT_TRUE(RelativelyNear(s.y_error[1], 2e-17, 1e-15));
  EXPECT_DOUBLE_EQ(s.x[1], 4004.0);
  EXPECT_TRUE(NotesContain(content, "inverse variance, sigma = 1/sqrt(ivar)"));
  EXPECT_TRUE(NotesContain(content, "1 point whose error is not positive and finite dropped"));
}

TEST(FitsReader, VarianceHdu) {
  const auto s = *read_fits(spectrum_with_errors("VARIANCE", {4.0, 9.0, 16.0, 25.0}), {}).spectrum;
  EXPECT_TRUE(RelativelyNear(s.y_error[3], 5e-17, 1e-15));
}

TEST(FitsReader, UncertaintyNamesAndHduclas) {
  EXPECT_EQ(read_fits(spectrum_with_errors("UNCERTAINTY", {1, 1, 1, 1}), {}).spectrum->y_error.size(), 4u);
  // HDUCLAS3 = 'INVMSE' (the HDUCLASn convention of ESO products, from memory): inverse variance.
  const auto s = *read_fits(spectrum_with_errors("WEIGHTS", {4.0, 4.0, 4.0, 4.0}, "INVMSE"), {}).spectrum;
  EXPECT_TRUE(RelativelyNear(s.y_error[0], 0.5e-17, 1e-15));
}

TEST(FitsReader, ErrorHduOption) {
  const std::string unnamed = spectrum_with_errors("", {1.0, 1.0, 1.0, 1.0});
  EXPECT_TRUE(read_fits(unnamed, {}).spectrum->y_error.empty());  // no name: not taken by default
  FitsOptions options;
  options.error_hdu = "2";
  const FitsContent content = read_fits(unnamed, options);
  EXPECT_EQ(content.spectrum->y_error.size(), 4u);
  EXPECT_TRUE(NotesContain(content, "read as 1-sigma errors"));
  options.error_hdu = "none";
  EXPECT_TRUE(read_fits(spectrum_with_errors("ERR", {1, 1, 1, 1}), options).spectrum->y_error.empty());
  options.error_hdu = "err";  // EXTNAME, ignoring case
  EXPECT_EQ(read_fits(spectrum_with_errors("ERR", {1, 1, 1, 1}), options).spectrum->y_error.size(), 4u);
}

TEST(FitsReader, ErrorHduOptionAtFault) {
  FitsOptions options;
  options.error_hdu = "NOISE";
  Problem p = problem_of(spectrum_with_errors("ERR", {1, 1, 1, 1}), options);
  EXPECT_EQ(p.parameter, "error_hdu");
  EXPECT_TRUE(Contains(p.detail, "no HDU has EXTNAME 'NOISE'; the file holds 3 HDUs: HDU 0 (primary): image, no data; "
                                 "HDU 1 'FLUX': image 4; HDU 2 'ERR': image 4"));
  options.error_hdu = "1";
  p = problem_of(spectrum_with_errors("ERR", {1, 1, 1, 1}), options);
  EXPECT_EQ(p.parameter, "error_hdu");
  options.error_hdu = "0";
  p = problem_of(spectrum_with_errors("ERR", {1, 1, 1, 1}), options);
  EXPECT_TRUE(Contains(p.detail, "is not an image of the spectrum's length 4"));
}

TEST(FitsReader, HduOption) {
  const std::string file = spectrum_with_errors("ERR", {1, 1, 1, 1});
  FitsOptions options;
  options.hdu = "flux";
  EXPECT_EQ(read_fits(file, options).spectrum->y.size(), 4u);
  options.hdu = "1";
  EXPECT_EQ(read_fits(file, options).spectrum->y.size(), 4u);
  options.hdu = "7";
  Problem p = problem_of(file, options);
  EXPECT_EQ(p.parameter, "hdu");
  EXPECT_TRUE(Contains(p.detail, "HDU 7 does not exist (HDUs are counted from 0)"));
  options.hdu = "0";
  p = problem_of(file, options);
  EXPECT_EQ(p.parameter, "hdu");
  EXPECT_TRUE(Contains(p.detail, "HDU 0 (primary) has no data"));
}

// FITS 4.0 sec. 10 (tiled image compression): listed, but not expanded (cfitsio's decompressor
// crashed on damaged tiles in testing; fits_reader.h).
TEST(FitsReader, TileCompressedImageIsListedButNotExpanded) {
  FitsWriter w;
  w.empty_primary();
  w.compressed_image({100, 200, 300, 400, 500, 600}, 6);
  linear_wave_keys(w).text("BUNIT", "mJy");
  const Problem p = problem_of(w.bytes());
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "is a tile-compressed image (ZIMAGE = T, FITS 4.0 sec. 10), which planckton does not expand"));
}

// ---- binary and ASCII tables ---------------------------------------------------------------------

TEST(FitsReader, TableOnePointPerRow) {
  FitsWriter w;
  w.empty_primary().table({{"WAVELENGTH", "D", "nm"}, {"FLUX", "E", "W/m2/nm"}, {"FLUX_ERR", "E", "W/m2/nm"}}, 4, "SPECTRUM")
      .numbers(1, {400, 500, 600, 700}).numbers(2, {1.0, 2.0, kNaN, 4.0}).numbers(3, {0.1, 0.2, 0.3, 0.4});
  const FitsContent content = read_fits(w.bytes(), {});
  const auto& s = *content.spectrum;
  EXPECT_EQ(s.x, (std::vector<double>{400, 500, 700}));
  EXPECT_EQ(s.x_unit, "nm");
  EXPECT_EQ(s.y_unit, "W/m2/nm");
  EXPECT_TRUE(RelativelyNear(s.y_error[2], 0.4, 1e-7));
  EXPECT_TRUE(NotesContain(content, "HDU 1 'SPECTRUM': one point per row, 4 points; spectral axis column 1 'WAVELENGTH'"));
  EXPECT_TRUE(NotesContain(content, "1 point with a blank"));
}

// FITS 4.0 sec. 7.3.1 (TFORMn repeat counts): one row whose columns are arrays.
TEST(FitsReader, TableWithArrayColumns) {
  FitsWriter w;
  w.empty_primary().table({{"wave", "5D", "Angstrom"}, {"flux", "5D", "erg/s/cm2/Angstrom"}, {"sigma", "5D", ""}}, 1)
      .numbers(1, ramp(5, 5000.0, 10.0)).numbers(2, ramp(5, 1.0, 1.0)).numbers(3, ramp(5, 0.1, 0.0));
  const FitsContent content = read_fits(w.bytes(), {});
  EXPECT_EQ(content.spectrum->x, ramp(5, 5000.0, 10.0));
  EXPECT_EQ(content.spectrum->y_error.size(), 5u);
  EXPECT_TRUE(NotesContain(content, "one row of arrays, 5 points"));
}

// The SDSS convention (from memory of the SDSS spec-lite data model): loglam = log10(lambda /
// Angstrom) in vacuum, flux in 1e-17 erg/s/cm2/Angstrom, ivar its inverse variance.
TEST(FitsReader, SdssStyleLoglamTable) {
  FitsWriter w;
  w.empty_primary().table({{"flux", "E", "1E-17 erg/cm^2/s/Ang"}, {"loglam", "E", ""}, {"ivar", "E", ""}}, 3, "COADD")
      .numbers(1, {5.0, 6.0, 7.0}).numbers(2, {3.6, 3.6001, 3.6002}).numbers(3, {4.0, 1.0, 0.0});
  const FitsContent content = read_fits(w.bytes(), {});
  const auto& s = *content.spectrum;
  ASSERT_EQ(s.x.size(), 2u);  // ivar 0: masked
  EXPECT_EQ(s.x_unit, "Angstrom");
  EXPECT_TRUE(RelativelyNear(s.x[1], std::pow(10.0, static_cast<double>(3.6001f)), 1e-12));
  EXPECT_EQ(s.y_unit, "erg/cm^2/s/Angstrom");
  EXPECT_TRUE(RelativelyNear(s.y[0], 5e-17, 1e-7));
  EXPECT_TRUE(RelativelyNear(s.y_error[0], 0.5e-17, 1e-7));
  EXPECT_TRUE(NotesContain(content, "log10 of the wavelength in Angstrom (the SDSS convention)"));
}

TEST(FitsReader, LogUnitMakesAColumnLogarithmic) {
  FitsWriter w;
  w.empty_primary().table({{"LOGWAVE", "D", "log(nm)"}, {"FLUX", "D", "W/m2/nm"}}, 2).numbers(1, {2.7, 2.8}).numbers(2, {1, 2});
  FitsOptions options;
  options.x_column = "logwave";
  const auto s = *read_fits(w.bytes(), options).spectrum;
  EXPECT_EQ(s.x_unit, "nm");
  EXPECT_TRUE(RelativelyNear(s.x[0], std::pow(10.0, 2.7), 1e-14));
}

TEST(FitsReader, AirColumnsAreConvertedToVacuum) {
  {
    FitsWriter w;
    w.empty_primary().table({{"WAVE_AIR", "D", "Angstrom"}, {"FLUX", "D", "erg/s/cm2/Angstrom"}}, 1)
        .numbers(1, {5889.950}).numbers(2, {1.0});
    const FitsContent content = read_fits(w.bytes(), {});
    EXPECT_NEAR(content.spectrum->x[0], 5891.583, 0.005);  // Na I D2, NIST ASD (from memory)
    EXPECT_TRUE(NotesContain(content, "air wavelengths converted to vacuum"));
  }
  {
    // TCTYPn = 'AWAV' (the WCS keyword of a table column, Greisen & Calabretta 2002 Table 8, from memory).
    FitsWriter w;
    w.empty_primary().table({{"WAVE", "D", "Angstrom"}, {"FLUX", "D", "erg/s/cm2/Angstrom"}}, 1)
        .numbers(1, {6562.801}).numbers(2, {1.0}).text("TCTYP1", "AWAV");
    EXPECT_NEAR(read_fits(w.bytes(), {}).spectrum->x[0], 6564.614, 0.005);
  }
}

TEST(FitsReader, FrequencyTable) {
  FitsWriter w;
  w.empty_primary().table({{"FREQ", "D", "GHz"}, {"F_NU", "D", "mJy"}}, 2).numbers(1, {100, 200}).numbers(2, {3, 4});
  const auto s = *read_fits(w.bytes(), {}).spectrum;
  EXPECT_EQ(s.x_unit, "GHz");
  EXPECT_EQ(s.y_unit, "mJy");
  EXPECT_TRUE(s.y_error.empty());
}

TEST(FitsReader, ColumnOptions) {
  FitsWriter w;
  w.empty_primary().table({{"A", "D", "nm"}, {"B", "D", "W/m2/nm"}, {"C", "D", "W/m2/nm"}, {"ERR", "D", ""}}, 2)
      .numbers(1, {500, 600}).numbers(2, {1, 2}).numbers(3, {3, 4}).numbers(4, {0.5, 0.5});
  const std::string file = w.bytes();
  FitsOptions options;
  options.x_column = "a";
  options.y_column = "3";
  FitsContent content = read_fits(file, options);
  EXPECT_EQ(content.spectrum->y, (std::vector<double>{3, 4}));
  EXPECT_EQ(content.spectrum->y_error.size(), 2u);  // ERR by its name
  options.error_column = "none";
  EXPECT_TRUE(read_fits(file, options).spectrum->y_error.empty());
  options.error_column = "B";
  EXPECT_EQ(read_fits(file, options).spectrum->y_error, (std::vector<double>{1, 2}));
  options.error_column = "ZZ";
  Problem p = problem_of(file, options);
  EXPECT_EQ(p.parameter, "error_column");
  EXPECT_TRUE(Contains(p.detail, "no column is named 'ZZ'"));
  EXPECT_EQ(p.accepted, (std::vector<std::string>{"A", "B", "C", "ERR"}));
  options = {};
  options.x_column = "9";
  p = problem_of(file, options);
  EXPECT_EQ(p.parameter, "x_column");
  options = {};
  p = problem_of(file, options);  // no column named like a spectral axis
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "has no spectral column"));
  EXPECT_TRUE(Contains(p.detail, "give x_column"));
}

TEST(FitsReader, TableUnitsFromTheOptionsWhenTunitIsMissing) {
  FitsWriter w;
  w.empty_primary().table({{"WAVE", "D", ""}, {"FLUX", "D", ""}}, 2).numbers(1, {500, 600}).numbers(2, {1, 2});
  const std::string file = w.bytes();
  Problem p = problem_of(file);
  EXPECT_TRUE(Contains(p.detail, "no unit for its spectral axis (no TUNIT1); add TUNIT1 to the header or give x_unit"));
  FitsOptions options;
  options.x_unit = "nm";
  p = problem_of(file, options);
  EXPECT_TRUE(Contains(p.detail, "no unit for its values (no TUNIT2)"));
  options.y_unit = "Jy";
  EXPECT_EQ(read_fits(file, options).spectrum->y_unit, "Jy");
}

// FITS 4.0 sec. 7.2: ASCII tables, read through the same column interface.
TEST(FitsReader, AsciiTableSpectrum) {
  FitsWriter w;
  w.empty_primary().table({{"WAVE", "F10.3", "um"}, {"FLUX", "E15.7", "W/m2/um"}}, 3, "", ASCII_TBL)
      .numbers(1, {1.0, 1.5, 2.0}).numbers(2, {10, 20, 30});
  const auto s = *read_fits(w.bytes(), {}).spectrum;
  EXPECT_EQ(s.x, (std::vector<double>{1.0, 1.5, 2.0}));
  EXPECT_EQ(s.x_unit, "um");
}

TEST(FitsReader, ErrorColumnInItsOwnUnit) {
  FitsWriter w;
  w.empty_primary().table({{"WAVE", "D", "nm"}, {"FLUX", "D", "mJy"}, {"ERR", "D", "Jy"}}, 1)
      .numbers(1, {500}).numbers(2, {10}).numbers(3, {0.002});
  EXPECT_TRUE(RelativelyNear(read_fits(w.bytes(), {}).spectrum->y_error[0], 2.0, 1e-12));
}

// ---- photometry tables -------------------------------------------------------------------------

TEST(FitsReader, PhotometryTable) {
  FitsWriter w;
  w.empty_primary()
      .table({{"band", "12A", ""}, {"Value", "D", ""}, {"ERROR", "D", ""}, {"UNIT", "8A", ""}, {"UPPER_LIMIT", "L", ""},
              {"ZERO_POINT", "D", "Jy"}, {"RA", "D", "deg"}},
             3, "PHOTOMETRY")
      .strings(1, {"2mass-j", "wise-w1", "mips-70"}).numbers(2, {9.68, 8.1, 450.0}).numbers(3, {0.02, kNaN, 150.0})
      .strings(4, {"Vegamag", "Vegamag", "mJy"}).logicals(5, {false, false, true}).numbers(6, {1594.0, kNaN, kNaN})
      .numbers(7, {10.0, 10.0, 10.0});
  const FitsContent content = read_fits(w.bytes(), {});
  EXPECT_FALSE(content.spectrum);
  ASSERT_TRUE(content.photometry);
  const nlohmann::json expected = nlohmann::json::parse(R"([
    {"band": "2mass-j", "value": 9.68, "error": 0.02, "unit": "Vegamag", "zero_point": {"value": 1594.0, "unit": "Jy"}},
    {"band": "wise-w1", "value": 8.1, "unit": "Vegamag"},
    {"band": "mips-70", "value": 450.0, "error": 150.0, "unit": "mJy", "upper_limit": true}])");
  EXPECT_EQ(*content.photometry, expected);
  EXPECT_TRUE(NotesContain(content, "HDU 1 'PHOTOMETRY': 3 band measurements; columns not used: RA"));
}

// The CSV photometry sample tms-0203-catalogue-sed (sample-spectra, invented data) as a FITS table:
// the same measurements, so the same fit.
TEST(FitsReader, PhotometryTableFitsLikeItsCsv) {
  const std::string csv =
      "band,value,error,unit\n"
      "johnson-u,10.674,0.030,ABmag\njohnson-b,9.965,0.025,ABmag\njohnson-v,9.399,0.020,ABmag\n"
      "cousins-r,9.190,0.020,ABmag\ncousins-i,9.054,0.020,ABmag\n2mass-j,8.226,0.025,Vegamag\n"
      "2mass-h,8.083,0.025,Vegamag\n2mass-ks,7.979,0.025,Vegamag\nwise-w1,7.838,0.030,Vegamag\n"
      "wise-w2,7.731,0.030,Vegamag\n";
  const auto table = planckton::api::read_photometry_table(csv);
  std::vector<std::string> bands, units;
  std::vector<double> values, errors;
  for (const auto& m : table.measurements) {
    bands.push_back(m["band"]);
    units.push_back(m["unit"]);
    values.push_back(m["value"]);
    errors.push_back(m["error"]);
  }
  FitsWriter w;
  w.empty_primary().table({{"BAND", "10A", ""}, {"VALUE", "D", ""}, {"ERROR", "D", ""}, {"UNIT", "8A", ""}}, 10)
      .strings(1, bands).numbers(2, values).numbers(3, errors).strings(4, units);
  const FitsContent content = read_fits(w.bytes(), {});
  ASSERT_TRUE(content.photometry);
  EXPECT_EQ(*content.photometry, table.measurements);
  const auto from_fits = planckton::api::fit_document({{"photometry", *content.photometry}});
  const auto from_csv = planckton::api::fit_document({{"photometry", table.measurements}});
  EXPECT_EQ(from_fits.at("parameters").at("temperature"), from_csv.at("parameters").at("temperature"));
}

TEST(FitsReader, PhotometryUnitsFromTunitOrTheOption) {
  const auto file = [](const std::string& tunit) {
    FitsWriter w;
    w.empty_primary().table({{"BAND", "8A", ""}, {"VALUE", "D", tunit}, {"ERROR", "D", ""}}, 2)
        .strings(1, {"pacs-100", ""}).numbers(2, {120.0, 5.0}).numbers(3, {10.0, 1.0});
    return w.bytes();
  };
  const FitsContent content = read_fits(file("mJy"), {});
  ASSERT_EQ(content.photometry->size(), 1u);  // the row without a band is dropped
  EXPECT_EQ((*content.photometry)[0]["unit"], "mJy");
  EXPECT_TRUE(NotesContain(content, "1 row with a blank BAND or VALUE dropped"));
  const Problem p = problem_of(file(""));
  EXPECT_TRUE(Contains(p.detail, "has no unit: add a UNIT column or TUNIT2 for VALUE, or give y_unit"));
  FitsOptions options;
  options.y_unit = "Jy";
  EXPECT_EQ((*read_fits(file(""), options).photometry)[0]["unit"], "Jy");
}

TEST(FitsReader, PhotometryBandMustBeText) {
  FitsWriter w;
  w.empty_primary().table({{"BAND", "J", ""}, {"VALUE", "D", "ABmag"}}, 1).numbers(1, {3}).numbers(2, {12.0});
  const Problem p = problem_of(w.bytes());
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "must be text"));
}

// ---- a whole fit through the FITS reader ---------------------------------------------------------

// A 5800 K Planck curve (planck.h, CODATA 2018) on a WAVE-LOG axis with an IVAR HDU, in 1e-17
// erg/s/cm2/Angstrom: the fit finds the temperature back (noise-free data, 1 % errors).
TEST(FitsReader, FitOfAnImageSpectrum) {
  const double temperature = 5800.0, scale = 1e-19;
  const std::size_t n = 400;
  const double crval = 4000.0, cdelt = 2.0;
  const auto unit = planckton::parse_flux_density_unit("erg/s/cm2/Angstrom");
  std::vector<double> flux(n), ivar(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double lambda = crval * std::exp(cdelt * static_cast<double>(i) / crval);  // CRPIX1 = 1
    const double nu = planckton::constants::kSpeedOfLight / (lambda * 1e-10);
    const double f = scale * planckton::planck_radiance(unit.convention, nu, temperature) / unit.to_si / 1e-17;
    flux[i] = f;
    ivar[i] = 1.0 / (0.01 * f * 0.01 * f);
  }
  FitsWriter w;
  w.empty_primary();
  w.image(flux).text("EXTNAME", "FLUX").text("CTYPE1", "WAVE-LOG").text("CUNIT1", "Angstrom").real("CRVAL1", crval)
      .real("CDELT1", cdelt).real("CRPIX1", 1.0).text("BUNIT", "1e-17 erg/s/cm2/Angstrom");
  w.image(ivar).text("EXTNAME", "IVAR");
  const FitsContent content = read_fits(w.bytes(), {});
  const auto& s = *content.spectrum;
  const nlohmann::json request = {
      {"spectrum", {{"x", s.x}, {"x_unit", s.x_unit}, {"y", s.y}, {"y_unit", s.y_unit}, {"y_error", s.y_error}}}};
  const auto response = planckton::api::fit_document(request);
  EXPECT_TRUE(RelativelyNear(response.at("parameters").at("temperature").at("value").get<double>(), temperature, 1e-6));
}

// ---- bad files: each a problem, never a crash, nothing on stderr ----------------------------------

// A gzip member (RFC 1952) holding the bytes in deflate "stored" blocks (RFC 1951 sec. 3.2.4).
std::string gzip_stored(const std::string& data) {
  std::array<std::uint32_t, 256> table{};
  for (std::uint32_t i = 0; i < 256; ++i) {
    std::uint32_t c = i;
    for (int k = 0; k < 8; ++k) c = (c & 1) ? 0xEDB88320u ^ (c >> 1) : c >> 1;  // RFC 1952 sec. 8
    table[i] = c;
  }
  std::uint32_t crc = 0xFFFFFFFFu;
  for (unsigned char b : data) crc = table[(crc ^ b) & 0xFF] ^ (crc >> 8);
  crc ^= 0xFFFFFFFFu;
  std::string out("\x1f\x8b\x08\x00\x00\x00\x00\x00\x00\xff", 10);
  std::size_t pos = 0;
  do {
    const std::size_t len = std::min<std::size_t>(65535, data.size() - pos);
    const bool last = pos + len == data.size();
    out += static_cast<char>(last ? 1 : 0);
    out += static_cast<char>(len & 0xFF);
    out += static_cast<char>(len >> 8);
    out += static_cast<char>(~len & 0xFF);
    out += static_cast<char>((~len >> 8) & 0xFF);
    out += data.substr(pos, len);
    pos += len;
  } while (pos < data.size());
  for (int k = 0; k < 4; ++k) out += static_cast<char>((crc >> (8 * k)) & 0xFF);
  const auto size = static_cast<std::uint32_t>(data.size());
  for (int k = 0; k < 4; ++k) out += static_cast<char>((size >> (8 * k)) & 0xFF);
  return out;
}

// Overwrites the value of a header keyword in place (the 80-character record keeps its length).
std::string with_card(std::string file, const std::string& keyword, const std::string& value) {
  for (std::size_t card = 0; card + 80 <= file.size(); card += 80) {
    if (file.compare(card, 8, (keyword + "        ").substr(0, 8)) == 0) {
      std::string record = (keyword + "        ").substr(0, 8) + "= " + std::string(20 - std::min<std::size_t>(20, value.size()), ' ') + value;
      record.resize(80, ' ');
      file.replace(card, 80, record);
      return file;
    }
  }
  throw std::runtime_error("no keyword " + keyword);
}

struct BadFile {
  const char* name;
  std::function<std::string()> make;
  int status;
  const char* detail_has;
  const char* source;  // what says the file is bad
  FitsOptions options = {};
};

std::vector<BadFile> bad_files() {
  return {
      {"Empty", [] { return std::string(); }, 400, "the FITS body is empty", "FITS 4.0 sec. 3.1"},
      {"RandomBytes",
       [] {
         std::mt19937 rng(20240611);
         std::string bytes(5760, '\0');
         for (char& c : bytes) c = static_cast<char>(rng() & 0xFF);
         return bytes;
       },
       400, "a FITS file begins with the keyword \"SIMPLE  =\"", "FITS 4.0 sec. 4.4.1.1"},
      {"Csv", [] { return std::string("x,y\n500,1\n600,2\n"); }, 400, "it begins with 'x,y?500,1?600,2?'", "FITS 4.0 sec. 4.4.1.1"},
      {"Gzip", [] { return gzip_stored(linear_spectrum_file()); }, 400, "gzip-compressed", "RFC 1952 (magic 1f 8b)"},
      {"SimpleThenGarbage",
       [] {
         std::mt19937 rng(7);
         std::string bytes = "SIMPLE  =                    T";
         bytes.resize(2880, ' ');
         for (std::size_t i = 80; i < 2800; ++i) bytes[i] = static_cast<char>(rng() & 0xFF);
         bytes.replace(2800, 3, "END");
         return bytes;
       },
       400, "header records are printable ASCII, 0x20 to 0x7E", "FITS 4.0 sec. 4.1.1"},
      {"MissingBitpix",
       [] {
         std::string bytes = "SIMPLE  =                    T";
         bytes.resize(80, ' ');
         bytes += "NAXIS   =                    0";
         bytes.resize(160, ' ');
         bytes += "END";
         bytes.resize(2880, ' ');
         return bytes;
       },
       400, "the primary header lacks the mandatory keyword BITPIX", "FITS 4.0 sec. 4.4.1.1 (SIMPLE, BITPIX, NAXIS)"},
      {"KeywordsOutOfOrder",
       [] {
         std::string file = linear_spectrum_file();
         const std::string bitpix = file.substr(80, 80);  // records 2 and 3: BITPIX, NAXIS
         file.replace(80, 80, file.substr(160, 80));
         file.replace(160, 80, bitpix);
         return file;
       },
       400, "the primary header cannot be read (cfitsio: ", "FITS 4.0 sec. 4.4.1.1 (SIMPLE, BITPIX, NAXIS in this order)"},
      {"HeaderCutInTheMiddle", [] { return linear_spectrum_file().substr(0, 1000); }, 400,
       "no END record in the 1000 bytes given", "FITS 4.0 sec. 4.4.1 (END closes a header)"},
      {"DataShorterThanNaxisSays",
       [] {
         FitsWriter w;
         w.image(ramp(400, 1.0, 1.0));  // 3200 bytes of data
         linear_wave_keys(w).text("BUNIT", "W/m2/nm");
         return w.bytes().substr(0, 2880 + 1000);
       },
       400, "HDU 0 (primary) declares 3200 bytes of data (BITPIX = -64, NAXISn = 400", "FITS 4.0 sec. 4.4.1.1 eq. 1"},
      {"ExtensionHeaderCut",
       [] { return spectrum_with_errors("ERR", {1, 1, 1, 1}).substr(0, 2 * 2880 + 2880 + 400); }, 400,
       "the header of HDU 2 (from byte 8640) has no END record", "FITS 4.0 sec. 4.4.1"},
      {"ExtensionDataCut", [] { return spectrum_with_errors("ERR", {1, 1, 1, 1}).substr(0, 4 * 2880 + 10); }, 400,
       "HDU 2 'ERR' declares 32 bytes of data", "FITS 4.0 sec. 4.4.1.2 / 7.1 (eq. 2)"},
      {"HugeNaxis1", [] { return with_card(linear_spectrum_file(), "NAXIS1", "1000000000000"); }, 400,
       "declares 8000000000000 bytes of data", "FITS 4.0 sec. 4.4.1.1 eq. 1"},
      {"OverflowingNaxis", [] { return with_card(linear_spectrum_file(), "NAXIS1", "9223372036854775807"); }, 400,
       "declares more than 2^63 bytes of data", "FITS 4.0 sec. 4.4.1.1 eq. 1"},
      {"BadBitpix", [] { return with_card(linear_spectrum_file(), "BITPIX", "12"); }, 400,
       "BITPIX = 12 is not 8, 16, 32, 64, -32 or -64", "FITS 4.0 sec. 4.4.1.1 (Table 8)"},
      {"TooManyTableFields",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "D", "nm"}, {"FLUX", "D", "Jy"}}, 1);
         return with_card(w.bytes(), "TFIELDS", "100000000");
       },
       400, "TFIELDS = 100000000 is outside 0 to 999", "FITS 4.0 sec. 7.3.1"},
      {"TwoDimensionalImage",
       [] {
         FitsWriter w;
         w.image(ramp(200, 1.0, 1.0), {10, 20});
         linear_wave_keys(w).text("BUNIT", "W/m2/nm");
         return w.bytes();
       },
       422, "is a 2-D image (10 x 20); planckton reads 1-D spectra", "FITS 4.0 sec. 8 (NAXIS = 2 with NAXIS2 > 1)"},
      {"MissingBunit", [] { return linear_spectrum_file(10, ""); }, 422, "no BUNIT", "FITS 4.0 sec. 4.4.2 (BUNIT is optional)"},
      {"UnknownBunit", [] { return linear_spectrum_file(10, "counts"); }, 422,
       "BUNIT = 'counts' is not a flux density or intensity unit planckton reads", "science/units.h"},
      {"VelocityAxis",
       [] {
         FitsWriter w;
         w.image({1, 2, 3}).text("CTYPE1", "VRAD").text("CUNIT1", "m/s").real("CRVAL1", 0).real("CDELT1", 1000).text("BUNIT", "Jy");
         return w.bytes();
       },
       422, "CTYPE1 = 'VRAD' is a velocity or redshift axis", "Greisen et al. 2006 Table 1"},
      {"CelestialAxis",
       [] {
         FitsWriter w;
         w.image({1, 2, 3}).text("CTYPE1", "RA---TAN").real("CRVAL1", 10).real("CDELT1", 1).text("BUNIT", "Jy");
         return w.bytes();
       },
       422, "CTYPE1 = 'RA---TAN' is not a spectral axis planckton reads", "FITS 4.0 sec. 8.3"},
      {"TabulatedAxis",
       [] {
         FitsWriter w;
         w.image({1, 2, 3}).text("CTYPE1", "WAVE-TAB").real("CRVAL1", 10).real("CDELT1", 1).text("BUNIT", "Jy");
         return w.bytes();
       },
       422, "uses the algorithm 'TAB'", "Greisen et al. 2006 sec. 6"},
      {"NoCrval1",
       [] {
         FitsWriter w;
         w.image({1, 2, 3}).text("CTYPE1", "WAVE").text("BUNIT", "Jy");
         return w.bytes();
       },
       422, "CRVAL1 is missing", "FITS 4.0 sec. 8.2"},
      {"NoDataAnywhere",
       [] {
         FitsWriter w;
         w.empty_primary().text("OBJECT", "nothing");
         return w.bytes();
       },
       422, "no HDU holds data planckton can read", "FITS 4.0 sec. 4.4.1.1 (NAXIS = 0: no data)"},
      {"ErrorsOfAnotherLength", [] { return spectrum_with_errors("ERR", {1, 1, 1}); }, 422,
       "HDU 2 'ERR' holds errors (1-sigma errors) of another length (3)", "the reader's own rule: one error per pixel"},
      {"ArraysOfDifferentLengths",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "4D", "nm"}, {"FLUX", "3D", "Jy"}}, 1).numbers(1, {1, 2, 3, 4}).numbers(2, {1, 2, 3});
         return w.bytes();
       },
       422, "the arrays differ in length", "FITS 4.0 sec. 7.3.1 (TFORMn repeat counts)"},
      {"ArraysInManyRows",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "2D", "nm"}, {"FLUX", "2D", "Jy"}}, 2);
         return w.bytes();
       },
       422, "holds arrays in 2 rows", "the reader's documented layouts"},
      {"EmptyColumn",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "D", "nm"}, {"FLUX", "0D", "Jy"}}, 2).numbers(1, {500, 600});
         return w.bytes();
       },
       422, "holds no elements (a TFORMn repeat count of 0)", "FITS 4.0 sec. 7.3.1 (r = 0 is allowed)"},
      {"ColumnWidthsDoNotAddUp",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "D", "nm"}, {"FLUX", "D", "Jy"}}, 1).numbers(1, {500}).numbers(2, {1});
         return with_card(w.bytes(), "TFORM2", "'J'");
       },
       400, "the widths of its columns (TFORMn) add up to 12 bytes, but NAXIS1 = 16", "FITS 4.0 sec. 7.3.1 (Table 18)"},
      {"TextColumnAsValues",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "D", "nm"}, {"FLUX", "8A", ""}}, 1).numbers(1, {500}).strings(2, {"bright"});
         return w.bytes();
       },
       422, "is not a numeric column", "FITS 4.0 sec. 7.3.1 (TFORMn A: characters)"},
      {"VariableLengthArrays",
       [] {
         FitsWriter w;
         w.empty_primary().table({{"WAVE", "1PD(3)", "nm"}, {"FLUX", "1PD(3)", "Jy"}}, 1).numbers(1, {1, 2, 3}).numbers(2, {1, 2, 3});
         return w.bytes();
       },
       422, "variable-length array", "FITS 4.0 sec. 7.3.5"},
      {"TooManyPoints",
       [] {
         FitsWriter w;
         w.image({}, {10'000'001}, BYTE_IMG);  // 10 MB of zeros
         linear_wave_keys(w).text("BUNIT", "Jy");
         return w.bytes();
       },
       413, "planckton reads at most 10000000 (1e7)", "the reader's limit (fits_reader.h)"},
  };
}

// gtest prints a parameter by its name (not its bytes).
void PrintTo(const BadFile& bad, std::ostream* out) { *out << bad.name; }

class FitsBadFile : public ::testing::TestWithParam<BadFile> {};

TEST_P(FitsBadFile, IsAProblemDocument) {
  const BadFile& bad = GetParam();
  SCOPED_TRACE(std::string(bad.name) + " (" + bad.source + ")");
  const std::string bytes = bad.make();
  ::testing::internal::CaptureStderr();
  const Problem p = problem_of(bytes, bad.options);
  const std::string stderr_text = ::testing::internal::GetCapturedStderr();
  EXPECT_EQ(p.status, bad.status) << p.detail;
  EXPECT_EQ(p.type, bad.status == 400 ? "/problems/malformed-document"
                    : bad.status == 413 ? "/problems/payload-too-large" : "/problems/invalid-value");
  EXPECT_TRUE(Contains(p.detail, bad.detail_has));
  EXPECT_EQ(stderr_text, "");  // cfitsio's messages are never printed
}

INSTANTIATE_TEST_SUITE_P(FitsReader, FitsBadFile, ::testing::ValuesIn(bad_files()),
                         [](const ::testing::TestParamInfo<BadFile>& info) { return std::string(info.param.name); });

// The details list what the file holds, so that the caller can choose with hdu.
TEST(FitsReader, ProblemsListTheHdus) {
  FitsWriter w;
  w.empty_primary();
  w.image(ramp(20, 1.0, 1.0), {4, 5}).text("EXTNAME", "IMG");
  w.table({{"RA", "D", "deg"}}, 2, "CATALOGUE");
  const Problem p = problem_of(w.bytes());
  EXPECT_EQ(p.status, 422);
  EXPECT_TRUE(Contains(p.detail, "the file holds 3 HDUs: HDU 0 (primary): image, no data; HDU 1 'IMG': image 4 x 5; "
                                 "HDU 2 'CATALOGUE': binary table, 2 rows; columns RA"));
}

// FITS 4.0 sec. 3.1 requires whole 2880-byte blocks; a file whose last block lacks its padding still
// holds all its declared data, and is read (with a note).
TEST(FitsReader, MissingFinalPaddingIsTolerated) {
  const std::string file = linear_spectrum_file(10);  // 2880 header + 80 bytes of data
  const FitsContent content = read_fits(std::string_view(file).substr(0, 2880 + 80), {});
  EXPECT_EQ(content.spectrum->y.size(), 10u);
  EXPECT_TRUE(NotesContain(content, "not a multiple of 2880"));
}

// FITS 4.0 sec. 3.5: records after the last HDU that are not an extension are ignored.
TEST(FitsReader, BytesAfterTheLastHduAreIgnored) {
  const std::string file = linear_spectrum_file(10) + std::string(2880, 'z');
  const FitsContent content = read_fits(file, {});
  EXPECT_EQ(content.spectrum->y.size(), 10u);
  EXPECT_TRUE(NotesContain(content, "2880 bytes after the last HDU"));
}

// Every prefix of a valid file is refused cleanly (or read, if it is the whole file), and no prefix
// writes to stderr: truncation at any block or record boundary.
TEST(FitsReader, EveryPrefixIsAProblemOrTheFile) {
  const std::string file = spectrum_with_errors("IVAR", {1, 2, 3, 4});
  // A prefix is a whole file when it ends after HDU 1's data (2 x 2880 + 32 bytes) and before HDU 2
  // begins (3 x 2880), or after HDU 2's data (4 x 2880 + 32); every other prefix cuts an HDU.
  const auto whole = [](std::size_t cut) { return (cut >= 5792 && cut <= 8640) || cut >= 11552; };
  ::testing::internal::CaptureStderr();
  for (std::size_t cut = 0; cut < file.size(); cut += 80) {
    try {
      const FitsContent content = read_fits(std::string_view(file).substr(0, cut), {});
      EXPECT_TRUE(whole(cut)) << "a prefix of " << cut << " bytes was read";
      EXPECT_EQ(content.spectrum->y.size(), 4u);
    } catch (const ProblemError& e) {
      EXPECT_FALSE(whole(cut)) << cut << ": " << e.problem().detail;
      EXPECT_TRUE(e.problem().status == 400 || e.problem().status == 422) << cut << ": " << e.problem().detail;
    }
  }
  EXPECT_EQ(::testing::internal::GetCapturedStderr(), "");
  EXPECT_NO_THROW(read_fits(file, {}));
}

// ---- the shipped samples (sample-spectra/*.fits, made by make_samples.py with astropy.io.fits) ----

std::filesystem::path samples_dir() {
  return std::filesystem::path(__FILE__).parent_path().parent_path().parent_path() / "sample-spectra";
}

std::string file_text(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw std::runtime_error("cannot read " + path.string());
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

// A FITS sample and its CSV hold the same numbers (astropy wrote the CSV's values as doubles), so the
// spectrum read from FITS equals the one read from CSV with the units the sample README gives; the
// lamp's axis, written in air, comes back to the CSV's vacuum grid within 1e-3 nm (make_samples.py
// computes the largest deviation, 7e-4 nm, with its own Morton 2000 implementation).
TEST(FitsReader, SampleFilesHoldTheirCsvData) {
  const auto dir = samples_dir();
  if (!std::filesystem::exists(dir / "truth.json")) GTEST_SKIP() << "no sample-spectra beside the tests";
  struct Sample {
    const char* stem;
    const char* x_unit;
    const char* y_unit;
    double x_tolerance;
  };
  for (const Sample& sample : {Sample{"tms-0047-hot-star", "nm", "erg/s/cm2/Angstrom", 0.0},
                               Sample{"ql3-bench-lamp", "nm", "W/m2/sr/nm", 1e-3},
                               Sample{"tms-0112-cool-star", "nm", "W/m2/um", 0.0},
                               Sample{"tms-0203-sunlike-star", "THz", "mJy", 0.0}}) {
    SCOPED_TRACE(sample.stem);
    const FitsContent content = read_fits(file_text(dir / (std::string(sample.stem) + ".fits")), {});
    planckton::api::TableRequestOptions options;
    options.x_unit = sample.x_unit;
    options.y_unit = sample.y_unit;
    const planckton::SpectrumInput csv = planckton::api::table_to_spectrum(
        planckton::api::read_table(file_text(dir / (std::string(sample.stem) + ".csv"))), options);
    ASSERT_TRUE(content.spectrum);
    const auto& fits = *content.spectrum;
    EXPECT_EQ(fits.x_unit, csv.x_unit);
    EXPECT_EQ(fits.y_unit, csv.y_unit);
    ASSERT_EQ(fits.x.size(), csv.x.size());
    EXPECT_EQ(fits.y, csv.y);
    ASSERT_EQ(fits.y_error.size(), csv.y_error.size());
    for (std::size_t i = 0; i < csv.x.size(); ++i) {
      EXPECT_NEAR(fits.x[i], csv.x[i], sample.x_tolerance) << i;
      if (!csv.y_error.empty()) {
        EXPECT_TRUE(RelativelyNear(fits.y_error[i], csv.y_error[i], 1e-12)) << i;
      }
    }
  }
  const FitsContent sed = read_fits(file_text(dir / "tms-0203-catalogue-sed.fits"), {});
  ASSERT_TRUE(sed.photometry);
  EXPECT_EQ(*sed.photometry, planckton::api::read_photometry_table(file_text(dir / "tms-0203-catalogue-sed.csv")).measurements);
}

// Seeded random damage to valid files (a few bytes anywhere, headers included): each read ends in a
// content or a problem document, never another exception, a crash or a message on stderr. (Run under
// valgrind or a sanitizer for out-of-bounds reads; the number of rounds here is kept small.)
TEST(FitsReader, DamagedFilesNeverCrash) {
  std::vector<std::string> files = {spectrum_with_errors("IVAR", ramp(4, 1.0, 1.0))};
  {
    FitsWriter w;
    w.empty_primary().table({{"loglam", "E", ""}, {"flux", "E", "1e-17 erg/s/cm2/Angstrom"}, {"ivar", "E", ""}}, 3)
        .numbers(1, {3.6, 3.61, 3.62}).numbers(2, {1, 2, 3}).numbers(3, {1, 1, 1});
    files.push_back(w.bytes());
  }
  {
    FitsWriter w;
    w.empty_primary().compressed_image(ramp(64, 100.0, 3.0), 64);
    linear_wave_keys(w).text("BUNIT", "mJy");
    files.push_back(w.bytes());
  }
  std::mt19937 rng(1995);
  int read = 0, refused = 0;
  ::testing::internal::CaptureStderr();
  for (const std::string& file : files) {
    for (int round = 0; round < 300; ++round) {
      std::string damaged = file;
      const int hits = 1 + static_cast<int>(rng() % 8);
      for (int h = 0; h < hits; ++h) {
        // Half of the hits in the headers' first records, where the mandatory keywords are.
        const std::size_t block = (rng() % (damaged.size() / 2880)) * 2880;
        const std::size_t at = rng() % 2 ? block + rng() % 800 : rng() % damaged.size();
        damaged[at] = static_cast<char>(rng() % 2 ? rng() & 0xFF : "0123456789-+ ."[rng() % 14]);
      }
      try {
        read_fits(damaged, {});
        ++read;
      } catch (const ProblemError& e) {
        EXPECT_TRUE(e.problem().status == 400 || e.problem().status == 413 || e.problem().status == 422);
        ++refused;
      }
    }
  }
  EXPECT_EQ(::testing::internal::GetCapturedStderr(), "");
  EXPECT_GT(read, 0);
  EXPECT_GT(refused, 0);
}

}  // namespace
