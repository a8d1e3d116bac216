// The model family (science/model_fit.h): recovery of simulated sources for every model, on spectra
// and on photometry, parameter control, and the degenerate cases. The simulations are written out
// here from the formulas (planck.h's Planck law, extinction.h's laws), not through model_value, so
// that a mistake in the model would show as a failed recovery.
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>

#include "science/constants.h"
#include "science/extinction.h"
#include "science/input_error.h"
#include "science/model_fit.h"
#include "science/passband.h"
#include "science/photometry.h"
#include "science/planck.h"
#include "science/planck_fit.h"
#include "science/synthetic_photometry.h"
#include "test_support.h"

namespace planckton {
namespace {

using testing::RelativelyNear;
using testing::simulate_spectrum;

constexpr double kC = constants::kSpeedOfLight;

// A shape F_nu(nu) of the true source, in W m^-2 Hz^-1.
using Source = std::function<double(double)>;

MeasuredPhotometry simulate_photometry(const Source& source, const std::vector<std::string>& ids, double relative_error,
                                       unsigned seed) {
  std::mt19937 random(seed);
  std::normal_distribution<double> normal;
  PhotometryInput input;
  for (const std::string& id : ids) {
    const Passband& b = *find_builtin_passband(id);
    const double f_nu = make_band_quadrature(b, b.quoted).apply(source);
    BandMeasurementInput m;
    m.band = &b;
    m.unit = "Jy";
    m.value = f_nu / kJansky * (1.0 + relative_error * normal(random));
    m.error = f_nu / kJansky * relative_error;
    input.measurements.push_back(m);
  }
  return prepare_photometry(input);
}

double reddening(double nu, double ebv, double r_v = 3.1, ExtinctionLaw law = ExtinctionLaw::kCardelli1989) {
  return std::pow(10.0, -0.4 * ebv * r_v * extinction_ratio(law, kC / nu, r_v));
}

// The parameter within `k` sigma of the truth (in the solver's space: relative for positive ones).
void expect_recovered(const ModelFitResult& fit, const std::string& name, double truth, double k = 3.0) {
  const FittedParameter& p = fit.parameter(name);
  ASSERT_TRUE(p.internal_sigma) << name;
  const double distance = p.info.logarithmic ? std::abs(p.internal - p.info.internal(truth)) : std::abs(p.value - truth);
  EXPECT_LT(distance, k * *p.internal_sigma) << name << " = " << p.value << ", truth " << truth << ", sigma(u) "
                                             << *p.internal_sigma;
}

std::string warning_codes(const ModelFitResult& fit) {
  std::string codes;
  for (const FitWarning& w : fit.warnings) codes += w.code + " ";
  return codes;
}

bool has_warning(const ModelFitResult& fit, const std::string& code) {
  return std::any_of(fit.warnings.begin(), fit.warnings.end(), [&](const FitWarning& w) { return w.code == code; });
}

void expect_finite(const ModelFitResult& fit) {
  for (const FittedParameter& p : fit.parameters) EXPECT_TRUE(std::isfinite(p.value)) << p.info.name;
  for (double c : fit.covariance) EXPECT_TRUE(std::isfinite(c));
  for (const ItemFit& item : fit.items) {
    EXPECT_TRUE(std::isfinite(item.model));
    EXPECT_TRUE(std::isfinite(item.residual));
  }
}

const std::vector<std::string> kFarInfrared = {"mips-70", "pacs-100", "pacs-160", "spire-250", "spire-350", "spire-500"};
const std::vector<std::string> kOpticalInfrared = {"johnson-u", "johnson-b", "johnson-v", "cousins-r", "cousins-i",
                                                   "2mass-j",   "2mass-h",   "2mass-ks"};

TEST(ModelFit, PlanckKindMatchesThePlanckFit) {
  const double t = 6200.0, omega = 2e-18;
  const MeasuredSpectrum s =
      simulate_spectrum([&](double nu) { return omega * planck_per_frequency(nu, t); }, 0.35, 2.0, 300, 0.01, 1);
  const PlanckFitResult reference = fit_planck(s, {});
  const ModelFitResult fit = fit_model(model_data(s), {}, {});
  ASSERT_TRUE(fit.converged);
  EXPECT_TRUE(RelativelyNear(fit.parameter("temperature").value, reference.temperature_k, 1e-7));
  EXPECT_TRUE(RelativelyNear(fit.parameter("scale").value, reference.scale, 1e-6));
  ASSERT_TRUE(fit.covariance_available);
  EXPECT_TRUE(RelativelyNear(fit.covariance_at(0, 0), reference.log_covariance[0], 1e-5));
  EXPECT_TRUE(RelativelyNear(fit.covariance_at(0, 1), reference.log_covariance[1], 1e-5));
  EXPECT_TRUE(RelativelyNear(*fit.chi_square, *reference.chi_square, 1e-6));
  EXPECT_EQ(fit.degrees_of_freedom, reference.degrees_of_freedom);
}

TEST(ModelFit, ReddenedHotStarGivesTemperatureAndColourExcess) {
  const double t = 15000.0, omega = 1e-20, ebv = 0.3;
  ModelSpec spec;
  spec.extinction = ExtinctionSpec{ExtinctionLaw::kCardelli1989, 3.1};
  const Source source = [&](double nu) { return omega * planck_per_frequency(nu, t) * reddening(nu, ebv); };
  const MeasuredSpectrum s = simulate_spectrum(source, 0.15, 2.5, 400, 0.01, 2);
  const ModelFitResult fit = fit_model(model_data(s), spec, {});
  ASSERT_TRUE(fit.converged) << fit.solver_message;
  expect_recovered(fit, "temperature", t);
  expect_recovered(fit, "color_excess", ebv);
  expect_recovered(fit, "scale", omega);
  // The plain curve cannot describe it.
  const ModelFitResult plain = fit_model(model_data(s), {}, {});
  EXPECT_GT(*plain.chi_square, 10.0 * *fit.chi_square);
}

TEST(ModelFit, ReddenedStarThroughBandsWithEveryLaw) {
  for (ExtinctionLaw law : {ExtinctionLaw::kCardelli1989, ExtinctionLaw::kODonnell1994, ExtinctionLaw::kFitzpatrick1999}) {
    const double t = 9000.0, omega = 3e-19, ebv = 0.5;
    ModelSpec spec;
    spec.extinction = ExtinctionSpec{law, 3.1};
    const Source source = [&](double nu) { return omega * planck_per_frequency(nu, t) * reddening(nu, ebv, 3.1, law); };
    const MeasuredPhotometry data = simulate_photometry(source, kOpticalInfrared, 0.01, 3);
    const ModelFitResult fit = fit_model(model_data(data), spec, {});
    ASSERT_TRUE(fit.converged) << extinction_law_info(law).id;
    expect_recovered(fit, "temperature", t);
    expect_recovered(fit, "color_excess", ebv);
  }
}

TEST(ModelFit, StarburstAttenuationFollowsCalzetti) {
  const double t = 20000.0, omega = 1e-21, ebv = 0.2, r_v = 4.05;
  ModelSpec spec;
  spec.extinction = ExtinctionSpec{ExtinctionLaw::kCalzetti2000, r_v};
  const Source source = [&](double nu) {
    return omega * planck_per_frequency(nu, t) * reddening(nu, ebv, r_v, ExtinctionLaw::kCalzetti2000);
  };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 0.13, 2.1, 300, 0.01, 4)), spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature", t);
  expect_recovered(fit, "color_excess", ebv);
}

TEST(ModelFit, ColdDustCloudGivesTemperatureAndBetaThroughFarInfraredBands) {
  const double t = 18.0, omega = 3e-9, beta = 1.8, nu0 = 1e12;
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  const Source source = [&](double nu) { return omega * std::pow(nu / nu0, beta) * planck_per_frequency(nu, t); };
  const ModelFitResult fit = fit_model(model_data(simulate_photometry(source, kFarInfrared, 0.02, 5)), spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature", t);
  expect_recovered(fit, "beta", beta);
  expect_recovered(fit, "scale", omega);
  // Temperature and beta trade off along a valley (common practice; e.g. Shetty et al. 2009).
  EXPECT_LT(fit.correlation_at(0, 2), -0.5);
}

TEST(ModelFit, GeneralOpacityFormFindsTheTurnover) {
  const double t = 40.0, omega = 1e-10, beta = 2.0, nu_t = 1.5e12;
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  spec.opacity = DustOpacity::kGeneral;
  const Source source = [&](double nu) {
    return omega * -std::expm1(-std::pow(nu / nu_t, beta)) * planck_per_frequency(nu, t);
  };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 30.0, 2000.0, 200, 0.01, 6)), spec, {});
  ASSERT_TRUE(fit.converged) << fit.solver_message;
  expect_recovered(fit, "temperature", t);
  expect_recovered(fit, "beta", beta);
  expect_recovered(fit, "turnover_frequency", nu_t);
}

TEST(ModelFit, TwoTemperatureSourceIsSeparatedAndOrdered) {
  const double t1 = 3500.0, s1 = 4e-18, t2 = 11000.0, s2 = 2e-20;
  ModelSpec spec;
  spec.kind = ModelKind::kTwoTemperature;
  const Source source = [&](double nu) { return s1 * planck_per_frequency(nu, t1) + s2 * planck_per_frequency(nu, t2); };
  const ModelData data = model_data(simulate_spectrum(source, 0.2, 5.0, 400, 0.01, 7));
  const ModelFitResult fit = fit_model(data, spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature_1", t1);
  expect_recovered(fit, "temperature_2", t2);
  expect_recovered(fit, "scale_1", s1);
  expect_recovered(fit, "scale_2", s2);
  EXPECT_LT(fit.parameter("temperature_1").value, fit.parameter("temperature_2").value);
  // Started from the other side (warmer guess first), the labels still follow the temperatures.
  ModelFitOptions crossed;
  crossed.controls["temperature_1"].initial = 11000.0;
  crossed.controls["temperature_2"].initial = 3500.0;
  const ModelFitResult swapped = fit_model(data, spec, crossed);
  EXPECT_TRUE(RelativelyNear(swapped.parameter("temperature_1").value, fit.parameter("temperature_1").value, 1e-6));
  EXPECT_TRUE(has_warning(swapped, "components_reordered"));
}

TEST(ModelFit, TwoTemperaturesThroughBands) {
  const double t1 = 60.0, s1 = 1e-9, t2 = 300.0, s2 = 1e-13;
  ModelSpec spec;
  spec.kind = ModelKind::kTwoTemperature;
  const Source source = [&](double nu) { return s1 * planck_per_frequency(nu, t1) + s2 * planck_per_frequency(nu, t2); };
  const std::vector<std::string> bands = {"wise-w3", "wise-w4", "mips-24", "mips-70", "pacs-100", "pacs-160", "spire-250"};
  const ModelFitResult fit = fit_model(model_data(simulate_photometry(source, bands, 0.02, 8)), spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature_1", t1);
  expect_recovered(fit, "temperature_2", t2);
}

TEST(ModelFit, DilutedPhotosphereWithKnownAngularRadius) {
  const double t = 9000.0, theta = 2e-11, zeta = 0.6;  // rad
  ModelSpec spec;
  spec.kind = ModelKind::kDilutedPlanck;
  spec.angular_radius = AngularRadius{theta, 0.0};
  const Source source = [&](double nu) {
    return std::numbers::pi * theta * theta * zeta * zeta * planck_per_frequency(nu, t);
  };
  const MeasuredSpectrum s = simulate_spectrum(source, 0.33, 1.0, 200, 0.01, 9);
  const ModelFitResult fit = fit_model(model_data(s), spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature", t);
  expect_recovered(fit, "dilution_factor", zeta);
  // Without the angular radius only theta zeta is constrained, and it is what is reported (in mas).
  spec.angular_radius.reset();
  const ModelFitResult product = fit_model(model_data(s), spec, {});
  const double mas = 180.0 / std::numbers::pi * 3600e3;
  expect_recovered(product, "angular_radius_dilution", theta * zeta * mas);
  EXPECT_TRUE(RelativelyNear(product.parameter("temperature").value, fit.parameter("temperature").value, 1e-7));
}

TEST(ModelFit, RedshiftedSourceGivesItsRestFrameTemperature) {
  const double t_rest = 12000.0, omega = 1e-22, z = 1.5;
  ModelSpec spec;
  spec.redshift = z;
  // The observed curve of a black body at z is a black body at T / (1 + z) with the same solid angle.
  const Source source = [&](double nu) { return omega * planck_per_frequency(nu, t_rest / (1.0 + z)); };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 0.4, 3.0, 200, 0.01, 10)), spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature", t_rest);
  expect_recovered(fit, "scale", omega);
}

TEST(ModelFit, RedshiftedDustWithRestFrameExtinctionLaw) {
  // Rest-frame beta and temperature of dust at z = 2 (the reference frequency is rest frame).
  const double t = 35.0, omega = 1e-12, beta = 1.6, z = 2.0, nu0 = 1e12;
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  spec.redshift = z;
  const Source source = [&](double nu) {
    const double rest = nu * (1.0 + z);
    return omega * std::pow(rest / nu0, beta) * planck_per_frequency(nu, t / (1.0 + z));
  };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 100.0, 3000.0, 200, 0.01, 11)), spec, {});
  ASSERT_TRUE(fit.converged);
  expect_recovered(fit, "temperature", t);
  expect_recovered(fit, "beta", beta);
}

TEST(ModelFit, DilutedRedshiftedAndOpticallyThickSourcesThroughBands) {
  const double mas = 180.0 / std::numbers::pi * 3600e3;
  {  // a diluted photosphere with its angular radius known
    ModelSpec spec;
    spec.kind = ModelKind::kDilutedPlanck;
    spec.angular_radius = AngularRadius{2e-11, 0.0};
    const Source source = [](double nu) { return std::numbers::pi * 4e-22 * 0.36 * planck_per_frequency(nu, 9000.0); };
    const ModelFitResult fit = fit_model(model_data(simulate_photometry(source, kOpticalInfrared, 0.01, 19)), spec, {});
    ASSERT_TRUE(fit.converged);
    expect_recovered(fit, "temperature", 9000.0);
    expect_recovered(fit, "dilution_factor", 0.6);
    spec.angular_radius.reset();
    expect_recovered(fit_model(model_data(simulate_photometry(source, kOpticalInfrared, 0.01, 19)), spec, {}),
                     "angular_radius_dilution", 2e-11 * 0.6 * mas);
  }
  {  // a redshifted hot source
    ModelSpec spec;
    spec.redshift = 0.8;
    const Source source = [](double nu) { return 1e-21 * planck_per_frequency(nu, 25000.0 / 1.8); };
    const ModelFitResult fit = fit_model(model_data(simulate_photometry(source, kOpticalInfrared, 0.01, 20)), spec, {});
    ASSERT_TRUE(fit.converged);
    expect_recovered(fit, "temperature", 25000.0);
  }
  {  // warm dust turning optically thick in the far infrared, beta fixed; with six far-infrared bands
     // alone temperature and turnover trade off (the fit warns), so the mid-infrared joins them
    ModelSpec spec;
    spec.kind = ModelKind::kModifiedBlackBody;
    spec.opacity = DustOpacity::kGeneral;
    ModelFitOptions options;
    options.controls["beta"].fixed = 2.0;
    const Source source = [](double nu) {
      return 1e-10 * -std::expm1(-std::pow(nu / 2e12, 2.0)) * planck_per_frequency(nu, 35.0);
    };
    std::vector<std::string> bands = {"wise-w4", "mips-24"};
    bands.insert(bands.end(), kFarInfrared.begin(), kFarInfrared.end());
    const ModelFitResult fit = fit_model(model_data(simulate_photometry(source, bands, 0.01, 21)), spec, options);
    ASSERT_TRUE(fit.converged);
    expect_recovered(fit, "temperature", 35.0);
    expect_recovered(fit, "turnover_frequency", 2e12);
  }
}

TEST(ModelFitControls, FixedBoundedPriorAndInitialParameters) {
  const double t = 18.0, omega = 3e-9, beta = 1.8, nu0 = 1e12;
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  const Source source = [&](double nu) { return omega * std::pow(nu / nu0, beta) * planck_per_frequency(nu, t); };
  const ModelData data = model_data(simulate_photometry(source, kFarInfrared, 0.02, 12));

  ModelFitOptions fixed;
  fixed.controls["beta"].fixed = 2.0;
  const ModelFitResult with_fixed = fit_model(data, spec, fixed);
  EXPECT_EQ(with_fixed.parameter("beta").value, 2.0);
  EXPECT_TRUE(with_fixed.parameter("beta").fixed);
  EXPECT_EQ(with_fixed.free.size(), 2u);
  EXPECT_EQ(with_fixed.degrees_of_freedom, 4);
  // A steeper beta needs a colder temperature to match the same peak.
  EXPECT_LT(with_fixed.parameter("temperature").value, fit_model(data, spec, {}).parameter("temperature").value);

  ModelFitOptions prior;
  prior.controls["beta"].prior = GaussianPrior{1.5, 0.01};
  const ModelFitResult with_prior = fit_model(data, spec, prior);
  EXPECT_NEAR(with_prior.parameter("beta").value, 1.5, 0.03);
  EXPECT_LT(*with_prior.parameter("beta").internal_sigma, 0.0101);
  EXPECT_GT(with_prior.prior_chi_square, 0.0);

  ModelFitOptions bounded;
  bounded.controls["temperature"].bounds = std::array<double, 2>{25.0, 100.0};
  const ModelFitResult at_bound = fit_model(data, spec, bounded);
  EXPECT_NEAR(at_bound.parameter("temperature").value, 25.0, 1e-6);
  EXPECT_TRUE(at_bound.parameter("temperature").at_bound);
  EXPECT_TRUE(has_warning(at_bound, "temperature_at_bound"));

  ModelFitOptions initial;
  initial.controls["temperature"].initial = 60.0;
  initial.controls["beta"].initial = 1.0;
  EXPECT_TRUE(RelativelyNear(fit_model(data, spec, initial).parameter("temperature").value,
                             fit_model(data, spec, {}).parameter("temperature").value, 1e-6));
}

TEST(ModelFitControls, InconsistentControlsNameTheirField) {
  const MeasuredSpectrum s =
      simulate_spectrum([](double nu) { return 1e-18 * planck_per_frequency(nu, 5000.0); }, 0.4, 1.0, 20, 0.01, 13);
  const auto field_of = [&](const ModelSpec& spec, const ModelFitOptions& options) {
    try {
      fit_model(model_data(s), spec, options);
    } catch (const InputError& e) {
      return e.field();
    }
    return std::string("none");
  };
  ModelFitOptions unknown;
  unknown.controls["beta"].fixed = 1.0;
  EXPECT_EQ(field_of({}, unknown), "model.parameters");
  ModelFitOptions outside;
  outside.controls["temperature"].bounds = std::array<double, 2>{100.0, 200.0};
  outside.controls["temperature"].fixed = 5000.0;
  EXPECT_EQ(field_of({}, outside), "model.parameters.temperature.fixed");
  ModelFitOptions reversed;
  reversed.controls["temperature"].bounds = std::array<double, 2>{200.0, 100.0};
  EXPECT_EQ(field_of({}, reversed), "model.parameters.temperature.bounds");
  ModelFitOptions negative;
  negative.controls["scale"].initial = -1.0;
  EXPECT_EQ(field_of({}, negative), "model.parameters.scale.initial");
  ModelFitOptions no_sigma;
  no_sigma.controls["temperature"].prior = GaussianPrior{5000.0, 0.0};
  EXPECT_EQ(field_of({}, no_sigma), "model.parameters.temperature.prior");
  // Outside the law's published range: an error, never an extrapolated value.
  ModelSpec far_infrared;
  far_infrared.extinction = ExtinctionSpec{ExtinctionLaw::kCardelli1989, 3.1};
  const MeasuredSpectrum cold =
      simulate_spectrum([](double nu) { return 1e-9 * planck_per_frequency(nu, 20.0); }, 50.0, 500.0, 20, 0.01, 14);
  try {
    fit_model(model_data(cold), far_infrared, {});
    ADD_FAILURE() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "model.extinction");
    EXPECT_NE(std::string(e.what()).find("um"), std::string::npos) << e.what();
  }
  // Fewer points than free parameters.
  ModelSpec two;
  two.kind = ModelKind::kTwoTemperature;
  const MeasuredSpectrum three =
      simulate_spectrum([](double nu) { return 1e-18 * planck_per_frequency(nu, 5000.0); }, 0.4, 1.0, 3, 0.01, 15);
  EXPECT_THROW(fit_model(model_data(three), two, {}), InputError);
}

TEST(ModelFitDiagnostics, WienSideDustWarnsOfDegeneracyWithoutNaN) {
  // Dust seen only shortward of its peak: beta and temperature are not separable.
  const double t = 20.0, omega = 1e-9;
  ModelSpec spec;
  spec.kind = ModelKind::kModifiedBlackBody;
  const Source source = [&](double nu) { return omega * std::pow(nu / 1e12, 1.7) * planck_per_frequency(nu, t); };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 40.0, 90.0, 30, 0.03, 16)), spec, {});
  expect_finite(fit);
  EXPECT_TRUE(has_warning(fit, "beta_unconstrained"));
  EXPECT_TRUE(has_warning(fit, "parameters_degenerate")) << warning_codes(fit);
}

TEST(ModelFitDiagnostics, RayleighJeansSideExtinctionIsDegenerate) {
  // Near-infrared data far on the Rayleigh-Jeans side of a hot star: E(B-V) and T trade off.
  const double t = 30000.0, omega = 1e-21;
  ModelSpec spec;
  spec.extinction = ExtinctionSpec{ExtinctionLaw::kCardelli1989, 3.1};
  const Source source = [&](double nu) { return omega * planck_per_frequency(nu, t) * reddening(nu, 0.4); };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 1.0, 2.4, 50, 0.01, 17)), spec, {});
  expect_finite(fit);
  EXPECT_TRUE(has_warning(fit, "parameters_degenerate")) << warning_codes(fit);
}

TEST(ModelFitDiagnostics, SecondComponentThatContributesNothingIsFlagged) {
  ModelSpec spec;
  spec.kind = ModelKind::kTwoTemperature;
  const Source source = [](double nu) { return 1e-18 * planck_per_frequency(nu, 5000.0); };
  const ModelFitResult fit = fit_model(model_data(simulate_spectrum(source, 0.3, 2.0, 100, 0.01, 18)), spec, {});
  expect_finite(fit);
  EXPECT_TRUE(has_warning(fit, "component_negligible")) << warning_codes(fit);
}

TEST(ModelFitDiagnostics, ModelValueIncludesTheExtinctionOnlyWhenAsked) {
  ModelSpec spec;
  spec.extinction = ExtinctionSpec{ExtinctionLaw::kCardelli1989, 3.1};
  const std::vector<ParameterInfo> infos = model_parameters(spec);
  const std::vector<double> u = {std::log(8000.0), std::log(1e-19), 0.5};
  const double nu = kC / 0.55e-6;
  const double intrinsic = 1e-19 * planck_per_frequency(nu, 8000.0);
  EXPECT_TRUE(RelativelyNear(model_value(spec, infos, u, Convention::kEnergyPerFrequency, nu, false), intrinsic, 1e-12));
  EXPECT_TRUE(RelativelyNear(model_value(spec, infos, u, Convention::kEnergyPerFrequency, nu), intrinsic * reddening(nu, 0.5), 1e-12));
}

}  // namespace
}  // namespace planckton
