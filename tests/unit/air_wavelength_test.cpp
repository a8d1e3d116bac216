// Air and vacuum wavelengths (core/science/air_wavelength.h): Morton 2000 (ApJS 130, 403) eq. 8 and
// N. Piskunov's inverse of it given by VALD.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "science/air_wavelength.h"
#include "science/input_error.h"

namespace {

using planckton::air_to_vacuum_wavelength;
using planckton::vacuum_to_air_wavelength;

constexpr double kAngstrom = 1e-10;

// Lines whose air and vacuum wavelengths are both tabulated, in Angstrom. The values are from memory
// of the NIST Atomic Spectra Database (H I Balmer alpha, Na I D1 and D2) and of the SDSS line list
// ([O III] 5007, air 5006.843, vacuum 5008.240), quoted to 0.001 Angstrom; the check allows 0.005
// Angstrom for the rounding of the tables and the small differences between dispersion formulae.
struct TabulatedLine {
  const char* name;
  double air_angstrom;
  double vacuum_angstrom;
};
constexpr TabulatedLine kLines[] = {
    {"H-alpha", 6562.801, 6564.614},
    {"Na I D2", 5889.950, 5891.583},
    {"Na I D1", 5895.924, 5897.558},
    {"[O III] 5007", 5006.843, 5008.240},
};

TEST(AirWavelength, TabulatedLinesAirToVacuum) {
  for (const TabulatedLine& line : kLines) {
    SCOPED_TRACE(line.name);
    EXPECT_NEAR(air_to_vacuum_wavelength(line.air_angstrom * kAngstrom) / kAngstrom, line.vacuum_angstrom, 0.005);
  }
}

TEST(AirWavelength, TabulatedLinesVacuumToAirWithMortonEquation8) {
  for (const TabulatedLine& line : kLines) {
    SCOPED_TRACE(line.name);
    EXPECT_NEAR(vacuum_to_air_wavelength(line.vacuum_angstrom * kAngstrom) / kAngstrom, line.air_angstrom, 0.005);
  }
}

// Piskunov's formula is a fit to the inverse of Morton's eq. 8; VALD's documentation says the two
// agree far below any measurement's precision (from memory). Checked here to 1e-10 relative.
TEST(AirWavelength, PiskunovInverseUndoesMortonEquation8) {
  for (double lg = std::log10(200e-9); lg <= std::log10(20e-6); lg += 0.01) {
    const double air = std::pow(10.0, lg);
    const double vacuum = air_to_vacuum_wavelength(air);
    EXPECT_GT(vacuum, air);  // the refractive index of air exceeds 1
    EXPECT_NEAR(vacuum_to_air_wavelength(vacuum) / air, 1.0, 1e-10) << "air " << air;
  }
}

// The refractive index of dry air at 15 C and 101325 Pa near the sodium D lines is 1.000277 (from
// memory of handbook tables of the Edlen formula), falling slowly towards the infrared.
TEST(AirWavelength, RefractivityOfStandardAir) {
  const double at_589 = air_to_vacuum_wavelength(589.3e-9) / 589.3e-9 - 1.0;
  EXPECT_NEAR(at_589, 2.77e-4, 0.01e-4);
  const double at_2000 = air_to_vacuum_wavelength(2e-6) / 2e-6 - 1.0;
  EXPECT_LT(at_2000, at_589);
  EXPECT_GT(at_2000, 2.6e-4);
}

TEST(AirWavelength, RefusesWavelengthsOutsideTheRange) {
  for (double bad : {150e-9, 199e-9, 25e-6, 0.0, -500e-9, std::numeric_limits<double>::quiet_NaN(),
                     std::numeric_limits<double>::infinity()}) {
    SCOPED_TRACE(bad);
    try {
      air_to_vacuum_wavelength(bad);
      ADD_FAILURE() << "no InputError";
    } catch (const planckton::InputError& e) {
      EXPECT_EQ(e.field(), "x");
      EXPECT_NE(std::string(e.what()).find("200 nm to 20 um"), std::string::npos) << e.what();
    }
    EXPECT_THROW(vacuum_to_air_wavelength(bad), planckton::InputError);
  }
  // The range's ends are inside it.
  EXPECT_NO_THROW(air_to_vacuum_wavelength(planckton::kAirWavelengthMinM));
  EXPECT_NO_THROW(air_to_vacuum_wavelength(planckton::kAirWavelengthMaxM));
  EXPECT_NO_THROW(vacuum_to_air_wavelength(air_to_vacuum_wavelength(planckton::kAirWavelengthMaxM)));
}

}  // namespace
