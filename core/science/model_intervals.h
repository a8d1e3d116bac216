// The intervals a fit of the model family reports, by one of three methods, for its parameters and
// every derived quantity alike.
//
//   covariance  the linearised (Gaussian) intervals of model_quantities.h: fast, symmetric in the
//               logarithm of each positive quantity; wrong where the likelihood is not Gaussian.
//   profile     profile-likelihood intervals (profile_likelihood.h): asymmetric where the data say
//               so; a side on which the profile does not rise before the parameter's bound is open,
//               and the other end is reported as a one-sided limit with its one-sided level.
//               Derived quantities: their range over the profile points.
//   posterior   the affine-invariant ensemble sampler (ensemble_sampler.h; Goodman & Weare 2010) on
//               the fit's posterior (model_fit.h's ModelPosterior: Jeffreys' prior or flat in ln T and
//               the other solver parameters, times the model's Gaussian priors), seeded: the median and the 16/84 and
//               2.275/97.725 percentiles of every parameter and derived quantity over the draws.
//
// Example:
//   planckton::IntervalOptions intervals;
//   intervals.method = planckton::IntervalMethod::kProfile;
//   planckton::ModelIntervals result = planckton::model_intervals(data, fit, options, intervals, unit, {}, {});
//   for (const planckton::FitWarning& w : result.warnings) std::puts(w.message.c_str());
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "science/ensemble_sampler.h"
#include "science/model_fit.h"
#include "science/model_quantities.h"

namespace planckton {

enum class IntervalMethod { kCovariance, kProfile, kPosterior };

// The posterior's default chain: 16 walkers x 4,000 steps, the first 500 discarded: 56,000 draws.
// The stretch move's integrated autocorrelation time is 25-70 steps on the usual 2-4 parameter
// problems (the coverage study's spectra), so 3,500 kept steps pass the 50 tau convergence rule;
// 32 walkers x 2,000 steps, at the same cost, sat on its edge.
inline EnsembleSamplerOptions default_posterior_sampler() {
  EnsembleSamplerOptions options;
  options.walkers = 16;
  options.steps = 4000;
  options.burn_in = 500;
  return options;
}

// The most model evaluations (walkers x steps x points or band nodes) one posterior may ask for.
inline constexpr double kMaxPosteriorWork = 3e8;

// The posterior's base prior, times the model's Gaussian priors. Jeffreys' is the default: the
// coverage study (bench/coverage_study.cpp) shows the flat one's percentiles following the prior
// where the data confine a parameter on one side only (Rayleigh-Jeans data, faint Wien data).
enum class PosteriorPrior {
  kJeffreys,  // sqrt(det I): ModelPosterior::log_probability_jeffreys
  kFlat,      // flat in the solver's space: ln T, ln S, ln nu_t, beta, E(B-V)
};

struct IntervalOptions {
  IntervalMethod method = IntervalMethod::kCovariance;
  PosteriorPrior prior = PosteriorPrior::kJeffreys;
  EnsembleSamplerOptions sampler = default_posterior_sampler();  // posterior: walkers, steps, burn-in, seed
  std::size_t samples_returned = 0;  // posterior: a thinned sample of at most this many draws
};

struct ModelIntervals {
  ModelQuantities quantities;   // every estimate with the method's intervals
  std::vector<FitWarning> warnings;  // e.g. "temperature: lower limit only"
  // profile
  std::size_t profile_evaluations = 0;
  bool profile_found_lower_minimum = false;
  // posterior
  std::optional<EnsembleSamplerResult> chain;  // without its samples when none are returned
  std::vector<std::vector<double>> returned_samples;  // natural units, per draw: the free parameters
};

// Throws InputError as derive_model_quantities does, and for sampler options that do not fit the
// problem (field "options.posterior").
ModelIntervals model_intervals(const ModelData& data, const ModelFitResult& fit, const ModelFitOptions& options,
                               const IntervalOptions& intervals, const FluxDensityUnit& y_unit,
                               const std::optional<Distance>& distance,
                               const std::optional<DustOpacityInput>& dust_opacity);

}  // namespace planckton
