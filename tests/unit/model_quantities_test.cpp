// Derived quantities of the model family (science/model_quantities.h): against the plain Planck
// fit's closed forms, against independent root finds and integrals written out here, and the
// frame bookkeeping of a redshift.
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>

#include "science/constants.h"
#include "science/derived_quantities.h"
#include "science/model_fit.h"
#include "science/model_quantities.h"
#include "science/peaks.h"
#include "science/planck.h"
#include "science/planck_fit.h"
#include "test_support.h"

namespace planckton {
namespace {

using testing::RelativelyNear;
using testing::simulate_spectrum;

const PeakEstimate& peak(const std::vector<PeakEstimate>& peaks, const std::string& id) {
  for (const PeakEstimate& p : peaks) {
    if (p.id == id) return p;
  }
  throw std::out_of_range(id);
}

// Positive root of n (1 - e^-x) = x by bisection: independent of peaks.cpp's Newton iteration.
double bisect_peak_equation(double n) {
  double lo = 1e-6, hi = n + 1.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    (n * (1.0 - std::exp(-mid)) - mid > 0.0 ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

TEST(ModelQuantities, PlanckKindAgreesWithTheClosedFormsOfThePlanckFit) {
  const MeasuredSpectrum s =
      simulate_spectrum([](double nu) { return 3e-18 * planck_per_frequency(nu, 5200.0); }, 0.35, 2.0, 200, 0.01, 1);
  const Distance distance{3.0857e18, 0.05};
  const PlanckFitResult plain = fit_planck(s, {});
  const DerivedQuantities reference = derive_quantities(plain, s.y_unit, distance);
  const ModelFitResult fit = fit_model(model_data(s), {}, {});
  const ModelQuantities q = derive_model_quantities(fit, s.y_unit, distance, std::nullopt);
  for (const PeakEstimate& expected : reference.peaks) {
    const PeakEstimate& got = peak(q.peaks, expected.id);
    EXPECT_TRUE(RelativelyNear(got.frequency_hz.value, expected.frequency_hz.value, 1e-7)) << expected.id;
    EXPECT_TRUE(RelativelyNear(*got.frequency_hz.error, *expected.frequency_hz.error, 1e-3)) << expected.id;
    EXPECT_TRUE(RelativelyNear(got.reduced_frequency, expected.reduced_frequency, 1e-9)) << expected.id;
  }
  EXPECT_TRUE(RelativelyNear(q.bolometric_flux_w_m2->value, reference.bolometric_flux_w_m2->value, 1e-6));
  EXPECT_TRUE(RelativelyNear(*q.bolometric_flux_w_m2->error, *reference.bolometric_flux_w_m2->error, 1e-3));
  EXPECT_TRUE(RelativelyNear(q.angular_radius_rad->value, reference.angular_radius_rad->value, 1e-6));
  EXPECT_TRUE(RelativelyNear(*q.radius_m->error, *reference.radius_m->error, 1e-3));
  EXPECT_TRUE(RelativelyNear(*q.luminosity_w->error, *reference.luminosity_w->error, 1e-3));
  EXPECT_TRUE(RelativelyNear(*q.parameters[0].error, *reference.temperature_k.error, 1e-3));
}

TEST(ModelQuantities, ThinDustPeaksSolveTheShiftedWienEquation) {
  for (double beta : {0.0, 1.0, 1.5, 2.0, 2.5}) {
    ModelSpec spec;
    spec.kind = ModelKind::kModifiedBlackBody;
    ModelFitOptions options;
    options.controls["beta"].fixed = beta;
    const double t = 25.0;
    const MeasuredSpectrum s = simulate_spectrum(
        [&](double nu) { return 1e-9 * std::pow(nu / 1e12, beta) * planck_per_frequency(nu, t); }, 40.0, 1000.0, 80, 0.01, 2);
    const ModelFitResult fit = fit_model(model_data(s), spec, options);
    const ModelQuantities q = derive_model_quantities(fit, s.y_unit, std::nullopt, std::nullopt);
    const double fitted_t = fit.parameter("temperature").value;
    // nu^(3 + beta) / (e^x - 1) peaks at (3 + beta)(1 - e^-x) = x; per wavelength 5 + beta.
    const PeakEstimate& f = peak(q.peaks, "frequency");
    EXPECT_TRUE(RelativelyNear(f.reduced_frequency, bisect_peak_equation(3.0 + beta), 1e-10)) << beta;
    EXPECT_TRUE(RelativelyNear(f.frequency_hz.value, bisect_peak_equation(3.0 + beta) * fitted_t / constants::kPlanckOverBoltzmann, 1e-10));
    EXPECT_TRUE(RelativelyNear(peak(q.peaks, "wavelength").reduced_frequency, bisect_peak_equation(5.0 + beta), 1e-10));
  }
}

TEST(ModelQuantities, GeneralOpacityPeakAndFluxMatchBruteForce) {
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  spec.opacity = DustOpacity::kGeneral;
  const double t = 40.0, beta = 2.0, nu_t = 1.5e12, omega = 1e-10;
  const auto f_nu = [&](double nu) { return omega * -std::expm1(-std::pow(nu / nu_t, beta)) * planck_per_frequency(nu, t); };
  const MeasuredSpectrum s = simulate_spectrum(f_nu, 30.0, 2000.0, 200, 1e-4, 3);
  const ModelFitResult fit = fit_model(model_data(s), spec, {});
  const ModelQuantities q = derive_model_quantities(fit, s.y_unit, std::nullopt, std::nullopt);
  // Brute force on the true curve: the maximum of F_nu on a fine grid, and the integral by a fine
  // trapezoid rule in nu.
  double best_nu = 0.0, best = 0.0, integral = 0.0, previous_nu = 1e9, previous_f = f_nu(1e9);
  for (double nu = 1e9; nu < 1e14; nu *= 1.0001) {
    const double f = f_nu(nu);
    if (f > best) { best = f; best_nu = nu; }
    integral += 0.5 * (f + previous_f) * (nu - previous_nu);
    previous_nu = nu;
    previous_f = f;
  }
  EXPECT_TRUE(RelativelyNear(peak(q.peaks, "frequency").frequency_hz.value, best_nu, 2e-3));
  EXPECT_TRUE(RelativelyNear(q.bolometric_flux_w_m2->value, integral, 2e-3));
  ASSERT_TRUE(peak(q.peaks, "frequency").frequency_hz.error);
}

TEST(ModelQuantities, ThinDustFluxAndMassFollowTheirClosedForms) {
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  const double t = 18.0, beta = 1.8, omega = 3e-9;
  const auto f_nu = [&](double nu) { return omega * std::pow(nu / 1e12, beta) * planck_per_frequency(nu, t); };
  const MeasuredSpectrum s = simulate_spectrum(f_nu, 50.0, 1500.0, 100, 1e-5, 4);
  const ModelFitResult fit = fit_model(model_data(s), spec, {});
  // kappa = 0.1 m^2/kg at 1 THz (a value of the order used for dense cores; illustrative only).
  const Distance distance{4.6e18, 0.1};
  const ModelQuantities q = derive_model_quantities(fit, s.y_unit, distance, DustOpacityInput{0.1, 1e12});
  double integral = 0.0, previous_nu = 1e9, previous_f = f_nu(1e9);
  for (double nu = 1e9; nu < 1e14; nu *= 1.0001) {
    const double f = f_nu(nu);
    integral += 0.5 * (f + previous_f) * (nu - previous_nu);
    previous_nu = nu;
    previous_f = f;
  }
  EXPECT_TRUE(RelativelyNear(q.bolometric_flux_w_m2->value, integral, 1e-4));
  // Hildebrand 1983: M = S_nu d^2 / (kappa_nu B_nu(T)) at any nu; at nu = nu_kappa = nu_0 it is
  // Omega d^2 / kappa_0.
  const double fitted_omega = fit.parameter("scale").value;
  EXPECT_TRUE(RelativelyNear(q.dust_mass_kg->value, fitted_omega * distance.metres * distance.metres / 0.1, 1e-9));
  // The distance's 10 % enters twice (d^2).
  EXPECT_GT(*q.dust_mass_kg->error / q.dust_mass_kg->value, 0.19);
}

TEST(ModelQuantities, TwoComponentsHaveTheirOwnFluxesAndPeaks) {
  ModelSpec spec;
  spec.kind = ModelKind::kTwoTemperature;
  const double t1 = 3500.0, s1 = 4e-18, t2 = 11000.0, s2 = 2e-20;
  const auto f_nu = [&](double nu) { return s1 * planck_per_frequency(nu, t1) + s2 * planck_per_frequency(nu, t2); };
  const MeasuredSpectrum s = simulate_spectrum(f_nu, 0.2, 5.0, 300, 1e-4, 5);
  const ModelFitResult fit = fit_model(model_data(s), spec, {});
  const ModelQuantities q = derive_model_quantities(fit, s.y_unit, std::nullopt, std::nullopt);
  ASSERT_EQ(q.components.size(), 2u);
  const double sb = constants::kStefanBoltzmann / std::numbers::pi;
  EXPECT_TRUE(RelativelyNear(q.components[0].bolometric_flux.value, s1 * sb * std::pow(t1, 4), 1e-3));
  EXPECT_TRUE(RelativelyNear(q.components[1].bolometric_flux.value, s2 * sb * std::pow(t2, 4), 1e-3));
  EXPECT_NEAR(q.components[0].share + q.components[1].share, 1.0, 1e-12);
  EXPECT_TRUE(RelativelyNear(peak(q.components[1].peaks, "frequency").frequency_hz.value,
                             peak_frequency(3.0, fit.parameter("temperature_2").value), 1e-10));
  double best_nu = 0.0, best = 0.0;
  for (double nu = 1e13; nu < 1e16; nu *= 1.00001) {
    if (const double f = f_nu(nu); f > best) { best = f; best_nu = nu; }
  }
  EXPECT_TRUE(RelativelyNear(peak(q.peaks, "frequency").frequency_hz.value, best_nu, 1e-3));
}

TEST(ModelQuantities, RedshiftSeparatesRestAndObservedFrames) {
  ModelSpec spec;
  spec.redshift = 1.5;
  const double t_rest = 12000.0, omega = 1e-22;
  const MeasuredSpectrum s = simulate_spectrum([&](double nu) { return omega * planck_per_frequency(nu, t_rest / 2.5); }, 0.4,
                                         3.0, 100, 1e-3, 6);
  const ModelFitResult fit = fit_model(model_data(s), spec, {});
  const ModelQuantities q = derive_model_quantities(fit, s.y_unit, std::nullopt, std::nullopt);
  const double t = fit.parameter("temperature").value;
  ASSERT_EQ(q.observed_temperatures_k.size(), 1u);
  EXPECT_TRUE(RelativelyNear(q.observed_temperatures_k[0].value, t / 2.5, 1e-12));
  EXPECT_TRUE(RelativelyNear(peak(q.rest_frame_peaks, "frequency").frequency_hz.value, peak_frequency(3.0, t), 1e-10));
  EXPECT_TRUE(RelativelyNear(peak(q.peaks, "frequency").frequency_hz.value, peak_frequency(3.0, t / 2.5), 1e-10));
  // Observed bolometric flux: the observed curve is a black body at T / (1 + z), same solid angle.
  EXPECT_TRUE(RelativelyNear(q.bolometric_flux_w_m2->value,
                             fit.parameter("scale").value * constants::kStefanBoltzmann * std::pow(t / 2.5, 4) / std::numbers::pi, 1e-10));
}

TEST(ModelQuantities, DilutionFactorCarriesTheAngularRadiusError) {
  ModelSpec spec;
  spec.kind = ModelKind::kDilutedPlanck;
  const double theta = 2e-11, zeta = 0.6, t = 9000.0;
  const MeasuredSpectrum s = simulate_spectrum(
      [&](double nu) { return std::numbers::pi * theta * theta * zeta * zeta * planck_per_frequency(nu, t); }, 0.33, 1.0, 200,
      0.001, 7);
  spec.angular_radius = AngularRadius{theta, 0.0};
  const double exact = *derive_model_quantities(fit_model(model_data(s), spec, {}), s.y_unit, std::nullopt, std::nullopt)
                            .parameters[1].error;
  spec.angular_radius = AngularRadius{theta, 0.05};
  const ModelQuantities q = derive_model_quantities(fit_model(model_data(s), spec, {}), s.y_unit, std::nullopt, std::nullopt);
  const double widened = *q.parameters[1].error;
  EXPECT_TRUE(RelativelyNear(widened, std::hypot(exact, 0.05 * q.parameters[1].value), 1e-6));
  EXPECT_TRUE(RelativelyNear(q.angular_radius_rad->value, theta, 1e-15));
}

}  // namespace
}  // namespace planckton
