// Fitting Planck curves to synthetic spectra (science/spectrum.h, planck_fit.h, derived_quantities.h).
//
// Every spectrum is made here from planck.h's radiance with a seeded std::mt19937_64, so each run
// sees the same numbers; "within 3 sigma" therefore either always holds or never does.
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <numbers>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "science/constants.h"
#include "science/derived_quantities.h"
#include "science/input_error.h"
#include "science/peaks.h"
#include "science/planck.h"
#include "science/ceres_settings.h"
#include "science/planck_fit.h"
#include "science/spectrum.h"
#include "science/units.h"
#include "test_support.h"

namespace {

using planckton::Distance;
using planckton::InputError;
using planckton::PlanckFitOptions;
using planckton::RobustLoss;
using planckton::SpectrumInput;
namespace k = planckton::constants;

using planckton::testing::RelativelyNear;

std::vector<double> linspace(double lo, double hi, int n) {
  std::vector<double> out(static_cast<std::size_t>(n));
  for (int i = 0; i < n; ++i) out[static_cast<std::size_t>(i)] = lo + (hi - lo) * i / (n - 1);
  return out;
}

// The model value scale * B(nu; T) in the given units at each x.
std::vector<double> model_values(const std::vector<double>& x, const std::string& x_unit, const std::string& y_unit,
                                 double temperature, double scale) {
  const auto axis = planckton::parse_spectral_axis_unit(x_unit);
  const auto flux = planckton::parse_flux_density_unit(y_unit);
  std::vector<double> y;
  for (double v : x) {
    y.push_back(scale * planckton::planck_radiance(flux.convention, planckton::to_frequency(axis, v), temperature) /
                flux.to_si);
  }
  return y;
}

// A black body sampled at x with relative one-sigma errors rel_error; noise drawn when rng is set.
SpectrumInput black_body(const std::vector<double>& x, const std::string& x_unit, const std::string& y_unit,
                         double temperature, double scale, double rel_error, std::mt19937_64* rng) {
  SpectrumInput input;
  input.x = x;
  input.x_unit = x_unit;
  input.y_unit = y_unit;
  input.y = model_values(x, x_unit, y_unit, temperature, scale);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (double& y : input.y) {
    const double sigma = rel_error * y;
    input.y_error.push_back(sigma);
    if (rng != nullptr) y += sigma * normal(*rng);
  }
  return input;
}

struct Outcome {
  planckton::MeasuredSpectrum spectrum;
  planckton::PlanckFitResult fit;
  planckton::DerivedQuantities derived;
};

Outcome run(const SpectrumInput& input, const PlanckFitOptions& options = {},
            const std::optional<Distance>& distance = std::nullopt) {
  Outcome out;
  out.spectrum = planckton::prepare_spectrum(input);
  out.fit = planckton::fit_planck(out.spectrum, options);
  out.derived = planckton::derive_quantities(out.fit, out.spectrum.y_unit, distance);
  return out;
}

bool has_warning(const planckton::PlanckFitResult& fit, const std::string& code) {
  return std::any_of(fit.warnings.begin(), fit.warnings.end(), [&](const auto& w) { return w.code == code; });
}

std::string warning_codes(const planckton::PlanckFitResult& fit) {
  std::string out;
  for (const auto& w : fit.warnings) out += w.code + " ";
  return out;
}

double temperature_sigma(const Outcome& o) { return o.derived.temperature_k.error.value(); }

// ---------------------------------------------------------------------------------------------
// (a) Recovery.

struct RecoveryCase {
  const char* name;
  double lo, hi;
  const char* x_unit;
  const char* y_unit;
  double temperature;
  double scale;
};

const std::array<RecoveryCase, 3> kRecoveryCases = {{
    {"far-IR 50 K in Jy", 100.0, 1000.0, "um", "Jy", 50.0, 1e-10},
    {"optical 5800 K in W/m2/nm", 350.0, 1000.0, "nm", "W/m2/nm", 5800.0, 1e-15},
    {"UV-optical 30000 K in erg/s/cm2/Angstrom", 1200.0, 9000.0, "Angstrom", "erg/s/cm2/Angstrom", 30000.0, 1e-19},
}};

TEST(Fit, RecoversTemperatureWithinThreeSigma) {
  // Source: common practice (an unbiased estimator lands within 3 sigma of the truth).
  std::mt19937_64 rng(20240611);
  for (const RecoveryCase& c : kRecoveryCases) {
    SCOPED_TRACE(c.name);
    const SpectrumInput input =
        black_body(linspace(c.lo, c.hi, 150), c.x_unit, c.y_unit, c.temperature, c.scale, 0.02, &rng);
    const Outcome o = run(input);
    ASSERT_TRUE(o.fit.converged) << o.fit.termination << ": " << o.fit.solver_message;
    ASSERT_TRUE(o.fit.covariance_available);
    const double sigma = temperature_sigma(o);
    EXPECT_GT(sigma, 0.0);
    EXPECT_LT(std::abs(o.fit.temperature_k - c.temperature), 3.0 * sigma)  // common practice: 3 sigma
        << "T=" << o.fit.temperature_k << " +- " << sigma;
    // The scale too, in its own log-space sigma.
    EXPECT_LT(std::abs(std::log(o.fit.scale / c.scale)), 3.0 * o.fit.scale_log_sigma());
    // With honest errors the reduced chi-square is near 1 (common practice: within 5 sigma of its
    // sampling spread sqrt(2 / dof)).
    ASSERT_TRUE(o.fit.chi_square.has_value());
    const double dof = o.fit.degrees_of_freedom;
    EXPECT_EQ(dof, 148);
    EXPECT_NEAR(*o.fit.chi_square / dof, 1.0, 5.0 * std::sqrt(2.0 / dof));
    ASSERT_TRUE(o.fit.p_value.has_value());
    EXPECT_GT(*o.fit.p_value, 1e-3);
    EXPECT_FALSE(has_warning(o.fit, "poor_fit"));
  }
}

// The fast path (ceres::TinySolver and the Gauss-Newton covariance of planck_fit.cpp) and the
// general path (ceres::Problem and ceres_settings::covariance) must agree on the same least-squares problem.
// A Huber loss whose scale no residual reaches is plain least squares but takes the general path.
TEST(Fit, FastPathAgreesWithCeresProblemAndCovariance) {
  std::mt19937_64 rng(31);
  const RecoveryCase& c = kRecoveryCases[1];
  const SpectrumInput input =
      black_body(linspace(c.lo, c.hi, 400), c.x_unit, c.y_unit, c.temperature, c.scale, 0.02, &rng);
  const Outcome fast = run(input);
  PlanckFitOptions general_options;
  general_options.loss = RobustLoss::kHuber;
  general_options.loss_scale = 1e6;
  const Outcome general = run(input, general_options);
  ASSERT_TRUE(fast.fit.covariance_available && general.fit.covariance_available);
  EXPECT_TRUE(RelativelyNear(fast.fit.temperature_k, general.fit.temperature_k, 1e-9));
  EXPECT_TRUE(RelativelyNear(fast.fit.scale, general.fit.scale, 1e-8));
  for (int i = 0; i < 4; ++i) {
    EXPECT_TRUE(RelativelyNear(fast.fit.log_covariance[i], general.fit.log_covariance[i], 1e-6)) << i;
  }
}

TEST(Fit, NoiselessSpectrumIsFitExactly) {
  // Source: the construction (noiseless data are the model at the truth).
  for (const RecoveryCase& c : kRecoveryCases) {
    SCOPED_TRACE(c.name);
    const SpectrumInput input =
        black_body(linspace(c.lo, c.hi, 150), c.x_unit, c.y_unit, c.temperature, c.scale, 0.02, nullptr);
    const Outcome o = run(input);
    ASSERT_TRUE(o.fit.converged);
    EXPECT_TRUE(RelativelyNear(o.fit.temperature_k, c.temperature, 1e-8));  // from the construction
    EXPECT_TRUE(RelativelyNear(o.fit.scale, c.scale, 1e-7));
    const auto& t = o.derived.temperature_k;
    ASSERT_TRUE(t.interval_95.has_value());
    EXPECT_LE((*t.interval_95)[0], c.temperature);
    EXPECT_GE((*t.interval_95)[1], c.temperature);
    ASSERT_TRUE(o.fit.chi_square.has_value());
    EXPECT_LT(*o.fit.chi_square, 1e-6);
  }
}

// The formal error of a noiseless fit is the one of the noisy fit with the same errors: it depends
// only on the errors and the model's Jacobian (common practice: (J^T J)^-1 with given sigmas).
TEST(Fit, CovarianceDoesNotDependOnTheNoiseDraw) {
  const RecoveryCase& c = kRecoveryCases[1];
  std::mt19937_64 rng(7);
  const auto x = linspace(c.lo, c.hi, 150);
  const Outcome noisy = run(black_body(x, c.x_unit, c.y_unit, c.temperature, c.scale, 0.02, &rng));
  const Outcome exact = run(black_body(x, c.x_unit, c.y_unit, c.temperature, c.scale, 0.02, nullptr));
  EXPECT_TRUE(RelativelyNear(noisy.fit.temperature_log_sigma(), exact.fit.temperature_log_sigma(), 0.05));
}

// ---------------------------------------------------------------------------------------------
// (b) No y_error: the scatter is estimated.

TEST(Fit, WithoutErrorsTheScatterIsEstimated) {
  // Source: planck_fit.h step 3 (chi^2 / dof rescaling, as curve_fit with absolute_sigma=False).
  std::mt19937_64 rng(99);
  std::normal_distribution<double> normal(0.0, 1.0);
  const double temperature = 5800.0, scale = 1e-15;
  SpectrumInput input;
  input.x = linspace(350.0, 1000.0, 400);
  input.x_unit = "nm";
  input.y_unit = "W/m2/nm";
  input.y = model_values(input.x, input.x_unit, input.y_unit, temperature, scale);
  const double peak = *std::max_element(input.y.begin(), input.y.end());
  const double noise = 0.1 * peak;  // homoscedastic, 10 % of the peak
  for (double& y : input.y) y += noise * normal(rng);

  const Outcome o = run(input);
  ASSERT_TRUE(o.fit.converged);
  EXPECT_TRUE(o.fit.errors_estimated);
  EXPECT_TRUE(has_warning(o.fit, "errors_estimated")) << warning_codes(o.fit);
  EXPECT_FALSE(o.fit.chi_square.has_value());
  EXPECT_FALSE(o.fit.p_value.has_value());
  // 400 points: the scatter estimate has a relative spread ~ 1 / sqrt(2 * 398) = 3.5 %.
  EXPECT_TRUE(RelativelyNear(o.fit.residual_scatter_si, noise * o.spectrum.y_unit.to_si, 0.12))  // common practice
      << o.fit.residual_scatter_si / o.spectrum.y_unit.to_si << " vs " << noise;
  ASSERT_TRUE(o.fit.covariance_available);
  EXPECT_LT(std::abs(o.fit.temperature_k - temperature), 3.0 * temperature_sigma(o));
}

// Without errors the intervals scale with the scatter: the same data with 10x the noise give
// ~10x the temperature error.
TEST(Fit, WithoutErrorsTheIntervalsScaleWithTheScatter) {
  // Source: planck_fit.h step 3 (covariance scaled by the residual variance).
  const auto make = [](double noise_fraction) {
    std::mt19937_64 rng(5);
    std::normal_distribution<double> normal(0.0, 1.0);
    SpectrumInput input;
    input.x = linspace(350.0, 1000.0, 300);
    input.x_unit = "nm";
    input.y_unit = "W/m2/nm";
    input.y = model_values(input.x, input.x_unit, input.y_unit, 5800.0, 1e-15);
    const double peak = *std::max_element(input.y.begin(), input.y.end());
    for (double& y : input.y) y += noise_fraction * peak * normal(rng);
    return run(input);
  };
  const Outcome small = make(0.002);
  const Outcome large = make(0.02);
  EXPECT_TRUE(RelativelyNear(large.fit.temperature_log_sigma() / small.fit.temperature_log_sigma(), 10.0, 0.1));
}

// ---------------------------------------------------------------------------------------------
// (c) Robust loss against emission spikes.

SpectrumInput spiky_spectrum() {
  std::mt19937_64 rng(31337);
  SpectrumInput input = black_body(linspace(350.0, 1000.0, 200), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng);
  // Strong narrow emission features: every 8th point on the blue side is 40 % (40 sigma) too high.
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    if (input.x[i] < 600.0 && i % 8 == 0) input.y[i] *= 1.4;
  }
  return input;
}

TEST(Fit, CauchyLossResistsSpikesThatBiasThePlainFit) {
  // Source: common practice (a redescending loss ignores gross outliers; least squares does not).
  const SpectrumInput input = spiky_spectrum();
  const Outcome plain = run(input);
  ASSERT_TRUE(plain.fit.converged);
  const double plain_bias = plain.fit.temperature_k - 5800.0;
  EXPECT_GT(std::abs(plain_bias), 5.0 * temperature_sigma(plain))
      << "plain T=" << plain.fit.temperature_k << " +- " << temperature_sigma(plain);
  EXPECT_TRUE(has_warning(plain.fit, "poor_fit")) << warning_codes(plain.fit);

  PlanckFitOptions options;
  options.loss = RobustLoss::kCauchy;
  const Outcome robust = run(input, options);
  ASSERT_TRUE(robust.fit.converged) << robust.fit.termination;
  ASSERT_TRUE(robust.fit.covariance_available);
  EXPECT_LT(std::abs(robust.fit.temperature_k - 5800.0), 3.0 * temperature_sigma(robust))  // common practice
      << "robust T=" << robust.fit.temperature_k << " +- " << temperature_sigma(robust);
  EXPECT_GT(robust.fit.robust_cost, 0.0);
  // The robust cost grows slower than the squares: it is below the plain chi-square at the same data.
  ASSERT_TRUE(robust.fit.chi_square.has_value());
  EXPECT_LT(robust.fit.robust_cost, *robust.fit.chi_square);
}

TEST(Fit, HuberLossAlsoReducesTheBias) {
  // Source: common practice (Huber bounds the influence of outliers).
  const SpectrumInput input = spiky_spectrum();
  const Outcome plain = run(input);
  PlanckFitOptions options;
  options.loss = RobustLoss::kHuber;
  const Outcome huber = run(input, options);
  ASSERT_TRUE(huber.fit.converged);
  EXPECT_LT(std::abs(huber.fit.temperature_k - 5800.0), std::abs(plain.fit.temperature_k - 5800.0));
}

TEST(Fit, CauchyLossWithoutErrorsUsesTheRobustScatter) {
  // Source: planck_fit.h (loss scale in units of the robustly estimated scatter).
  SpectrumInput input = spiky_spectrum();
  input.y_error.clear();
  PlanckFitOptions options;
  options.loss = RobustLoss::kCauchy;
  const Outcome robust = run(input, options);
  ASSERT_TRUE(robust.fit.converged);
  EXPECT_TRUE(robust.fit.errors_estimated);
  EXPECT_TRUE(RelativelyNear(robust.fit.temperature_k, 5800.0, 0.01)) << robust.fit.temperature_k;
}

// ---------------------------------------------------------------------------------------------
// (d) Exclude ranges.

TEST(Fit, ExcludeRangesDropPointsAndRemoveALinesBias) {
  // Source: spectrum.h (exclude ranges in the axis unit); common practice (masking a line removes its bias).
  std::mt19937_64 rng(4242);
  SpectrumInput input = black_body(linspace(350.0, 1000.0, 261), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng);
  // A broad emission line at 450 nm, 8 nm wide (one sigma), 60 % above the continuum at its centre.
  std::size_t in_range = 0;
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    const double d = (input.x[i] - 450.0) / 8.0;
    input.y[i] *= 1.0 + 0.6 * std::exp(-0.5 * d * d);
    if (input.x[i] >= 410.0 && input.x[i] <= 490.0) ++in_range;
  }
  const Outcome with_line = run(input);
  EXPECT_GT(std::abs(with_line.fit.temperature_k - 5800.0), 5.0 * temperature_sigma(with_line))
      << with_line.fit.temperature_k;
  EXPECT_EQ(with_line.spectrum.points_excluded, 0u);

  input.exclude = {{410.0, 490.0}};
  const Outcome masked = run(input);
  EXPECT_EQ(masked.spectrum.points_given, 261u);
  EXPECT_EQ(masked.spectrum.points_excluded, in_range);
  EXPECT_EQ(in_range, 33u);  // 410, 412.5, ..., 490
  EXPECT_EQ(masked.spectrum.size(), 261u - in_range);
  EXPECT_EQ(masked.fit.points_used, 261u - in_range);
  EXPECT_LT(std::abs(masked.fit.temperature_k - 5800.0), 3.0 * temperature_sigma(masked))
      << masked.fit.temperature_k << " +- " << temperature_sigma(masked);
}

TEST(Fit, ExcludeRangesAreInTheAxisUnitAndInclusive) {
  // Source: spectrum.h; the inclusive ends follow spectrum.cpp (x >= lo && x <= hi).
  SpectrumInput input = black_body({400.0, 500.0, 600.0, 700.0, 800.0, 900.0, 1000.0}, "nm", "W/m2/nm", 5800.0,
                                   1e-15, 0.01, nullptr);
  input.exclude = {{500.0, 600.0}, {1000.0, 2000.0}};
  const auto spectrum = planckton::prepare_spectrum(input);
  EXPECT_EQ(spectrum.points_excluded, 3u);
  EXPECT_EQ(spectrum.size(), 4u);
  EXPECT_TRUE(RelativelyNear(spectrum.min_frequency_hz, k::kSpeedOfLight / 900e-9, 1e-15));
  EXPECT_TRUE(RelativelyNear(spectrum.max_frequency_hz, k::kSpeedOfLight / 400e-9, 1e-15));
}

TEST(Fit, BadExcludeRangeIsRejected) {
  // Source: spectrum.h (InputError names the field and the index).
  SpectrumInput input = black_body(linspace(400, 900, 20), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, nullptr);
  input.exclude = {{500.0, 600.0}, {700.0, 650.0}};
  try {
    planckton::prepare_spectrum(input);
    FAIL() << "no InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "exclude");  // spectrum.h
    EXPECT_EQ(e.index(), std::optional<std::size_t>(1));
  }
}

TEST(Fit, ExcludingEverythingIsAnInputError) {
  // Source: planck_fit.h (fewer points than free parameters throws InputError).
  SpectrumInput input = black_body(linspace(400, 900, 20), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, nullptr);
  input.exclude = {{300.0, 1000.0}};
  EXPECT_THROW(run(input), InputError);
}

// ---------------------------------------------------------------------------------------------
// (e) Warnings.

TEST(Fit, RayleighJeansOnlyDataWarnPeakOutsideData) {
  // Source: planck_fit.cpp warning codes; from memory: lambda_max T ~ 2898 um K.
  std::mt19937_64 rng(1);
  // 30000 K peaks near 100 nm; 5-50 um is deep on the Rayleigh-Jeans side.
  const Outcome o = run(black_body(linspace(5.0, 50.0, 60), "um", "W/m2/um", 30000.0, 1e-18, 0.01, &rng));
  EXPECT_TRUE(has_warning(o.fit, "peak_outside_data")) << warning_codes(o.fit);
}

TEST(Fit, WienOnlyDataWarnPeakOutsideData) {
  // Source: planck_fit.cpp warning codes; from memory: lambda_max T ~ 2898 um K.
  std::mt19937_64 rng(2);
  // 3000 K peaks near 966 nm; 200-400 nm is on the Wien side.
  const Outcome o = run(black_body(linspace(200.0, 400.0, 60), "nm", "W/m2/nm", 3000.0, 1e-15, 0.01, &rng));
  EXPECT_TRUE(has_warning(o.fit, "peak_outside_data")) << warning_codes(o.fit);
  EXPECT_LT(std::abs(o.fit.temperature_k - 3000.0), 3.0 * temperature_sigma(o));
}

TEST(Fit, DataAroundThePeakGiveNoPeakWarning) {
  // Source: planck_fit.cpp warning codes (no warning for a well-sampled, honest spectrum).
  std::mt19937_64 rng(3);
  const Outcome o = run(black_body(linspace(300.0, 1200.0, 60), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng));
  EXPECT_FALSE(has_warning(o.fit, "peak_outside_data")) << warning_codes(o.fit);
  EXPECT_TRUE(o.fit.warnings.empty()) << warning_codes(o.fit);
}

TEST(Fit, BoundsExcludingTheTruthWarnTemperatureAtBound) {
  // Source: planck_fit.h (temperature_at_bound) and planck_fit.cpp warning codes.
  std::mt19937_64 rng(4);
  PlanckFitOptions options;
  options.min_temperature_k = 1000.0;
  options.max_temperature_k = 4000.0;
  const Outcome o =
      run(black_body(linspace(350.0, 1000.0, 100), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng), options);
  EXPECT_TRUE(o.fit.temperature_at_bound);
  EXPECT_TRUE(has_warning(o.fit, "temperature_at_bound")) << warning_codes(o.fit);
  EXPECT_TRUE(RelativelyNear(o.fit.temperature_k, 4000.0, 1e-8)) << o.fit.temperature_k;
  EXPECT_FALSE(o.derived.temperature_k.interval_95.has_value());  // planck_fit.cpp: not reliable at a bound
}

TEST(Fit, SumOfTwoBlackBodiesWarnsPoorFit) {
  // Source: planck_fit.cpp (poor_fit below p = 1e-3); common practice (chi-square test of the model).
  SpectrumInput input;
  input.x = linspace(200.0, 2000.0, 120);
  input.x_unit = "nm";
  input.y_unit = "W/m2/nm";
  const auto cool = model_values(input.x, "nm", "W/m2/nm", 3000.0, 1e-14);
  const auto hot = model_values(input.x, "nm", "W/m2/nm", 15000.0, 1e-17);
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    input.y.push_back(cool[i] + hot[i]);
    input.y_error.push_back(1e-3 * input.y.back());
  }
  const Outcome o = run(input);
  EXPECT_TRUE(has_warning(o.fit, "poor_fit")) << warning_codes(o.fit);
  ASSERT_TRUE(o.fit.p_value.has_value());
  EXPECT_LT(*o.fit.p_value, 1e-3);
}

TEST(Fit, FourPointsWarnFewPoints) {
  // Source: planck_fit.cpp (few_points below three points per free parameter).
  std::mt19937_64 rng(5);
  const Outcome o = run(black_body({400.0, 600.0, 800.0, 1000.0}, "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng));
  EXPECT_TRUE(has_warning(o.fit, "few_points")) << warning_codes(o.fit);
  EXPECT_EQ(o.fit.degrees_of_freedom, 2);
}

TEST(Fit, SixPointsDoNotWarnFewPoints) {
  // Source: planck_fit.cpp (few_points below three points per free parameter).
  std::mt19937_64 rng(6);
  const Outcome o = run(
      black_body({400.0, 520.0, 640.0, 760.0, 880.0, 1000.0}, "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng));
  EXPECT_FALSE(has_warning(o.fit, "few_points")) << warning_codes(o.fit);
}

TEST(Fit, IterationLimitIsFlagged) {
  // Source: planck_fit.h (a fit that runs out of budget returns its best estimate, flagged).
  std::mt19937_64 rng(8);
  PlanckFitOptions options;
  options.max_iterations = 1;
  const Outcome o =
      run(black_body(linspace(350.0, 1000.0, 100), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, &rng), options);
  // One iteration from the grid start (nodes a factor 2 apart) cannot reach the 1e-10 step
  // tolerance, so the fit must say that it stopped early, and still return its best estimate.
  EXPECT_FALSE(o.fit.converged);
  EXPECT_EQ(o.fit.termination, "iteration_limit");
  EXPECT_TRUE(has_warning(o.fit, "not_converged")) << warning_codes(o.fit);
  EXPECT_TRUE(RelativelyNear(o.fit.temperature_k, 5800.0, 0.05)) << o.fit.temperature_k;
}

// ---------------------------------------------------------------------------------------------
// (f) Input errors.

// Runs prepare_spectrum + fit_planck and returns the InputError, failing the test when none.
std::optional<InputError> input_error_of(const SpectrumInput& input, const PlanckFitOptions& options = {}) {
  try {
    const auto spectrum = planckton::prepare_spectrum(input);
    planckton::fit_planck(spectrum, options);
  } catch (const InputError& e) {
    return e;
  }
  ADD_FAILURE() << "no InputError";
  return std::nullopt;
}

SpectrumInput valid_input() {
  return black_body(linspace(400.0, 900.0, 10), "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, nullptr);
}

TEST(Fit, ZeroOrNegativeErrorNamesTheFirstBadPoint) {
  // Source: spectrum.h / input_error.h (field and index of the first offending point).
  for (double bad : {0.0, -1e-3}) {
    SpectrumInput input = valid_input();
    input.y_error[3] = bad;
    input.y_error[7] = bad;
    const auto e = input_error_of(input);
    ASSERT_TRUE(e.has_value());
    EXPECT_EQ(e->field(), "y_error");  // spectrum.h
    EXPECT_EQ(e->index(), std::optional<std::size_t>(3));
  }
}

TEST(Fit, NanInYNamesThePoint) {
  // Source: spectrum.h / input_error.h.
  SpectrumInput input = valid_input();
  input.y[2] = std::nan("");
  const auto e = input_error_of(input);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "y");
  EXPECT_EQ(e->index(), std::optional<std::size_t>(2));
}

TEST(Fit, InfiniteErrorNamesThePoint) {
  // Source: spectrum.h / input_error.h.
  SpectrumInput input = valid_input();
  input.y_error[5] = HUGE_VAL;
  const auto e = input_error_of(input);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "y_error");
  EXPECT_EQ(e->index(), std::optional<std::size_t>(5));
}

TEST(Fit, NonPositiveXNamesThePoint) {
  // Source: spectrum.h / input_error.h.
  for (double bad : {0.0, -400.0}) {
    SpectrumInput input = valid_input();
    input.x[4] = bad;
    const auto e = input_error_of(input);
    ASSERT_TRUE(e.has_value());
    EXPECT_EQ(e->field(), "x");
    EXPECT_EQ(e->index(), std::optional<std::size_t>(4));
  }
}

TEST(Fit, MismatchedLengthsAreRejected) {
  // Source: spectrum.h (same lengths).
  {
    SpectrumInput input = valid_input();
    input.y.pop_back();
    const auto e = input_error_of(input);
    ASSERT_TRUE(e.has_value());
    EXPECT_EQ(e->field(), "y");
    EXPECT_FALSE(e->index().has_value());
  }
  {
    SpectrumInput input = valid_input();
    input.y_error.push_back(1.0);
    const auto e = input_error_of(input);
    ASSERT_TRUE(e.has_value());
    EXPECT_EQ(e->field(), "y_error");
  }
}

TEST(Fit, OnePointIsRejected) {
  // Source: planck_fit.h (fewer points than free parameters).
  const SpectrumInput input = black_body({500.0}, "nm", "W/m2/nm", 5800.0, 1e-15, 0.01, nullptr);
  const auto e = input_error_of(input);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "x");
}

TEST(Fit, NoPositiveValueIsRejected) {
  // Source: spectrum.cpp (a black body is positive everywhere).
  SpectrumInput input = valid_input();
  for (double& y : input.y) y = -y;
  const auto e = input_error_of(input);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "y");
}

TEST(Fit, BadUnitsAreRejected) {
  // Source: units.h (fields x_unit / y_unit).
  SpectrumInput input = valid_input();
  input.x_unit = "furlong";
  auto e = input_error_of(input);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "x_unit");
  input = valid_input();
  input.y_unit = "nm";
  e = input_error_of(input);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "y_unit");
}

TEST(Fit, BadTemperatureBoundsAreRejected) {
  // Source: planck_fit.h (field options.temperature_bounds).
  const std::vector<std::pair<double, double>> bad = {{0.0, 100.0}, {-5.0, 100.0}, {100.0, 100.0}, {200.0, 100.0},
                                                      {1.0, HUGE_VAL}, {std::nan(""), 100.0}};
  for (const auto& [lo, hi] : bad) {
    PlanckFitOptions options;
    options.min_temperature_k = lo;
    options.max_temperature_k = hi;
    const auto e = input_error_of(valid_input(), options);
    ASSERT_TRUE(e.has_value()) << lo << " " << hi;
    EXPECT_EQ(e->field(), "options.temperature_bounds") << lo << " " << hi;  // planck_fit.h
  }
}

TEST(Fit, BadLossScaleIsRejected) {
  // Source: planck_fit.h (field options.loss).
  PlanckFitOptions options;
  options.loss = RobustLoss::kHuber;
  options.loss_scale = 0.0;
  const auto e = input_error_of(valid_input(), options);
  ASSERT_TRUE(e.has_value());
  EXPECT_EQ(e->field(), "options.loss.scale");
}

TEST(Fit, BadDistanceIsRejected) {
  // Source: derived_quantities.h (field options.distance).
  const Outcome o = run(valid_input());
  for (const Distance& d : {Distance{0.0, 0.0}, Distance{-1.0, 0.0}, Distance{1e18, -0.1}}) {
    try {
      planckton::derive_quantities(o.fit, o.spectrum.y_unit, d);
      ADD_FAILURE() << "no InputError for " << d.metres << " " << d.relative_error;
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), "options.distance");  // derived_quantities.h
    }
  }
}

// ---------------------------------------------------------------------------------------------
// (g) Derived quantities.

void expect_ordered_intervals(const planckton::Estimate& e, const char* what) {
  SCOPED_TRACE(what);
  ASSERT_TRUE(e.error.has_value());
  ASSERT_TRUE(e.interval_68.has_value());
  ASSERT_TRUE(e.interval_95.has_value());
  const auto& i68 = *e.interval_68;
  const auto& i95 = *e.interval_95;
  EXPECT_GT(*e.error, 0.0);
  EXPECT_GT(i95[0], 0.0);
  EXPECT_LT(i95[0], i68[0]);
  EXPECT_LT(i68[0], e.value);
  EXPECT_LT(e.value, i68[1]);
  EXPECT_LT(i68[1], i95[1]);
  // Gaussian in the logarithm: symmetric in log around the value (derived_quantities.h).
  EXPECT_NEAR(std::log(i68[1] / e.value), std::log(e.value / i68[0]), 1e-12);
  EXPECT_NEAR(std::log(i95[1] / e.value), 2.0 * std::log(i68[1] / e.value), 1e-12);
  EXPECT_TRUE(RelativelyNear(*e.error, e.value * std::log(i68[1] / e.value), 1e-9));
}

TEST(Fit, DerivedQuantitiesFollowFromTheFit) {
  // Source: derived_quantities.h method table; formulas from memory as marked.
  std::mt19937_64 rng(77);
  const double d_m = 10.0 * k::kParsec;
  const Distance distance{d_m, 0.05};
  const Outcome o =
      run(black_body(linspace(350.0, 1000.0, 120), "nm", "W/m2/nm", 5800.0, 1e-15, 0.02, &rng), {}, distance);
  ASSERT_TRUE(o.fit.covariance_available);
  const double t = o.fit.temperature_k;
  const double omega = o.fit.scale;
  const auto& d = o.derived;
  const double pi = std::numbers::pi;

  EXPECT_TRUE(RelativelyNear(d.temperature_k.value, t, 1e-14));
  EXPECT_TRUE(RelativelyNear(d.scale.value, omega, 1e-14));
  EXPECT_TRUE(RelativelyNear(*d.temperature_k.error, t * o.fit.temperature_log_sigma(), 1e-12));

  ASSERT_TRUE(d.bolometric_flux_w_m2.has_value());
  const double flux = omega * k::kStefanBoltzmann * std::pow(t, 4) / pi;  // from memory: F = Omega sigma T^4 / pi
  EXPECT_TRUE(RelativelyNear(d.bolometric_flux_w_m2->value, flux, 1e-12));
  EXPECT_FALSE(d.bolometric_radiance_w_m2_sr.has_value());

  ASSERT_TRUE(d.angular_radius_rad.has_value());
  const double theta = std::sqrt(omega / pi);  // from memory: Omega = pi theta^2 for a small disc
  EXPECT_TRUE(RelativelyNear(d.angular_radius_rad->value, theta, 1e-12));

  ASSERT_TRUE(d.radius_m.has_value());
  EXPECT_TRUE(RelativelyNear(d.radius_m->value, theta * d_m, 1e-12));  // from memory: R = theta d
  ASSERT_TRUE(d.luminosity_w.has_value());
  EXPECT_TRUE(RelativelyNear(d.luminosity_w->value, 4.0 * pi * d_m * d_m * flux, 1e-12));  // from memory: L = 4 pi d^2 F

  // Propagation in logs (derived_quantities.h): var ln F = 16 C_TT + 8 C_TS + C_SS.
  const auto& c = o.fit.log_covariance;
  EXPECT_TRUE(RelativelyNear(*d.bolometric_flux_w_m2->error, flux * std::sqrt(16 * c[0] + 8 * c[1] + c[3]), 1e-10));
  EXPECT_TRUE(RelativelyNear(*d.angular_radius_rad->error, theta * 0.5 * o.fit.scale_log_sigma(), 1e-10));
  // The distance's 5 % adds in quadrature to the radius' relative error.
  EXPECT_TRUE(RelativelyNear(*d.radius_m->error / d.radius_m->value,
                             std::sqrt(0.25 * c[3] + 0.05 * 0.05), 1e-10));
  EXPECT_TRUE(RelativelyNear(*d.luminosity_w->error / d.luminosity_w->value,
                             std::sqrt(16 * c[0] + 8 * c[1] + c[3] + 4 * 0.05 * 0.05), 1e-10));

  ASSERT_EQ(d.peaks.size(), planckton::peak_conventions().size());
  for (const auto& peak : d.peaks) {
    SCOPED_TRACE(peak.id);
    const auto it = std::find_if(planckton::peak_conventions().begin(), planckton::peak_conventions().end(),
                                 [&](const auto& pc) { return pc.id == peak.id; });
    ASSERT_NE(it, planckton::peak_conventions().end());
    EXPECT_TRUE(RelativelyNear(peak.reduced_frequency, planckton::peak_reduced_frequency(it->exponent), 1e-15));
    EXPECT_TRUE(RelativelyNear(peak.frequency_hz.value, planckton::peak_frequency(it->exponent, t), 1e-12));
    EXPECT_TRUE(RelativelyNear(peak.wavelength_m.value, k::kSpeedOfLight / planckton::peak_frequency(it->exponent, t),
                               1e-12));
    expect_ordered_intervals(peak.frequency_hz, "frequency");
    expect_ordered_intervals(peak.wavelength_m, "wavelength");
    // The wavelength interval is the image of the frequency interval under lambda = c / nu.
    EXPECT_TRUE(RelativelyNear((*peak.wavelength_m.interval_95)[0],
                               k::kSpeedOfLight / (*peak.frequency_hz.interval_95)[1], 1e-12));
  }
  const auto wavelength_peak = std::find_if(d.peaks.begin(), d.peaks.end(), [](const auto& p) { return p.id == "wavelength"; });
  ASSERT_NE(wavelength_peak, d.peaks.end());
  EXPECT_TRUE(RelativelyNear(wavelength_peak->wavelength_m.value, planckton::peak_wavelength(5.0, t), 1e-12));

  expect_ordered_intervals(d.temperature_k, "temperature");
  expect_ordered_intervals(d.scale, "scale");
  expect_ordered_intervals(*d.bolometric_flux_w_m2, "bolometric flux");
  expect_ordered_intervals(*d.angular_radius_rad, "angular radius");
  expect_ordered_intervals(*d.radius_m, "radius");
  expect_ordered_intervals(*d.luminosity_w, "luminosity");
}

TEST(Fit, IntensityInputGivesRadianceNotFluxOrSize) {
  // Source: derived_quantities.h (intensity input: scale is an emissivity).
  std::mt19937_64 rng(78);
  const Outcome o = run(black_body(linspace(350.0, 1000.0, 60), "nm", "W/m2/sr/nm", 5800.0, 0.7, 0.02, &rng), {},
                        Distance{1e17, 0.0});
  EXPECT_TRUE(o.spectrum.y_unit.per_steradian);
  ASSERT_TRUE(o.derived.bolometric_radiance_w_m2_sr.has_value());
  EXPECT_TRUE(RelativelyNear(o.derived.bolometric_radiance_w_m2_sr->value,
                             o.fit.scale * planckton::planck_integrated_radiance(o.fit.temperature_k), 1e-12));
  EXPECT_FALSE(o.derived.bolometric_flux_w_m2.has_value());
  EXPECT_FALSE(o.derived.angular_radius_rad.has_value());
  EXPECT_FALSE(o.derived.radius_m.has_value());
  EXPECT_FALSE(o.derived.luminosity_w.has_value());
  EXPECT_LT(std::abs(std::log(o.fit.scale / 0.7)), 3.0 * o.fit.scale_log_sigma());  // emissivity recovered
}

TEST(Fit, WithoutDistanceThereIsNoRadiusOrLuminosity) {
  // Source: derived_quantities.h.
  const Outcome o = run(valid_input());
  EXPECT_TRUE(o.derived.angular_radius_rad.has_value());
  EXPECT_FALSE(o.derived.radius_m.has_value());
  EXPECT_FALSE(o.derived.luminosity_w.has_value());
}

// ---------------------------------------------------------------------------------------------
// (h) A relative spectral power distribution: CIE standard illuminant A.

TEST(Fit, CieIlluminantA) {
  // CIE 015:2018: S_A(lambda) = 100 (560/lambda)^5 (exp(1.435e7 / (2848 * 560)) - 1) /
  //                                               (exp(1.435e7 / (2848 lambda)) - 1), lambda in nm.
  // It is Planck's law with c2 = 1.435e-2 m K at 2848 K, i.e. with today's c2 at 2848 c2 / 1.435e-2 K.
  SpectrumInput input;
  input.x_unit = "nm";
  input.y_unit = "relative/nm";
  for (double lambda = 380.0; lambda <= 780.0; lambda += 5.0) {
    input.x.push_back(lambda);
    input.y.push_back(100.0 * std::pow(560.0 / lambda, 5) * std::expm1(1.435e7 / (2848.0 * 560.0)) /
                      std::expm1(1.435e7 / (2848.0 * lambda)));
  }
  ASSERT_EQ(input.x.size(), 81u);
  const Outcome o = run(input);
  ASSERT_TRUE(o.fit.converged);
  EXPECT_TRUE(o.spectrum.y_unit.relative);
  const double expected = 2848.0 * k::kSecondRadiation / 1.435e-2;  // ~ 2855.5 K
  EXPECT_NEAR(o.fit.temperature_k, expected, 0.01);  // CIE 015:2018 formula
  EXPECT_NEAR(expected, 2855.5, 0.05);  // common practice: the illuminant's temperature on today's scale
  // A relative spectrum has no physical scale: no bolometric flux or size.
  EXPECT_FALSE(o.derived.bolometric_flux_w_m2.has_value());
  EXPECT_FALSE(o.derived.angular_radius_rad.has_value());
  EXPECT_FALSE(o.derived.peaks.empty());
}

// ---------------------------------------------------------------------------------------------
// Other conventions fit as well.

TEST(Fit, PhotonAndFrequencyConventionsRecoverTheTemperature) {
  // Source: common practice (3 sigma), in each convention of planck.h.
  struct Case {
    const char* x_unit;
    double lo, hi;
    const char* y_unit;
  };
  for (const Case& c : {Case{"Angstrom", 3000.0, 10000.0, "photon/s/cm2/Angstrom"}, Case{"THz", 300.0, 900.0, "W/m2/Hz"},
                        Case{"eV", 1.2, 4.0, "W/m2/eV"}, Case{"cm-1", 10000.0, 30000.0, "photon/s/cm2/cm-1"}}) {
    SCOPED_TRACE(c.y_unit);
    std::mt19937_64 rng(11);
    const Outcome o = run(black_body(linspace(c.lo, c.hi, 80), c.x_unit, c.y_unit, 5800.0, 1e-15, 0.01, &rng));
    ASSERT_TRUE(o.fit.converged);
    EXPECT_LT(std::abs(o.fit.temperature_k - 5800.0), 3.0 * temperature_sigma(o)) << o.fit.temperature_k;
  }
}

TEST(Fit, UnsortedInputGivesTheSameFit) {
  // Source: common practice (a least-squares fit does not depend on the order of the points).
  std::mt19937_64 rng(12);
  SpectrumInput sorted = black_body(linspace(350.0, 1000.0, 100), "nm", "W/m2/nm", 5800.0, 1e-15, 0.02, &rng);
  SpectrumInput shuffled = sorted;
  std::vector<std::size_t> order(sorted.x.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::shuffle(order.begin(), order.end(), rng);
  for (std::size_t i = 0; i < order.size(); ++i) {
    shuffled.x[i] = sorted.x[order[i]];
    shuffled.y[i] = sorted.y[order[i]];
    shuffled.y_error[i] = sorted.y_error[order[i]];
  }
  EXPECT_TRUE(RelativelyNear(run(shuffled).fit.temperature_k, run(sorted).fit.temperature_k, 1e-8));
}

TEST(Fit, WideTemperatureRangeStartsInTheRightBasin) {
  // Source: planck_fit.h step 1 (the start grid spans every temperature the data constrain).
  // Far from the default grid's centre: 3 K (microwave) and 1e6 K (X-ray), both around their peak.
  std::mt19937_64 rng(13);
  for (const auto& [lo, hi, x_unit, t] : {std::tuple{30.0, 600.0, "GHz", 3.0}, std::tuple{0.05, 1.0, "keV", 1e6}}) {
    SCOPED_TRACE(t);
    const Outcome o = run(black_body(linspace(lo, hi, 80), x_unit, "Jy", t, 1e-12, 0.01, &rng));
    ASSERT_TRUE(o.fit.converged);
    EXPECT_LT(std::abs(o.fit.temperature_k - t), 3.0 * temperature_sigma(o)) << o.fit.temperature_k;
  }
}

// ---------------------------------------------------------------------------------------------
// (i) Determinism.

TEST(Fit, SameInputGivesBitIdenticalResults) {
  // Source: common practice (reproducible results for the same input).
  std::mt19937_64 rng(2718);
  const SpectrumInput input = black_body(linspace(350.0, 1000.0, 200), "nm", "W/m2/nm", 5800.0, 1e-15, 0.02, &rng);
  const Outcome a = run(input);
  const Outcome b = run(input);
  EXPECT_EQ(a.fit.temperature_k, b.fit.temperature_k);  // bit-identical, not merely close
  EXPECT_EQ(a.fit.scale, b.fit.scale);
  EXPECT_EQ(a.fit.log_covariance, b.fit.log_covariance);
  PlanckFitOptions cauchy;
  cauchy.loss = RobustLoss::kCauchy;
  EXPECT_EQ(run(input, cauchy).fit.temperature_k, run(input, cauchy).fit.temperature_k);
}

}  // namespace

// ceres_settings::covariance (J^T J from ceres::Problem::Evaluate, inverted by Eigen) against Ceres'
// own ceres::Covariance (DENSE_SVD) on the same problem, with and without a robust loss: the fits
// compute their own so that a singular matrix is not a line on the log, and must lose nothing.
struct ExponentialResidual {
  double x, y;
  template <class T>
  bool operator()(const T* p, T* r) const {
    r[0] = T(y) - p[0] * exp(-p[1] * T(x));
    return true;
  }
};

TEST(Fit, CovarianceAgreesWithCeresCovariance) {
  using Exponential = ExponentialResidual;
  for (bool robust : {false, true}) {
    double p[2] = {2.0, 0.5};
    ceres::Problem::Options options;
    ceres::Problem problem(options);
    std::mt19937_64 rng(5);
    std::normal_distribution<double> normal(0.0, 0.05);
    for (int i = 0; i < 40; ++i) {
      const double x = 0.2 * i;
      auto* cost = new ceres::AutoDiffCostFunction<Exponential, 1, 2>(new Exponential{x, 2.0 * std::exp(-0.5 * x) + normal(rng)});
      problem.AddResidualBlock(cost, robust ? new ceres::CauchyLoss(0.05) : nullptr, p);
    }
    ceres::Solver::Summary summary;
    ceres::Solve(planckton::ceres_settings::solver_options(100, 10.0), &problem, &summary);
    std::vector<double> ours;
    ASSERT_TRUE(planckton::ceres_settings::covariance(problem, {p}, ours));
    ceres::Covariance::Options covariance_options;
    covariance_options.algorithm_type = ceres::DENSE_SVD;
    ceres::Covariance reference(covariance_options);
    ASSERT_TRUE(reference.Compute(std::vector<std::pair<const double*, const double*>>{{p, p}}, &problem));
    double theirs[4];
    ASSERT_TRUE(reference.GetCovarianceBlock(p, p, theirs));
    for (int k = 0; k < 4; ++k) EXPECT_NEAR(ours[static_cast<std::size_t>(k)], theirs[k], 1e-9 * std::abs(theirs[0])) << robust << k;
  }
}
