// The physical constants of science/constants.h against the tabulated CODATA 2018 values.
//
// The defining constants (h, c, k, e) are exact since the 2019 redefinition of the SI and must be
// equal to the last bit; the derived constants are computed in the library from the defining ones
// and compared with the rounded values CODATA 2018 tabulates (ten significant digits, so a relative
// tolerance of 1e-9 allows for that rounding and nothing more).
#include <gtest/gtest.h>

#include <cmath>
#include <string_view>

#include "science/constants.h"
#include "science/peaks.h"
#include "test_support.h"

namespace {

namespace c = planckton::constants;

using planckton::testing::RelativelyNear;

TEST(Constants, DefiningConstantsAreTheExactSiValues) {
  EXPECT_EQ(c::kPlanck, 6.62607015e-34);            // CODATA 2018 (exact, SI 2019)
  EXPECT_EQ(c::kSpeedOfLight, 299792458.0);         // CODATA 2018 (exact, SI 2019)
  EXPECT_EQ(c::kBoltzmann, 1.380649e-23);           // CODATA 2018 (exact, SI 2019)
  EXPECT_EQ(c::kElementaryCharge, 1.602176634e-19); // CODATA 2018 (exact, SI 2019)
}

TEST(Constants, SourceIsNamed) {
  EXPECT_EQ(std::string_view(c::kSource), "CODATA 2018");  // common practice: cite the constants' edition
}

TEST(Constants, StefanBoltzmannMatchesCodata2018) {
  EXPECT_TRUE(RelativelyNear(c::kStefanBoltzmann, 5.670374419e-8, 1e-9));  // CODATA 2018
}

TEST(Constants, SecondRadiationConstantMatchesCodata2018) {
  EXPECT_TRUE(RelativelyNear(c::kSecondRadiation, 1.438776877e-2, 1e-9));  // CODATA 2018
}

TEST(Constants, PlanckOverBoltzmannIsTheRatio) {
  // k / h = 2.083661912e10 Hz/K (CODATA 2018, "Boltzmann constant in Hz/K")
  EXPECT_TRUE(RelativelyNear(1.0 / c::kPlanckOverBoltzmann, 2.083661912e10, 1e-9));
}

TEST(Constants, WienWavelengthConstantMatchesCodata2018) {
  EXPECT_TRUE(RelativelyNear(planckton::wien_wavelength_constant(), 2.897771955e-3, 1e-9));  // CODATA 2018
}

TEST(Constants, WienFrequencyConstantMatchesCodata2018) {
  EXPECT_TRUE(RelativelyNear(planckton::wien_frequency_constant(), 5.878925757e10, 1e-9));  // CODATA 2018
}

TEST(Constants, LengthUnitsFollowTheirDefinitions) {
  EXPECT_EQ(c::kAstronomicalUnit, 149597870700.0);  // IAU 2012 Resolution B2 (exact)
  EXPECT_TRUE(RelativelyNear(c::kParsec, 3.0856775814913673e16, 1e-15));  // IAU 2015 Resolution B2
  EXPECT_EQ(c::kLightYear, 9460730472580800.0);  // Julian light year, c * 365.25 d (IAU), exact in double
}

}  // namespace
