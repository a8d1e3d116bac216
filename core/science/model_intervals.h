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
//               the fit's posterior (model_fit.h's ModelPosterior: flat in ln T and the other solver
//               parameters, the model's Gaussian priors), seeded: the median and the 16/84 and
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

// The posterior's default chain: 32 walkers x 2,000 steps, the first 300 discarded: 54,400 draws,
// long enough for the 50 autocorrelation times of the convergence rule on the usual 2-4 parameter
// problems (tau ~ 20-40 steps).
inline EnsembleSamplerOptions default_posterior_sampler() {
  EnsembleSamplerOptions options;
  options.walkers = 32;
  options.steps = 2000;
  options.burn_in = 300;
  return options;
}

// The most model evaluations (walkers x steps x points or band nodes) one posterior may ask for.
inline constexpr double kMaxPosteriorWork = 3e8;

struct IntervalOptions {
  IntervalMethod method = IntervalMethod::kCovariance;
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
