// Extinction laws (core/science/extinction.h): values worked out by hand from the papers' formulae,
// properties of the curves, and the refusals. The comparison with python3-extinction on dense grids is
// tests/reference/test_extinction_laws.py.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "science/extinction.h"
#include "science/input_error.h"

namespace {

using planckton::extinction_law_info;
using planckton::extinction_laws;
using planckton::extinction_ratio;
using planckton::ExtinctionLaw;
using planckton::ExtinctionLawInfo;
using planckton::find_extinction_law;

constexpr ExtinctionLaw kAllLaws[] = {ExtinctionLaw::kCardelli1989, ExtinctionLaw::kODonnell1994,
                                      ExtinctionLaw::kFitzpatrick1999, ExtinctionLaw::kCalzetti2000};
constexpr ExtinctionLaw kMilkyWayLaws[] = {ExtinctionLaw::kCardelli1989, ExtinctionLaw::kODonnell1994,
                                           ExtinctionLaw::kFitzpatrick1999};
constexpr double kRvs[] = {2.5, 3.1, 4.0, 5.5};

// x = 1 / lambda in um^-1 -> lambda in m.
double at_x(double x_per_um) { return 1e-6 / x_per_um; }
double um(double lambda_um) { return lambda_um * 1e-6; }

// CCM89 eq. 1: A/A_V = a + b / R_V. Two R_V values give a and b back.
struct AB {
  double a;
  double b;
};
AB ccm_coefficients(ExtinctionLaw law, double wavelength_m) {
  const double r1 = extinction_ratio(law, wavelength_m, 2.5);
  const double r2 = extinction_ratio(law, wavelength_m, 5.0);
  const double b = (r1 - r2) / (1.0 / 2.5 - 1.0 / 5.0);
  return {r1 - b / 2.5, b};
}

// ---- the table -------------------------------------------------------------------------------

TEST(ExtinctionLaws, TableListsTheFourLawsInEnumOrder) {
  const std::vector<ExtinctionLawInfo>& laws = extinction_laws();
  ASSERT_EQ(laws.size(), 4u);
  const char* ids[] = {"cardelli1989", "odonnell1994", "fitzpatrick1999", "calzetti2000"};
  for (std::size_t i = 0; i < 4; ++i) {
    SCOPED_TRACE(ids[i]);
    EXPECT_EQ(laws[i].law, kAllLaws[i]);
    EXPECT_STREQ(laws[i].id, ids[i]);
    EXPECT_EQ(&extinction_law_info(kAllLaws[i]), &laws[i]);
    EXPECT_EQ(find_extinction_law(ids[i]), &laws[i]);
    EXPECT_GT(std::string(laws[i].citation).size(), 10u);
    EXPECT_GT(std::string(laws[i].description).size(), 10u);
    EXPECT_LT(laws[i].min_wavelength_m, laws[i].max_wavelength_m);
  }
  EXPECT_EQ(find_extinction_law("ccm89"), nullptr);
  EXPECT_EQ(find_extinction_law("Cardelli1989"), nullptr);
  EXPECT_EQ(find_extinction_law(""), nullptr);
}

TEST(ExtinctionLaws, PublishedRangesAndDefaultRv) {
  // CCM89 eqs. 2-5: 0.3 <= x <= 10 um^-1; O'Donnell 1994 the same.
  for (ExtinctionLaw law : {ExtinctionLaw::kCardelli1989, ExtinctionLaw::kODonnell1994}) {
    const ExtinctionLawInfo& info = extinction_law_info(law);
    EXPECT_DOUBLE_EQ(info.min_wavelength_m, 0.1e-6);
    EXPECT_DOUBLE_EQ(info.max_wavelength_m, 1e-6 / 0.3);
    EXPECT_EQ(info.default_r_v, 3.1);
  }
  // F99 as in FM_UNRED / python3-extinction: 910 A to 6 um.
  EXPECT_DOUBLE_EQ(extinction_law_info(ExtinctionLaw::kFitzpatrick1999).min_wavelength_m, 910e-10);
  EXPECT_DOUBLE_EQ(extinction_law_info(ExtinctionLaw::kFitzpatrick1999).max_wavelength_m, 6e-6);
  EXPECT_EQ(extinction_law_info(ExtinctionLaw::kFitzpatrick1999).default_r_v, 3.1);
  // Calzetti et al. 2000 eq. 4: 0.12 to 2.2 um; R_V = 4.05 (their eq. 5).
  EXPECT_DOUBLE_EQ(extinction_law_info(ExtinctionLaw::kCalzetti2000).min_wavelength_m, 0.12e-6);
  EXPECT_DOUBLE_EQ(extinction_law_info(ExtinctionLaw::kCalzetti2000).max_wavelength_m, 2.2e-6);
  EXPECT_EQ(extinction_law_info(ExtinctionLaw::kCalzetti2000).default_r_v, 4.05);
}

// ---- CCM89 and O'Donnell 1994 ---------------------------------------------------------------

// CCM89 eq. 3: y = x - 1.82, a = 1 + 0.17699 y + ..., b = 0 + 1.41338 y + ...; at x = 1.82 um^-1
// (0.5495 um) y = 0, so a = 1 and b = 0 and A_lambda = A_V for every R_V. O'Donnell's polynomials
// also start 1 + ... and 0 + ....
TEST(ExtinctionCcm89, UnityAtXEquals1p82ForEveryRv) {
  for (ExtinctionLaw law : {ExtinctionLaw::kCardelli1989, ExtinctionLaw::kODonnell1994}) {
    const AB ab = ccm_coefficients(law, at_x(1.82));
    EXPECT_NEAR(ab.a, 1.0, 1e-3);
    EXPECT_NEAR(ab.b, 0.0, 1e-3);
    for (double r_v : kRvs) EXPECT_NEAR(extinction_ratio(law, at_x(1.82), r_v), 1.0, 1e-12) << r_v;
  }
}

// Coefficients a(x), b(x) worked out by hand from the equations (numbers rounded to 6 digits):
TEST(ExtinctionCcm89, CoefficientsFromTheEquations) {
  const ExtinctionLaw ccm = ExtinctionLaw::kCardelli1989;
  // Eq. 2 (IR), x = 0.5 (2 um): 0.5^1.61 = 0.327598; a = 0.574 * that = 0.188041,
  // b = -0.527 * that = -0.172644.
  AB ab = ccm_coefficients(ccm, at_x(0.5));
  EXPECT_NEAR(ab.a, 0.188041, 2e-6);
  EXPECT_NEAR(ab.b, -0.172644, 2e-6);
  // Eq. 4 (UV), x = 5 (0.2 um), below 5.9 so no F_a, F_b:
  //   a = 1.752 - 0.316 * 5 - 0.104 / (0.33^2 + 0.341) = 0.172 - 0.231162 = -0.059162
  //   b = -3.090 + 1.825 * 5 + 1.206 / (0.38^2 + 0.263) = 6.035 + 2.960236 = 8.995236
  ab = ccm_coefficients(ccm, at_x(5.0));
  EXPECT_NEAR(ab.a, -0.059162, 2e-6);
  EXPECT_NEAR(ab.b, 8.995236, 2e-6);
  // Eq. 5 (far UV), x = 10, y = 2: a = -1.073 - 1.256 + 0.548 - 0.560 = -2.341,
  // b = 13.670 + 8.514 - 1.680 + 2.992 = 23.496.
  ab = ccm_coefficients(ccm, at_x(10.0));
  EXPECT_NEAR(ab.a, -2.341, 1e-9);
  EXPECT_NEAR(ab.b, 23.496, 1e-9);
}

// O'Donnell 1994 changes only the optical polynomials (1.1 <= x < 3.3): elsewhere it is CCM89.
TEST(ExtinctionCcm89, ODonnellDiffersFromCcm89OnlyInTheOptical) {
  for (double x : {0.3, 0.5, 1.0, 3.31, 4.6, 6.5, 8.0, 9.5, 10.0}) {
    EXPECT_EQ(extinction_ratio(ExtinctionLaw::kCardelli1989, at_x(x), 3.1),
              extinction_ratio(ExtinctionLaw::kODonnell1994, at_x(x), 3.1))
        << x;
  }
  // y = 0.68 (x = 2.5, 0.4 um), from the two sets of coefficients: CCM89 a = 0.981993, b = 1.495944;
  // O'Donnell a = 1.008733, b = 1.294079 (evaluated by hand from the polynomials).
  AB ccm = ccm_coefficients(ExtinctionLaw::kCardelli1989, at_x(2.5));
  AB od = ccm_coefficients(ExtinctionLaw::kODonnell1994, at_x(2.5));
  EXPECT_NEAR(ccm.a, 0.981993, 2e-6);
  EXPECT_NEAR(ccm.b, 1.495944, 2e-6);
  EXPECT_NEAR(od.a, 1.008733, 2e-6);
  EXPECT_NEAR(od.b, 1.294079, 2e-6);
}

// CCM89 Table 3 (from memory), A_lambda / A_V for R_V = 3.1 at the effective wavelengths of R (0.70),
// I (0.90), J (1.25) and K (2.2 um): 0.751, 0.479, 0.282, 0.114. Checked to 0.005.
TEST(ExtinctionCcm89, BroadBandValuesForRv3p1FromMemory) {
  const ExtinctionLaw ccm = ExtinctionLaw::kCardelli1989;
  EXPECT_NEAR(extinction_ratio(ccm, um(0.70), 3.1), 0.751, 0.005);
  EXPECT_NEAR(extinction_ratio(ccm, um(0.90), 3.1), 0.479, 0.005);
  EXPECT_NEAR(extinction_ratio(ccm, um(1.25), 3.1), 0.282, 0.005);
  EXPECT_NEAR(extinction_ratio(ccm, um(2.2), 3.1), 0.114, 0.005);
}

// The pieces of CCM89 do not join exactly (measured): steps below 1e-3 in A/A_V at x = 1.1, 3.3 and 8;
// O'Donnell's optical polynomial meets CCM89's UV formula at x = 3.3 with a step of about 0.01.
TEST(ExtinctionCcm89, StepsWhereThePiecesJoin) {
  auto step = [](ExtinctionLaw law, double x) {
    return extinction_ratio(law, at_x(x * (1.0 + 1e-12)), 3.1) - extinction_ratio(law, at_x(x * (1.0 - 1e-12)), 3.1);
  };
  for (double x : {1.1, 3.3, 8.0}) EXPECT_LT(std::abs(step(ExtinctionLaw::kCardelli1989, x)), 1e-3) << x;
  const double od = step(ExtinctionLaw::kODonnell1994, 3.3);
  EXPECT_GT(od, 0.005);
  EXPECT_LT(od, 0.015);
}

// ---- Fitzpatrick 1999 -----------------------------------------------------------------------

// The spline passes through its anchors. IR anchors (A/E(B-V) = 0.26469 R_V / 3.1 at 2.65 um and
// 0.82925 R_V / 3.1 at 1.22 um) give A/A_V independent of R_V.
TEST(ExtinctionFitzpatrick99, InfraredAnchors) {
  for (double r_v : kRvs) {
    EXPECT_NEAR(extinction_ratio(ExtinctionLaw::kFitzpatrick1999, 26500e-10, r_v), 0.26469 / 3.1, 1e-12) << r_v;
    EXPECT_NEAR(extinction_ratio(ExtinctionLaw::kFitzpatrick1999, 12200e-10, r_v), 0.82925 / 3.1, 1e-12) << r_v;
  }
}

// Optical anchor at 5470 A, R_V = 3.1 (FM_UNRED's polynomial): (-0.051354 + 1.00216 * 3.1 -
// 7.35778e-5 * 3.1^2) / 3.1 = (-0.051354 + 3.106696 - 0.000707) / 3.1 = 0.985366. So F99's A/A_V at
// 0.55 um is about 0.98, not 1: its V is the Johnson V band, not a monochromatic point (measured 0.979).
TEST(ExtinctionFitzpatrick99, OpticalAnchorAndVBand) {
  EXPECT_NEAR(extinction_ratio(ExtinctionLaw::kFitzpatrick1999, 5470e-10, 3.1), 0.985366, 2e-6);
  const double v = extinction_ratio(ExtinctionLaw::kFitzpatrick1999, um(0.55), 3.1);
  EXPECT_GT(v, 0.97);
  EXPECT_LT(v, 0.99);
}

// FM90 with F99's coefficients at 0.2175 um, R_V = 3.1, by hand: x = 4.597701, c2 = -0.824 + 4.717 / 3.1
// = 0.697613, c1 = 2.030 - 3.007 c2 = -0.067722; D = x^2 / ((x^2 - 4.596^2)^2 + x^2 0.99^2) =
// 21.138856 / (0.015640^2 + 20.718193) = 1.020293; k = c1 + c2 x + 3.23 D = 6.435237;
// A/A_V = (k + R_V) / R_V = 3.075883.
TEST(ExtinctionFitzpatrick99, UltravioletFormulaAtTheBump) {
  EXPECT_NEAR(extinction_ratio(ExtinctionLaw::kFitzpatrick1999, um(0.2175), 3.1), 3.075883, 5e-6);
}

// The spline is tied to the UV formula by the anchors at 2700 and 2600 A: no step at 2700 A.
TEST(ExtinctionFitzpatrick99, ContinuousWhereSplineMeetsUltraviolet) {
  for (double r_v : kRvs) {
    const double below = extinction_ratio(ExtinctionLaw::kFitzpatrick1999, 2700e-10 * (1.0 - 1e-12), r_v);
    const double above = extinction_ratio(ExtinctionLaw::kFitzpatrick1999, 2700e-10 * (1.0 + 1e-12), r_v);
    EXPECT_NEAR(below, above, 1e-9) << r_v;
  }
}

// ---- Calzetti et al. 2000 -------------------------------------------------------------------

// Eq. 4 by hand (R_V = 4.05):
//   0.55 um, x = 1.818182: 1.509 x = 2.743636, 0.198 x^2 = 0.654545, 0.011 x^3 = 0.066116;
//     k = 2.659 (-2.156 + 2.743636 - 0.654545 + 0.066116) + 4.05 = 2.659 * (-0.000793) + 4.05 = 4.047890,
//     A/A_V = k / 4.05 = 0.999479 (eq. 4 is built so that k(V) ~ R_V).
//   0.12 um, x = 8.333333: 12.575 - 13.75 + 6.365741 - 2.156 = 3.034741; k = 8.069376 + 4.05 = 12.119376,
//     A/A_V = 2.992438.
//   2.2 um, x = 0.454545: k = 2.659 (-1.857 + 0.472727) + 4.05 = -3.680781 + 4.05 = 0.369219,
//     A/A_V = 0.091165.
TEST(ExtinctionCalzetti2000, ValuesFromEquation4) {
  const ExtinctionLaw c = ExtinctionLaw::kCalzetti2000;
  EXPECT_NEAR(extinction_ratio(c, um(0.55), 4.05), 0.999479, 2e-6);
  EXPECT_NEAR(extinction_ratio(c, um(0.12), 4.05), 2.992438, 2e-6);
  EXPECT_NEAR(extinction_ratio(c, um(2.2), 4.05), 0.091165, 2e-6);
}

// The two halves of eq. 4 do not meet at 0.63 um: k = 3.476623 (blue) and 3.501697 (red), so A/A_V
// steps up by 0.025074 / 4.05 = 0.006191 going redwards.
TEST(ExtinctionCalzetti2000, StepAt0p63Micrometres) {
  const double blue = extinction_ratio(ExtinctionLaw::kCalzetti2000, um(0.63) * (1.0 - 1e-12), 4.05);
  const double red = extinction_ratio(ExtinctionLaw::kCalzetti2000, um(0.63) * (1.0 + 1e-12), 4.05);
  EXPECT_NEAR(red - blue, 0.006191, 2e-6);
}

// With R_V = 3.1 the red half goes negative inside the published range: k(2.2 um) = -3.680781 + 3.1 =
// -0.580781, A/A_V = -0.187349. The formula as published; nothing clamps it.
TEST(ExtinctionCalzetti2000, NegativeAtTheRedEndForSmallRv) {
  EXPECT_NEAR(extinction_ratio(ExtinctionLaw::kCalzetti2000, um(2.2), 3.1), -0.187349, 2e-6);
}

// ---- properties of all the curves -----------------------------------------------------------

// Extinction rises towards the blue through the optical (0.35 to 0.9 um) for R_V from 2.5 to 5.5
// (Calzetti: on each half of eq. 4). Below 0.35 um it need not: see the next test.
TEST(ExtinctionLaws, RiseMonotonicallyThroughTheOptical) {
  for (ExtinctionLaw law : kAllLaws) {
    for (double r_v : kRvs) {
      SCOPED_TRACE(std::string(extinction_law_info(law).id) + " R_V=" + std::to_string(r_v));
      double previous = -std::numeric_limits<double>::infinity();
      for (double lambda_um = 0.9; lambda_um >= 0.35; lambda_um -= 0.001) {
        if (law == ExtinctionLaw::kCalzetti2000 && std::abs(lambda_um - 0.63) < 0.001) {
          previous = -std::numeric_limits<double>::infinity();  // the step at 0.63 um (above)
          continue;
        }
        const double r = extinction_ratio(law, um(lambda_um), r_v);
        EXPECT_GT(r, previous) << lambda_um;
        previous = r;
      }
    }
  }
}

// Measured, a property of CCM89's eq. 3 polynomial at large R_V: for R_V = 5.5 the curve has a shallow
// dip, A/A_V falling from 1.30514 at 0.3414 um to 1.30103 at 0.3142 um before the UV rise.
TEST(ExtinctionCcm89, ShallowDipNear0p33MicrometresForLargeRv) {
  const double at_3414 = extinction_ratio(ExtinctionLaw::kCardelli1989, um(0.3414), 5.5);
  const double at_3142 = extinction_ratio(ExtinctionLaw::kCardelli1989, um(0.3142), 5.5);
  EXPECT_NEAR(at_3414, 1.30514, 1e-5);
  EXPECT_NEAR(at_3142, 1.30103, 1e-5);
  EXPECT_GT(at_3414, at_3142);
}

// The 2175 A bump (measured): for the Milky Way laws A/A_V at 0.2175 um exceeds that at 0.25 um and at
// 0.19 um, for every R_V here (the curves peak at x = 4.60-4.65 um^-1 and dip near x = 5.6-6.6 before
// the far-UV rise). Calzetti's starburst curve has no bump: it rises steadily into the UV.
TEST(ExtinctionLaws, MilkyWayLawsShowThe2175AngstromBump) {
  for (ExtinctionLaw law : kMilkyWayLaws) {
    for (double r_v : kRvs) {
      SCOPED_TRACE(std::string(extinction_law_info(law).id) + " R_V=" + std::to_string(r_v));
      const double bump = extinction_ratio(law, um(0.2175), r_v);
      EXPECT_GT(bump, extinction_ratio(law, um(0.25), r_v));
      EXPECT_GT(bump, extinction_ratio(law, um(0.19), r_v));
    }
  }
  const ExtinctionLaw c = ExtinctionLaw::kCalzetti2000;
  EXPECT_GT(extinction_ratio(c, um(0.19), 4.05), extinction_ratio(c, um(0.2175), 4.05));
  EXPECT_GT(extinction_ratio(c, um(0.2175), 4.05), extinction_ratio(c, um(0.25), 4.05));
}

// ---- refusals -------------------------------------------------------------------------------

TEST(ExtinctionLaws, RangeEndsAreInside) {
  for (ExtinctionLaw law : kAllLaws) {
    const ExtinctionLawInfo& info = extinction_law_info(law);
    EXPECT_NO_THROW(extinction_ratio(law, info.min_wavelength_m, info.default_r_v)) << info.id;
    EXPECT_NO_THROW(extinction_ratio(law, info.max_wavelength_m, info.default_r_v)) << info.id;
  }
}

TEST(ExtinctionLaws, RefusesWavelengthsOutsideTheRange) {
  const std::string ranges[] = {"0.1 um to 3.33333 um", "0.1 um to 3.33333 um", "0.091 um to 6 um",
                                "0.12 um to 2.2 um"};
  for (std::size_t i = 0; i < 4; ++i) {
    const ExtinctionLawInfo& info = extinction_law_info(kAllLaws[i]);
    for (double bad : {info.min_wavelength_m * (1.0 - 1e-6), info.max_wavelength_m * (1.0 + 1e-6), 1e-9, 1e-3, 0.0,
                       -0.5e-6, std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::infinity()}) {
      SCOPED_TRACE(std::string(info.id) + " at " + std::to_string(bad));
      try {
        extinction_ratio(info.law, bad, info.default_r_v);
        ADD_FAILURE() << "no InputError";
      } catch (const planckton::InputError& e) {
        const std::string message = e.what();
        EXPECT_EQ(e.field(), "model.extinction");
        EXPECT_FALSE(e.index().has_value());
        EXPECT_NE(message.find(ranges[i]), std::string::npos) << message;
        EXPECT_NE(message.find(info.id), std::string::npos) << message;
        EXPECT_NE(message.find(info.citation), std::string::npos) << message;
      }
    }
  }
  // The caller's field name is used.
  try {
    extinction_ratio(ExtinctionLaw::kCalzetti2000, 3e-6, 4.05, "options.extinction");
    ADD_FAILURE() << "no InputError";
  } catch (const planckton::InputError& e) {
    EXPECT_EQ(e.field(), "options.extinction");
    EXPECT_NE(std::string(e.what()).find("the wavelength 3 um"), std::string::npos) << e.what();
  }
}

TEST(ExtinctionLaws, RefusesRvThatIsNotFiniteAndPositive) {
  for (ExtinctionLaw law : kAllLaws) {
    for (double bad : {0.0, -3.1, std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::infinity(),
                       -std::numeric_limits<double>::infinity()}) {
      SCOPED_TRACE(std::string(extinction_law_info(law).id) + " R_V=" + std::to_string(bad));
      try {
        extinction_ratio(law, um(0.55), bad, "model.extinction.r_v");
        ADD_FAILURE() << "no InputError";
      } catch (const planckton::InputError& e) {
        EXPECT_EQ(e.field(), "model.extinction.r_v");
        EXPECT_NE(std::string(e.what()).find("R_V"), std::string::npos) << e.what();
      }
    }
  }
}

}  // namespace
