// Radiance and ratio temperatures, and grey-body fits (science/radiometry.h).
//
// Every spectrum is made here from planck.h's radiance (Planck's law, M. Planck, Ann. Phys. 4, 553
// (1901)) times an emissivity, with a seeded std::mt19937_64, so each run sees the same numbers;
// "within 3 sigma" therefore either always holds or never does.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/planck.h"
#include "science/planck_fit.h"
#include "science/radiometry.h"
#include "science/spectrum.h"
#include "test_support.h"

namespace {

using planckton::GreyBodyFitOptions;
using planckton::GreyBodyFitResult;
using planckton::InputError;
using planckton::SpectrumInput;
using planckton::testing::RelativelyNear;
namespace k = planckton::constants;

std::vector<double> linspace(double lo, double hi, int n) {
  std::vector<double> out(static_cast<std::size_t>(n));
  for (int i = 0; i < n; ++i) out[static_cast<std::size_t>(i)] = lo + (hi - lo) * i / (n - 1);
  return out;
}

// A body of emissivity epsilon(lambda) at temperature T, in W/m2/sr/nm over wavelengths in nm,
// with relative one-sigma errors rel_error; noise drawn when rng is set.
SpectrumInput grey_body(double lo_nm, double hi_nm, int n, double temperature,
                        const std::function<double(double)>& emissivity_of_m, double rel_error,
                        std::mt19937_64* rng, const std::string& y_unit = "W/m2/sr/nm") {
  SpectrumInput input;
  input.x = linspace(lo_nm, hi_nm, n);
  input.x_unit = "nm";
  input.y_unit = y_unit;
  std::normal_distribution<double> normal(0.0, 1.0);
  for (double nm : input.x) {
    const double lambda = nm * 1e-9;
    // W m^-2 sr^-1 m^-1 -> W m^-2 sr^-1 nm^-1
    const double y = emissivity_of_m(lambda) * planckton::planck_per_wavelength(lambda, temperature) * 1e-9;
    const double sigma = rel_error * y;
    input.y.push_back(rng != nullptr ? y + sigma * normal(*rng) : y);
    input.y_error.push_back(sigma);
  }
  return input;
}

std::function<double(double)> constant_emissivity(double e) {
  return [e](double) { return e; };
}

GreyBodyFitResult fit(const SpectrumInput& input, bool linear = false) {
  GreyBodyFitOptions options;
  options.linear_emissivity = linear;
  return planckton::fit_grey_body(planckton::prepare_spectrum(input), options);
}

bool has_warning(const GreyBodyFitResult& r, const std::string& code) {
  return std::any_of(r.warnings.begin(), r.warnings.end(), [&](const auto& w) { return w.code == code; });
}

std::string warning_codes(const GreyBodyFitResult& r) {
  std::string out;
  for (const auto& w : r.warnings) out += w.code + " ";
  return out;
}

// chi^2 of the data against epsilon(lambda) B_lambda(T) (the inputs of grey_body, in W/m2/sr/nm
// over nm).
double chi_square(const SpectrumInput& input, double temperature, const std::function<double(double)>& emissivity) {
  double sum = 0.0;
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    const double lambda = input.x[i] * 1e-9;
    const double model = emissivity(lambda) * planckton::planck_per_wavelength(lambda, temperature) * 1e-9;
    sum += std::pow((input.y[i] - model) / input.y_error[i], 2);
  }
  return sum;
}

double temperature_sigma(const GreyBodyFitResult& r) {
  return r.planck.temperature_k * std::sqrt(r.covariance[0]);
}

// ---------------------------------------------------------------------------------------------
// Radiance temperature.

TEST(RadiometryRadianceTemperature, InvertsPlanckExactly) {
  // Source: Planck's law per unit wavelength (planck.h), inverted in closed form; the round trip
  // T -> B_lambda(T) -> T must return T to rounding.
  const std::vector<double> wavelengths = {200e-9, 550e-9, 1e-6, 3.9e-6, 10.6e-6, 100e-6, 1e-3};
  const std::vector<double> temperatures = {300.0, 1000.0, 1500.0, 3000.0, 5772.0, 2e4, 1e5};
  for (double lambda : wavelengths) {
    for (double t : temperatures) {
      const double b = planckton::planck_per_wavelength(lambda, t);
      EXPECT_TRUE(RelativelyNear(planckton::radiance_temperature(lambda, b), t, 1e-12))
          << lambda << " m, " << t << " K, x = " << k::kSecondRadiation / (lambda * t);
    }
  }
}

TEST(RadiometryRadianceTemperature, ExactAtTheExtremesOfBothSides) {
  // Source: as above. Deep Wien side, x = c2 / (lambda T) ~ 719 (planck.h's log-space branch), and
  // deep Rayleigh-Jeans side, x ~ 1.4e-6, where 1 + a would lose digits without log1p.
  EXPECT_TRUE(RelativelyNear(planckton::radiance_temperature(200e-9, planckton::planck_per_wavelength(200e-9, 100.0)),
                             100.0, 1e-12));
  EXPECT_TRUE(RelativelyNear(planckton::radiance_temperature(1e-3, planckton::planck_per_wavelength(1e-3, 1e7)), 1e7,
                             1e-12));
  // Rayleigh-Jeans law B = 2 c k T / lambda^4 (its limit, Planck 1901): agrees to O(x) = 1.4e-6.
  const double rj_radiance = 2.0 * k::kSpeedOfLight * k::kBoltzmann * 1e7 / std::pow(1e-3, 4);
  EXPECT_TRUE(RelativelyNear(planckton::radiance_temperature(1e-3, rj_radiance), 1e7, 2e-6));
}

TEST(RadiometryRadianceTemperature, GreyBodyIsBelowItsTrueTemperature) {
  // Source: common practice in pyrometry (an emissivity below 1 lowers the brightness temperature).
  for (double lambda : {650e-9, 1e-6, 1.6e-6, 3.9e-6}) {
    for (double emissivity : {0.9, 0.5, 0.1}) {
      const double t_b =
          planckton::radiance_temperature(lambda, emissivity * planckton::planck_per_wavelength(lambda, 1500.0));
      EXPECT_LT(t_b, 1500.0) << lambda << " m, emissivity " << emissivity;
      EXPECT_GT(t_b, 0.0);
      // And by the amount of the Wien-side rule 1/T_b - 1/T = -(lambda / c2) ln epsilon (common
      // practice; exact in the Wien limit), within 1 % of the difference where x = c2 / (lambda T) > 5.
      if (k::kSecondRadiation / (lambda * 1500.0) > 5.0) {
        const double wien = 1.0 / (1.0 / 1500.0 - lambda / k::kSecondRadiation * std::log(emissivity));
        EXPECT_NEAR(t_b, wien, 0.01 * (1500.0 - wien)) << lambda << " m, emissivity " << emissivity;
      }
    }
  }
}

TEST(RadiometryRadianceTemperature, RejectsBadInput) {
  // Source: the interface (bad input is an InputError naming the field).
  for (const auto& [lambda, radiance] : std::vector<std::pair<double, double>>{
           {0.0, 1.0}, {-1e-6, 1.0}, {1e-6, 0.0}, {1e-6, -1.0}, {NAN, 1.0}, {1e-6, INFINITY}}) {
    try {
      planckton::radiance_temperature(lambda, radiance);
      ADD_FAILURE() << lambda << " " << radiance << " accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), "radiance_temperature_at");
    }
  }
}

// ---------------------------------------------------------------------------------------------
// Ratio temperature.

TEST(RadiometryRatioTemperature, GreyBodyGivesTheTrueTemperatureWhateverTheEmissivity) {
  // Source: the definition (an emissivity equal at both wavelengths cancels in the ratio).
  struct Pair { double l1, l2; };
  for (const Pair p : {Pair{650e-9, 900e-9}, Pair{1e-6, 1.6e-6}, Pair{3.9e-6, 2e-6}, Pair{500e-9, 10e-6}}) {
    for (double t : {800.0, 1500.0, 3000.0, 2e4}) {
      for (double emissivity : {1.0, 0.8, 0.35, 0.05}) {
        const double b1 = emissivity * planckton::planck_per_wavelength(p.l1, t);
        const double b2 = emissivity * planckton::planck_per_wavelength(p.l2, t);
        const std::optional<double> t_r = planckton::ratio_temperature(p.l1, b1, p.l2, b2);
        ASSERT_TRUE(t_r.has_value()) << p.l1 << " " << p.l2 << " " << t;
        EXPECT_TRUE(RelativelyNear(*t_r, t, 1e-9)) << p.l1 << " " << p.l2 << " emissivity " << emissivity;
      }
    }
  }
}

TEST(RadiometryRatioTemperature, NoTemperatureGivesAnImpossibleRatio) {
  // Source: Planck's law. For l1 < l2 the ratio B(l1)/B(l2) rises with T towards the
  // Rayleigh-Jeans limit (l2 / l1)^4, so a larger ratio has no root; a ratio just inside has one.
  const double l1 = 1e-6, l2 = 2e-6;
  EXPECT_FALSE(planckton::ratio_temperature(l1, 1.01 * std::pow(l2 / l1, 4), l2, 1.0).has_value());
  const double b1 = planckton::planck_per_wavelength(l1, 5e6), b2 = planckton::planck_per_wavelength(l2, 5e6);
  const std::optional<double> hot = planckton::ratio_temperature(l1, b1, l2, b2);
  ASSERT_TRUE(hot.has_value());
  EXPECT_TRUE(RelativelyNear(*hot, 5e6, 1e-6));  // weakly conditioned there: d ln ratio / d ln T ~ x
  // Colder than 1 K gives a ratio below any in the bracket.
  EXPECT_FALSE(planckton::ratio_temperature(1e-3, planckton::planck_per_wavelength(1e-3, 0.5), 2e-3,
                                            planckton::planck_per_wavelength(2e-3, 0.5))
                   .has_value());
  EXPECT_THROW(planckton::ratio_temperature(1e-6, 1.0, 1e-6, 2.0), InputError);
  try {
    planckton::ratio_temperature(1e-6, -1.0, 2e-6, 1.0);
    ADD_FAILURE() << "negative radiance accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "ratio_pair");
  }
}

// ---------------------------------------------------------------------------------------------
// Grey-body fits.

TEST(RadiometryGreyBody, ConstantEmissivityRecoveredWithinThreeSigma) {
  // Source: common practice (an unbiased estimator lands within 3 sigma of the truth).
  std::mt19937_64 rng(20240917);
  const SpectrumInput input = grey_body(1000.0, 2500.0, 151, 1500.0, constant_emissivity(0.35), 0.01, &rng);
  const GreyBodyFitResult r = fit(input);
  ASSERT_TRUE(r.planck.converged) << r.planck.termination;
  ASSERT_TRUE(r.planck.covariance_available);
  EXPECT_FALSE(r.linear);
  EXPECT_FALSE(r.emissivity_at_bound);
  const double t_sigma = temperature_sigma(r);
  EXPECT_GT(t_sigma, 0.0);
  EXPECT_GT(r.emissivity_error, 0.0);
  EXPECT_LT(std::abs(r.planck.temperature_k - 1500.0), 3.0 * t_sigma)
      << r.planck.temperature_k << " +- " << t_sigma;
  EXPECT_LT(std::abs(r.emissivity - 0.35), 3.0 * r.emissivity_error) << r.emissivity << " +- " << r.emissivity_error;
  // The 2x2 in (ln T, epsilon) is the fit's (ln T, ln scale) covariance carried by d eps = eps d ln eps.
  EXPECT_TRUE(RelativelyNear(r.emissivity_error, r.emissivity * r.planck.scale_log_sigma(), 1e-12));
  EXPECT_DOUBLE_EQ(r.covariance[8], 0.0);
  // Below the bound the fit is the unbounded Planck fit.
  const auto unbounded = planckton::fit_planck(planckton::prepare_spectrum(input), {});
  EXPECT_TRUE(RelativelyNear(r.planck.temperature_k, unbounded.temperature_k, 1e-12));
  // Over 1-2.5 um at 1500 K (x from 9.6 to 3.8) the two are already strongly correlated.
  EXPECT_LT(r.temperature_emissivity_correlation, -0.9);
}

TEST(RadiometryGreyBody, EmissivityNeverExceedsOne) {
  // Source: the definition (emissivity in (0, 1]). Black-body data with noise: unbounded, about
  // half the draws would give a scale above 1; bounded, none does, and those sit on the bound.
  std::mt19937_64 rng(5);
  int above_unbounded = 0;
  for (int draw = 0; draw < 20; ++draw) {
    const SpectrumInput input = grey_body(1000.0, 2500.0, 60, 1500.0, constant_emissivity(1.0), 0.01, &rng);
    const GreyBodyFitResult r = fit(input);
    const auto unbounded = planckton::fit_planck(planckton::prepare_spectrum(input), {});
    EXPECT_LE(r.emissivity, 1.0);
    EXPECT_GT(r.emissivity, 0.0);
    EXPECT_TRUE(r.planck.converged) << r.planck.termination << ": " << r.planck.solver_message;
    if (unbounded.scale > 1.0) {
      ++above_unbounded;
      EXPECT_TRUE(r.emissivity_at_bound);
      EXPECT_TRUE(r.planck.scale_at_bound);
      EXPECT_DOUBLE_EQ(r.emissivity, 1.0);
      EXPECT_TRUE(has_warning(r, "emissivity_at_bound")) << warning_codes(r);
      // On the bound the temperature is the black body's, within the noise: 3 sigma of the bounded fit.
      EXPECT_LT(std::abs(r.planck.temperature_k - 1500.0), 3.0 * temperature_sigma(r));
      // And it is the minimum of chi^2 along the bound (Ceres' projected steps alone had stopped
      // 0.006 K short of it): 1 mK either side is worse.
      const double t = r.planck.temperature_k;
      const auto one = constant_emissivity(1.0);
      EXPECT_LT(chi_square(input, t, one), chi_square(input, t + 1e-3, one));
      EXPECT_LT(chi_square(input, t, one), chi_square(input, t - 1e-3, one));
      EXPECT_LT(r.planck.iterations, 20);
    }
  }
  EXPECT_GT(above_unbounded, 3);  // so the bound was exercised
}

// The general path with a bound on the scale reaches the same optimum from the robust branch (a
// Huber loss whose scale no residual reaches is plain least squares) as from the fast path.
TEST(RadiometryGreyBody, BoundedFastAndGeneralPathsAgree) {
  // Source: the construction (the same least-squares problem solved two ways).
  std::mt19937_64 rng(5);
  const auto spectrum = planckton::prepare_spectrum(
      grey_body(1000.0, 2500.0, 60, 1500.0, constant_emissivity(1.0), 0.01, &rng));
  planckton::PlanckFitOptions options;
  options.max_scale = 1.0;
  const auto fast = planckton::fit_planck(spectrum, options);
  options.loss = planckton::RobustLoss::kHuber;
  options.loss_scale = 1e6;
  const auto general = planckton::fit_planck(spectrum, options);
  ASSERT_TRUE(fast.scale_at_bound && general.scale_at_bound);  // draw 0 of seed 5 lies above 1 unbounded
  EXPECT_DOUBLE_EQ(fast.scale, 1.0);
  EXPECT_TRUE(RelativelyNear(fast.temperature_k, general.temperature_k, 1e-9));
  for (int i = 0; i < 4; ++i) EXPECT_TRUE(RelativelyNear(fast.log_covariance[i], general.log_covariance[i], 1e-6)) << i;
}

TEST(RadiometryGreyBody, LinearEmissivityRecovered) {
  // Source: common practice in multi-wavelength pyrometry (epsilon linear in wavelength); the truth
  // e0 = 0.6 at 1750 nm, slope -2e5 per m (-0.2 per micrometre): epsilon from 0.75 to 0.45.
  const double e0 = 0.6, slope = -2e5, lambda_c = 1750e-9;
  const auto emissivity = [&](double lambda) { return e0 + slope * (lambda - lambda_c); };

  // Noiseless: the construction is recovered to the solver's tolerance.
  const GreyBodyFitResult exact = fit(grey_body(1000.0, 2500.0, 151, 1500.0, emissivity, 0.01, nullptr), true);
  ASSERT_TRUE(exact.planck.converged) << exact.planck.termination << ": " << exact.planck.solver_message;
  EXPECT_TRUE(exact.linear);
  EXPECT_TRUE(RelativelyNear(exact.reference_wavelength_m, lambda_c, 1e-12));
  EXPECT_TRUE(RelativelyNear(exact.planck.temperature_k, 1500.0, 1e-8));
  EXPECT_TRUE(RelativelyNear(exact.emissivity, e0, 1e-7));
  EXPECT_TRUE(RelativelyNear(exact.slope_per_m, slope, 1e-6));
  EXPECT_EQ(exact.planck.degrees_of_freedom, 148);

  // With 1 % noise: within 3 sigma, for each of temperature, e0 and slope.
  std::mt19937_64 rng(77);
  const GreyBodyFitResult r = fit(grey_body(1000.0, 2500.0, 151, 1500.0, emissivity, 0.01, &rng), true);
  ASSERT_TRUE(r.planck.converged);
  ASSERT_TRUE(r.planck.covariance_available);
  EXPECT_FALSE(r.emissivity_at_bound) << warning_codes(r);
  EXPECT_LT(std::abs(r.planck.temperature_k - 1500.0), 3.0 * temperature_sigma(r))
      << r.planck.temperature_k << " +- " << temperature_sigma(r);
  EXPECT_LT(std::abs(r.emissivity - e0), 3.0 * r.emissivity_error) << r.emissivity << " +- " << r.emissivity_error;
  EXPECT_LT(std::abs(r.slope_per_m - slope), 3.0 * r.slope_error) << r.slope_per_m << " +- " << r.slope_error;
  // Honest errors give a reduced chi-square near 1 (common practice: within 5 sigma of sqrt(2/dof)).
  ASSERT_TRUE(r.planck.chi_square.has_value());
  EXPECT_NEAR(*r.planck.chi_square / 148.0, 1.0, 5.0 * std::sqrt(2.0 / 148.0));
  // The constant fit of the same data is biased (a falling emissivity mimics a hotter body) and fits
  // worse, which is what the linear form is for.
  const GreyBodyFitResult constant = fit(grey_body(1000.0, 2500.0, 151, 1500.0, emissivity, 0.01, nullptr));
  EXPECT_GT(constant.planck.temperature_k, 1500.0 + 3.0 * temperature_sigma(r));
}

TEST(RadiometryGreyBody, LinearEmissivityBoundedAtOne) {
  // Source: the definition (emissivity in (0, 1]) and the construction. Black-body data fitted with
  // the linear form: where e0 ends on its bound of 1, the temperature and slope must be the best
  // ones there (Ceres' projected steps alone had stopped up to 0.03 K and 100 per m short of it), so
  // moving either a little raises chi^2.
  int on_bound = 0;
  for (unsigned seed = 0; seed < 30; ++seed) {
    std::mt19937_64 rng(seed);
    const SpectrumInput input = grey_body(1000.0, 2500.0, 60, 1500.0, constant_emissivity(1.0), 0.01, &rng);
    const GreyBodyFitResult r = fit(input, true);
    ASSERT_TRUE(r.planck.converged) << seed << ": " << r.planck.solver_message;
    EXPECT_LE(r.emissivity, 1.0);
    if (!r.planck.scale_at_bound) continue;
    ++on_bound;
    EXPECT_TRUE(r.emissivity_at_bound);
    EXPECT_TRUE(has_warning(r, "emissivity_at_bound")) << warning_codes(r);
    const double t = r.planck.temperature_k, s = r.slope_per_m, c = r.reference_wavelength_m;
    const auto linear = [c](double slope) {
      return std::function<double(double)>([c, slope](double lambda) { return 1.0 + slope * (lambda - c); });
    };
    const double best = chi_square(input, t, linear(s));
    EXPECT_LT(best, chi_square(input, t + 1e-3, linear(s))) << seed;
    EXPECT_LT(best, chi_square(input, t - 1e-3, linear(s))) << seed;
    EXPECT_LT(best, chi_square(input, t, linear(s + 5.0))) << seed;
    EXPECT_LT(best, chi_square(input, t, linear(s - 5.0))) << seed;
  }
  EXPECT_GT(on_bound, 3);  // so the bound was exercised
}

TEST(RadiometryGreyBody, NarrowBandIsDegenerate) {
  // Source: common practice in pyrometry (over a narrow band ln B is nearly linear in ln T with a
  // constant slope, so temperature and emissivity trade off).
  std::mt19937_64 rng(11);
  const GreyBodyFitResult narrow = fit(grey_body(1000.0, 1100.0, 51, 1500.0, constant_emissivity(0.35), 0.01, &rng));
  EXPECT_GT(std::abs(narrow.temperature_emissivity_correlation), 0.95);
  EXPECT_TRUE(has_warning(narrow, "emissivity_temperature_degenerate")) << warning_codes(narrow);
  // A wide band around the peak (500 nm to 10 um at 1500 K) separates them.
  const GreyBodyFitResult wide = fit(grey_body(500.0, 10000.0, 51, 1500.0, constant_emissivity(0.35), 0.01, &rng));
  EXPECT_LT(std::abs(wide.temperature_emissivity_correlation), 0.95);
  EXPECT_FALSE(has_warning(wide, "emissivity_temperature_degenerate")) << warning_codes(wide);
}

TEST(RadiometryGreyBody, FluxInputIsRejected) {
  // Source: the definition (an emissivity is a ratio of radiances, per steradian).
  for (const char* unit : {"W/m2/nm", "erg/s/cm2/Angstrom", "relative/nm"}) {
    SCOPED_TRACE(unit);
    const SpectrumInput input = grey_body(1000.0, 2500.0, 20, 1500.0, constant_emissivity(0.5), 0.01, nullptr, unit);
    const planckton::MeasuredSpectrum spectrum = planckton::prepare_spectrum(input);
    for (bool linear : {false, true}) {
      GreyBodyFitOptions options;
      options.linear_emissivity = linear;
      try {
        planckton::fit_grey_body(spectrum, options);
        ADD_FAILURE() << "accepted";
      } catch (const InputError& e) {
        EXPECT_EQ(e.field(), "y_unit");
      }
    }
  }
}

TEST(RadiometryGreyBody, MaxScaleIsValidated) {
  // Source: the interface (planck_fit.h: options.max_scale must be positive and finite).
  const auto spectrum =
      planckton::prepare_spectrum(grey_body(1000.0, 2500.0, 20, 1500.0, constant_emissivity(0.5), 0.01, nullptr));
  planckton::PlanckFitOptions options;
  options.max_scale = 0.0;
  try {
    planckton::fit_planck(spectrum, options);
    ADD_FAILURE() << "max_scale 0 accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "options.max_scale");
  }
}

}  // namespace
