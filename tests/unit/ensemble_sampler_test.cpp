// The affine-invariant ensemble sampler (core/science/ensemble_sampler.h; Goodman & Weare 2010,
// Foreman-Mackey et al. 2013) on densities with known moments, and quantile() against numpy's
// default (Hyndman & Fan 1996 type 7). The comparison with python3-emcee on fit posteriors is
// tests/reference/test_posterior_emcee.py.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numbers>
#include <vector>

#include "science/ensemble_sampler.h"
#include "science/input_error.h"

namespace {

using planckton::EnsembleSamplerOptions;
using planckton::EnsembleSamplerResult;
using planckton::InputError;
using planckton::quantile;
using planckton::sample_ensemble;

// A 2-D Gaussian with mean (1, -2), standard deviations (1, 0.5) and correlation 0.8.
constexpr double kMean[2] = {1.0, -2.0};
constexpr double kSigma[2] = {1.0, 0.5};
constexpr double kRho = 0.8;

double gaussian_log_p(const double* x) {
  const double a = (x[0] - kMean[0]) / kSigma[0];
  const double b = (x[1] - kMean[1]) / kSigma[1];
  return -0.5 * (a * a - 2.0 * kRho * a * b + b * b) / (1.0 - kRho * kRho);
}

EnsembleSamplerOptions gaussian_options(std::uint64_t seed) {
  EnsembleSamplerOptions options;
  options.walkers = 32;
  options.steps = 2200;
  options.burn_in = 200;
  options.seed = seed;
  return options;
}

EnsembleSamplerResult sample_gaussian(std::uint64_t seed) {
  // A start away from the mean and a ball much smaller than the posterior: the burn-in must cope.
  return sample_ensemble(gaussian_log_p, {1.5, -1.8}, {1.0, 0.5}, gaussian_options(seed));
}

struct Moments {
  double mean[2] = {0.0, 0.0};
  double covariance[2][2] = {{0.0, 0.0}, {0.0, 0.0}};
};

Moments moments(const EnsembleSamplerResult& r) {
  Moments m;
  const std::size_t n = r.draws();
  for (std::size_t i = 0; i < n; ++i) {
    for (int j = 0; j < 2; ++j) m.mean[j] += r.samples[i * 2 + static_cast<std::size_t>(j)] / static_cast<double>(n);
  }
  for (std::size_t i = 0; i < n; ++i) {
    for (int j = 0; j < 2; ++j) {
      for (int l = 0; l < 2; ++l) {
        m.covariance[j][l] += (r.samples[i * 2 + static_cast<std::size_t>(j)] - m.mean[j]) *
                              (r.samples[i * 2 + static_cast<std::size_t>(l)] - m.mean[l]) / static_cast<double>(n - 1);
      }
    }
  }
  return m;
}

// Effective number of independent draws: all draws over the longest autocorrelation time.
double effective_draws(const EnsembleSamplerResult& r) {
  return static_cast<double>(r.draws()) / *std::max_element(r.autocorrelation_time.begin(), r.autocorrelation_time.end());
}

TEST(EnsembleSampler, CorrelatedGaussianMeansAndCovarianceWithinMonteCarloErrors) {
  const EnsembleSamplerResult r = sample_gaussian(7);
  ASSERT_EQ(r.dimension, 2u);
  ASSERT_EQ(r.walkers, 32u);
  ASSERT_EQ(r.draws(), 32u * 2000u);
  ASSERT_EQ(r.log_probability.size(), r.draws());
  EXPECT_EQ(r.evaluations, 32u + 32u * 2200u);  // the start (no redraws needed) and one per walker and step
  const double n_eff = effective_draws(r);
  ASSERT_GT(n_eff, 1000.0);
  const Moments m = moments(r);
  // Mean: standard error sigma / sqrt(n_eff); covariance: sigma_j sigma_l sqrt((1 + rho_jl^2) / n_eff)
  // for a Gaussian. Five standard errors.
  for (int j = 0; j < 2; ++j) {
    EXPECT_NEAR(m.mean[j], kMean[j], 5.0 * kSigma[j] / std::sqrt(n_eff)) << "mean " << j;
    for (int l = 0; l < 2; ++l) {
      const double rho = j == l ? 1.0 : kRho;
      const double truth = rho * kSigma[j] * kSigma[l];
      EXPECT_NEAR(m.covariance[j][l], truth, 5.0 * kSigma[j] * kSigma[l] * std::sqrt((1.0 + rho * rho) / n_eff))
          << "covariance " << j << l;
    }
  }
  // The stored ln p is the density at the stored draw.
  for (std::size_t i = 0; i < r.draws(); i += 997) EXPECT_EQ(r.log_probability[i], gaussian_log_p(&r.samples[i * 2]));
}

TEST(EnsembleSampler, GaussianAcceptanceAndAutocorrelationAreSensible) {
  const EnsembleSamplerResult r = sample_gaussian(3);
  // Goodman & Weare / emcee on a 2-D Gaussian with a = 2 accept about half the proposals.
  EXPECT_GT(r.acceptance_fraction, 0.2);
  EXPECT_LT(r.acceptance_fraction, 0.8);
  ASSERT_EQ(r.autocorrelation_time.size(), 2u);
  for (double tau : r.autocorrelation_time) {
    EXPECT_TRUE(std::isfinite(tau));
    EXPECT_GT(tau, 1.0);    // the stretch move does not give independent draws
    EXPECT_LT(tau, 40.0);   // 2000 kept steps are > 50 of them
  }
  EXPECT_TRUE(r.converged);
}

TEST(EnsembleSampler, SameSeedGivesIdenticalSamplesDifferentSeedsCompatibleMeans) {
  const EnsembleSamplerResult a = sample_gaussian(11);
  const EnsembleSamplerResult b = sample_gaussian(11);
  EXPECT_EQ(a.samples, b.samples);  // bit for bit
  EXPECT_EQ(a.log_probability, b.log_probability);
  EXPECT_EQ(a.acceptance_fraction, b.acceptance_fraction);
  EXPECT_EQ(a.autocorrelation_time, b.autocorrelation_time);

  const EnsembleSamplerResult c = sample_gaussian(12);
  EXPECT_NE(a.samples, c.samples);
  const Moments ma = moments(a), mc = moments(c);
  const double n_eff = std::min(effective_draws(a), effective_draws(c));
  for (int j = 0; j < 2; ++j) {
    EXPECT_NEAR(ma.mean[j], mc.mean[j], 5.0 * std::sqrt(2.0) * kSigma[j] / std::sqrt(n_eff)) << "mean " << j;
  }
}

TEST(EnsembleSampler, ATimeBudgetEndsTheChainEarlyAndItIsNotConverged) {
  // A budget of 0 s is spent after the first step, whatever the machine's speed.
  EnsembleSamplerOptions options = gaussian_options(3);
  options.time_budget_seconds = 0.0;
  const EnsembleSamplerResult in_burn_in = sample_ensemble(gaussian_log_p, {1.0, -2.0}, {1.0, 0.5}, options);
  EXPECT_TRUE(in_burn_in.out_of_time);
  EXPECT_EQ(in_burn_in.steps_taken, 1u);
  EXPECT_EQ(in_burn_in.kept_draws, 0u);
  EXPECT_TRUE(in_burn_in.samples.empty());
  EXPECT_FALSE(in_burn_in.converged);

  options.burn_in = 0;
  const EnsembleSamplerResult kept_one = sample_ensemble(gaussian_log_p, {1.0, -2.0}, {1.0, 0.5}, options);
  EXPECT_EQ(kept_one.steps_taken, 1u);
  EXPECT_EQ(kept_one.kept_draws, 32u);
  EXPECT_EQ(kept_one.draws(), 32u);
  EXPECT_FALSE(kept_one.converged);

  const EnsembleSamplerResult unlimited = sample_gaussian(3);  // the default budget: no limit
  EXPECT_FALSE(unlimited.out_of_time);
  EXPECT_EQ(unlimited.steps_taken, 2200u);
  EXPECT_EQ(unlimited.kept_draws, unlimited.draws());
}

TEST(EnsembleSampler, NeverSamplesWhereTheLogProbabilityIsMinusInfinity) {
  // The Gaussian truncated to x_0 >= 0.5 and to x_1 <= -1.9 (NaN there: counts as -inf), started on
  // the first edge, so that about half the initial ball is redrawn.
  int nan_calls = 0;
  const auto truncated = [&](const double* x) {
    if (x[0] < 0.5) return -HUGE_VAL;
    if (x[1] > -1.9) {
      ++nan_calls;
      return std::nan("");
    }
    return gaussian_log_p(x);
  };
  EnsembleSamplerOptions options = gaussian_options(5);
  options.steps = 1200;
  const EnsembleSamplerResult r = sample_ensemble(truncated, {0.5, -2.2}, {1.0, 0.5}, options);
  EXPECT_GT(r.evaluations, 32u + 32u * 1200u);  // some walkers of the ball were redrawn
  EXPECT_GT(nan_calls, 0);
  double min_x0 = HUGE_VAL, max_x1 = -HUGE_VAL;
  for (std::size_t i = 0; i < r.draws(); ++i) {
    min_x0 = std::min(min_x0, r.samples[i * 2]);
    max_x1 = std::max(max_x1, r.samples[i * 2 + 1]);
    ASSERT_TRUE(std::isfinite(r.log_probability[i])) << i;
  }
  EXPECT_GE(min_x0, 0.5);
  EXPECT_LE(max_x1, -1.9);
  // ... and does reach the edges.
  EXPECT_LT(min_x0, 0.52);
  EXPECT_GT(max_x1, -1.92);
}

TEST(EnsembleSampler, StartOutsideTheSupportThrows) {
  const auto nowhere = [](const double*) { return -HUGE_VAL; };
  try {
    sample_ensemble(nowhere, {0.0, 0.0}, {1.0, 1.0}, {});
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "start");
  }
}

TEST(EnsembleSampler, BadOptionsAndInputsThrowNamingTheField) {
  const auto expect_field = [](const EnsembleSamplerOptions& options, const std::vector<double>& start,
                               const std::vector<double>& scale, const char* field) {
    try {
      sample_ensemble(gaussian_log_p, start, scale, options);
      ADD_FAILURE() << "expected InputError for " << field;
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), field);
    }
  };
  const std::vector<double> start = {1.0, -2.0}, scale = {1.0, 0.5};
  EnsembleSamplerOptions o;
  o.walkers = 3;  // odd
  expect_field(o, start, scale, "options.posterior.walkers");
  o.walkers = 2;  // fewer than 2 d = 4
  expect_field(o, start, scale, "options.posterior.walkers");
  o = {};
  o.burn_in = -1;
  expect_field(o, start, scale, "options.posterior.burn_in");
  o = {};
  o.thin = 0;
  expect_field(o, start, scale, "options.posterior.thin");
  o = {};
  o.steps = o.burn_in;  // nothing kept
  expect_field(o, start, scale, "options.posterior.steps");
  o = {};
  o.steps = 210;
  o.thin = 20;  // 10 steps after the burn-in, fewer than thin
  expect_field(o, start, scale, "options.posterior.steps");
  o = {};
  o.stretch = 1.0;
  expect_field(o, start, scale, "options.posterior.stretch");
  o = {};
  o.initial_spread = 0.0;
  expect_field(o, start, scale, "options.posterior.initial_spread");
  expect_field({}, {}, {}, "start");
  expect_field({}, {1.0, std::nan("")}, scale, "start");
  expect_field({}, start, {1.0}, "scale");
  expect_field({}, start, {1.0, 0.0}, "scale");
}

TEST(EnsembleSampler, ThinningKeepsEmceesStepsAndReportsTauInSteps) {
  EnsembleSamplerOptions options = gaussian_options(9);
  options.steps = 1200;
  options.thin = 10;
  const EnsembleSamplerResult thinned = sample_ensemble(gaussian_log_p, {1.5, -1.8}, {1.0, 0.5}, options);
  options.thin = 1;
  const EnsembleSamplerResult all = sample_ensemble(gaussian_log_p, {1.5, -1.8}, {1.0, 0.5}, options);
  ASSERT_EQ(thinned.draws(), 32u * 100u);
  // The same stream of moves: kept step i is step burn_in + 10 (i + 1) - 1 (emcee's
  // chain[discard + thin - 1 :: thin]).
  for (std::size_t i = 0; i < 100; ++i) {
    for (std::size_t k = 0; k < 32; ++k) {
      ASSERT_EQ(thinned.samples[(i * 32 + k) * 2], all.samples[((10 * i + 9) * 32 + k) * 2]) << i << " " << k;
    }
  }
  EXPECT_EQ(thinned.acceptance_fraction, all.acceptance_fraction);
  // In steps either way (a thinned chain's estimate is coarser: within a factor of two).
  for (std::size_t j = 0; j < 2; ++j) {
    EXPECT_GT(thinned.autocorrelation_time[j], 0.5 * all.autocorrelation_time[j]);
    EXPECT_LT(thinned.autocorrelation_time[j], 2.0 * all.autocorrelation_time[j]);
  }
}

// An AR(1) chain x_t = phi x_{t-1} + e_t has rho(t) = phi^t and tau = (1 + phi) / (1 - phi).
TEST(EnsembleSampler, AutocorrelationTimeOfAnAutoregressiveChain) {
  const std::size_t steps = 20000, walkers = 4;
  const double phi = 0.8;
  std::vector<double> chain(steps * walkers);
  std::uint64_t state = 42;
  const auto normal = [&] {  // a SplitMix64 stream through Box-Muller, for a fixed test chain
    const auto uniform = [&] {
      std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
      z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
      z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
      return (static_cast<double>((z ^ (z >> 31)) >> 11) + 0.5) * 0x1.0p-53;
    };
    const double u1 = uniform(), u2 = uniform();
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  };
  for (std::size_t k = 0; k < walkers; ++k) {
    double x = normal() / std::sqrt(1.0 - phi * phi);
    for (std::size_t t = 0; t < steps; ++t) chain[t * walkers + k] = x = phi * x + normal();
  }
  const double tau = planckton::integrated_autocorrelation_time(chain.data(), steps, walkers, 1);
  EXPECT_NEAR(tau, (1.0 + phi) / (1.0 - phi), 0.15 * 9.0);  // ~3 standard errors (Sokal: var tau ~ 2 (2M + 1) tau^2 / N)
  // A walker that never moves has no autocorrelation time.
  std::vector<double> stuck(100 * 2, 1.0);
  EXPECT_EQ(planckton::integrated_autocorrelation_time(stuck.data(), 100, 2, 1), HUGE_VAL);
}

TEST(EnsembleQuantile, HandValuesAndNumpysDefault) {
  EXPECT_EQ(quantile({3.0, 1.0, 2.0, 4.0}, 0.0), 1.0);
  EXPECT_EQ(quantile({3.0, 1.0, 2.0, 4.0}, 1.0), 4.0);
  EXPECT_EQ(quantile({3.0, 1.0, 2.0, 4.0}, 0.5), 2.5);
  EXPECT_EQ(quantile({3.0, 1.0, 2.0, 4.0}, 0.25), 1.75);  // h = 0.75: 1 + 0.75 (2 - 1)
  EXPECT_EQ(quantile({5.0}, 0.3), 5.0);
  // numpy 1.24.2: np.quantile(v, q) for v below, printed with repr().
  const std::vector<double> v = {0.3, -1.2, 5.5, 2.0, 2.0, 7.25, -3.0};
  EXPECT_EQ(quantile(v, 0.0), -3.0);
  EXPECT_EQ(quantile(v, 0.16), -1.272);
  EXPECT_EQ(quantile(v, 0.5), 2.0);
  EXPECT_EQ(quantile(v, 0.84), 5.57);
  EXPECT_EQ(quantile(v, 0.975), 6.987499999999999);
  EXPECT_EQ(quantile(v, 1.0), 7.25);
  std::vector<double> one_to_eleven;
  for (int i = 1; i <= 11; ++i) one_to_eleven.push_back(i);
  EXPECT_EQ(quantile(one_to_eleven, 0.16), 2.6);  // np.percentile(np.arange(1, 12), 16)
  EXPECT_THROW(quantile({}, 0.5), InputError);
  EXPECT_THROW(quantile({1.0}, 1.5), InputError);
  EXPECT_THROW(quantile({1.0}, -0.1), InputError);
  EXPECT_THROW(quantile({1.0, std::nan("")}, 0.5), InputError);
}

}  // namespace
