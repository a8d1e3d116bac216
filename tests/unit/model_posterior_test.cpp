// The posterior's Jeffreys prior (ModelPosterior::log_probability_jeffreys) and the sampler's pivot
// coordinates (model_intervals.cpp): the prior against its definition and its analytic limits, the
// coordinates against sampling without them.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <string>

#include "science/ensemble_sampler.h"
#include "science/model_fit.h"
#include "science/model_intervals.h"
#include "science/planck.h"
#include "test_support.h"

namespace planckton {
namespace {

using testing::simulate_spectrum;

struct Fitted {
  MeasuredSpectrum spectrum;
  ModelData data;
  ModelFitResult fit;
};

Fitted fitted(double t, double lo_um, double hi_um, int n, double noise, unsigned seed) {
  Fitted out;
  out.spectrum = simulate_spectrum([t](double nu) { return 1e-18 * planck_per_frequency(nu, t); }, lo_um, hi_um, n, noise, seed);
  out.data = model_data(out.spectrum);
  out.fit = fit_model(out.data, {}, {});
  return out;
}

double jeffreys_term(const ModelPosterior& posterior, std::vector<double> u) {
  return posterior.log_probability_jeffreys(u.data()) - posterior.log_probability(u.data());
}

TEST(JeffreysPrior, IsHalfTheLogDeterminantOfTheFisherInformation) {
  // Definition (Jeffreys 1946, Proc. R. Soc. A 186, 453): pi(u) = sqrt(det I(u)), I = J^T J for
  // Gaussian residuals r_j = (y_j - F_j(u)) / sigma_j. J here by central differences of model_value,
  // independent of the kernel's analytic derivatives.
  const Fitted f = fitted(5200.0, 0.3, 2.5, 40, 0.02, 11);
  const ModelPosterior posterior(f.data, f.fit, {});
  const std::vector<ParameterInfo> infos = model_parameters(f.fit.spec);
  std::vector<double> u = posterior.at_fit();
  u[0] += 0.05;  // away from the fit: the prior is defined everywhere
  const std::size_t n = f.data.items.size(), dim = u.size();
  Eigen::MatrixXd jacobian(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(dim));
  for (std::size_t a = 0; a < dim; ++a) {
    const double h = 1e-5;
    std::vector<double> up = u, down = u;
    up[a] += h;
    down[a] -= h;
    const std::vector<double> all_up = posterior.all_internal(up.data()), all_down = posterior.all_internal(down.data());
    for (std::size_t j = 0; j < n; ++j) {
      const double nu = f.data.nodes[f.data.items[j].first_node].frequency_hz;
      const double d = (model_value(f.fit.spec, infos, all_up, f.data.convention, nu) -
                        model_value(f.fit.spec, infos, all_down, f.data.convention, nu)) / (2.0 * h);
      jacobian(static_cast<Eigen::Index>(j), static_cast<Eigen::Index>(a)) = d / f.data.items[j].sigma;
    }
  }
  const double expected = 0.5 * std::log((jacobian.transpose() * jacobian).determinant());
  EXPECT_NEAR(jeffreys_term(posterior, u), expected, 1e-6 * std::abs(expected) + 1e-6);
}

TEST(JeffreysPrior, GrowsAsTheScaleSquaredAndFallsAsOneOverTOnTheRayleighJeansSide) {
  // Analytic limits of sqrt(det J^T J) for F = S B_nu(T) in u = (ln T, ln S) (derived here, not
  // from a source): both columns of J are proportional to S, so the term grows as S^2 exactly; on the
  // Rayleigh-Jeans side (x = h nu / k T -> 0) F ~ S T, the ln T column approaches the ln S column and
  // their difference ~ x, so along the valley the data allow (S T fixed) the term falls as 1/T.
  const Fitted f = fitted(8000.0, 30.0, 300.0, 20, 0.03, 2);
  const ModelPosterior posterior(f.data, f.fit, {});
  const std::vector<double> u = posterior.at_fit();
  const std::size_t t = f.fit.parameters[f.fit.free[0]].info.role == ParameterRole::kTemperature ? 0 : 1, s = 1 - t;
  std::vector<double> bigger = u;
  bigger[s] += 1.0;
  EXPECT_NEAR(jeffreys_term(posterior, bigger) - jeffreys_term(posterior, u), 2.0, 1e-9);
  std::vector<double> hot = u, hotter = u;
  hot[t] = std::log(1e6);
  hot[s] = u[s] + u[t] - hot[t];
  hotter[t] = std::log(2e6);
  hotter[s] = u[s] + u[t] - hotter[t];
  EXPECT_NEAR(jeffreys_term(posterior, hotter) - jeffreys_term(posterior, hot), -std::log(2.0), 1e-3);
}

TEST(JeffreysPrior, KeepsTheRayleighJeansPosteriorOffTheTemperatureBound) {
  // The flat prior's posterior of Rayleigh-Jeans data runs to the 1e9 K bound and says so; Jeffreys'
  // stays below 1e6 K, and its lower percentiles are still lower limits below the truth.
  const Fitted f = fitted(8000.0, 30.0, 300.0, 20, 0.03, 2);
  IntervalOptions options;
  options.method = IntervalMethod::kPosterior;
  const auto warned = [](const ModelIntervals& m) {
    for (const FitWarning& w : m.warnings) {
      if (w.code == "posterior_prior_dominated") return true;
    }
    return false;
  };
  const ModelIntervals jeffreys = model_intervals(f.data, f.fit, {}, options, f.spectrum.y_unit, {}, {});
  options.prior = PosteriorPrior::kFlat;
  const ModelIntervals flat = model_intervals(f.data, f.fit, {}, options, f.spectrum.y_unit, {}, {});
  const Estimate& tj = jeffreys.quantities.parameters[0];
  const Estimate& tf = flat.quantities.parameters[0];
  ASSERT_TRUE(tj.interval_95 && tf.interval_95);
  EXPECT_LT((*tj.interval_95)[1], 1e6);
  EXPECT_GT((*tf.interval_95)[1], 1e7);
  EXPECT_LT((*tj.interval_95)[0], 8000.0);
  EXPECT_FALSE(warned(jeffreys));
  EXPECT_TRUE(warned(flat));
  EXPECT_TRUE(jeffreys.chain->converged);
}

TEST(PosteriorIntervals, TheFitsTimeBudgetBoundsTheChain) {
  // A budget spent within the burn-in: covariance intervals, the chain not converged, both warnings.
  const Fitted f = fitted(5200.0, 0.3, 2.5, 40, 0.02, 11);
  IntervalOptions options;
  options.method = IntervalMethod::kPosterior;
  ModelFitOptions no_time;
  no_time.solver.time_budget_seconds = 0.0;
  const ModelIntervals m = model_intervals(f.data, f.fit, no_time, options, f.spectrum.y_unit, {}, {});
  ASSERT_TRUE(m.chain);
  EXPECT_TRUE(m.chain->out_of_time);
  EXPECT_EQ(m.chain->kept_draws, 0u);
  EXPECT_LT(m.chain->steps_taken, static_cast<std::size_t>(options.sampler.steps));
  EXPECT_FALSE(m.chain->converged);
  std::vector<std::string> codes;
  for (const FitWarning& w : m.warnings) codes.push_back(w.code);
  EXPECT_NE(std::find(codes.begin(), codes.end(), "posterior_out_of_time"), codes.end());
  EXPECT_NE(std::find(codes.begin(), codes.end(), "posterior_not_converged"), codes.end());
  const Estimate& t = m.quantities.parameters[0];
  ASSERT_TRUE(t.interval_68);
  EXPECT_FALSE(t.median);  // no draws: the covariance's interval, no posterior median
}

TEST(PivotCoordinates, SamplingThroughThemGivesTheSamePosterior) {
  // Wien-side data, where ln S and ln T are strongly correlated. model_intervals samples in pivot
  // coordinates (a shear of unit Jacobian); sampling u directly must give the same percentiles
  // within Monte Carlo error. A wrong Jacobian or a wrong inverse would shift them.
  const Fitted f = fitted(6000.0, 0.2, 0.4, 25, 0.1, 5);
  IntervalOptions options;
  options.method = IntervalMethod::kPosterior;
  options.prior = PosteriorPrior::kFlat;
  options.sampler.steps = 8000;
  options.sampler.burn_in = 1000;
  options.sampler.walkers = 32;
  const ModelIntervals through = model_intervals(f.data, f.fit, {}, options, f.spectrum.y_unit, {}, {});
  const ModelPosterior posterior(f.data, f.fit, {});
  std::vector<double> scale;
  for (std::size_t p : f.fit.free) scale.push_back(*f.fit.parameters[p].internal_sigma);
  const EnsembleSamplerResult direct = sample_ensemble([&](const double* u) { return posterior.log_probability(u); },
                                                       posterior.at_fit(), scale, options.sampler);
  for (std::size_t i = 0; i < f.fit.free.size(); ++i) {
    const FittedParameter& p = f.fit.parameters[f.fit.free[i]];
    std::vector<double> values;
    for (std::size_t k = 0; k < direct.draws(); ++k) values.push_back(direct.samples[k * direct.dimension + i]);
    const Estimate& e = through.quantities.parameters[f.fit.free[i]];
    ASSERT_TRUE(e.median && e.interval_68) << p.info.name;
    // Compared in u (ln of the parameter), in units of the 68 % half-width; the chains' effective
    // sizes (~ 32 x 7000 / 40) make the Monte Carlo error of a percentile about 0.02 of it.
    const double width = 0.5 * (quantile(values, 0.8413) - quantile(values, 0.1587));
    EXPECT_NEAR(p.info.internal(*e.median), quantile(values, 0.5), 0.1 * width) << p.info.name;
    EXPECT_NEAR(p.info.internal((*e.interval_68)[0]), quantile(values, 0.158655), 0.1 * width) << p.info.name;
    EXPECT_NEAR(p.info.internal((*e.interval_68)[1]), quantile(values, 0.841345), 0.1 * width) << p.info.name;
  }
}

}  // namespace
}  // namespace planckton
