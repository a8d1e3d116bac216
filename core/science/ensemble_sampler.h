// Sampling a posterior: draws from a probability density known up to a constant, for intervals that
// follow the likelihood's shape rather than its curvature at the best fit (e.g. ModelPosterior,
// model_fit.h, over a fit's free parameters in the solver's space), and their quantiles.
//
// Method. The affine-invariant ensemble sampler of J. Goodman & J. Weare, Comm. App. Math. Comp. Sci.
// 5, 65 (2010), with their stretch move, in the parallel form of D. Foreman-Mackey, D. W. Hogg,
// D. Lang & J. Goodman, PASP 125, 306 (2013), section 3 (Algorithm 3), which is what emcee does by
// default:
//  1. An ensemble of K walkers (K even, K >= 2 d in d dimensions) starts in a Gaussian ball about
//     the start, x_k = start + initial_spread * scale * N(0, 1) per coordinate; a walker whose
//     ln p is -inf (or NaN) there is drawn again, up to 1,000 times.
//  2. Each step updates the ensemble in two halves, the first K/2 walkers against the last K/2 as
//     they are, then the last against the first as just updated. A walker X of one half picks a
//     walker Y of the other uniformly, z from g(z) = 1 / sqrt(z) on [1/a, a] (normalised), drawn
//     as z = ((a - 1) u + 1)^2 / a, proposes X' = Y + z (X - Y) and accepts it with probability
//     min(1, z^(d-1) p(X') / p(X)) (Goodman & Weare eq. 7; Foreman-Mackey et al. eq. 11). The
//     halves are fixed (emcee's default shuffles which walkers form each half at every step; either
//     leaves the target invariant).
//  3. The first burn_in steps are discarded, then every thin-th step of every walker is kept.
//  4. The integrated autocorrelation time per dimension, as emcee.autocorr.integrated_time
//     (emcee 3; Foreman-Mackey et al. 2013, section 3; the estimator of A. D. Sokal, "Monte Carlo
//     methods in statistical mechanics", Cargese lectures 1996): rho(t), the autocorrelation function
//     of one walker's kept chain normalised to rho(0) = 1 (the sum over the chain's overlap, without
//     a circular wrap, computed directly rather than by FFT), is averaged over the walkers, and
//     tau(M) = 1 + 2 sum_{t=1..M} rho(t) is read at Sokal's automatic window, the smallest M with
//     M >= c tau(M), c = 5 (there always is one: at the last lag tau = 0, since a centred chain's
//     autocovariances sum to zero over all lags). With thinning the time is converted back to steps
//     (times thin), as emcee's get_autocorr_time does.
//  5. Converged: the kept chain spans more than 50 autocorrelation times in every dimension (emcee's
//     tol = 50), and the acceptance fraction is inside (0.1, 0.9).
//
// Randomness: std::mt19937_64 seeded with options.seed, turned into uniforms (the top 53 bits times
// 2^-53) and normals (Box-Muller: G. E. P. Box & M. E. Muller, Ann. Math. Stat. 29, 610 (1958)) by
// planckton itself, so that one seed gives bit-identical samples on every standard library. The
// random stream is consumed in a fixed order (per walker: z, the partner, the acceptance draw).
//
// Example:
//   planckton::ModelPosterior posterior(data, fit, options);
//   std::vector<double> scale;
//   for (std::size_t p : fit.free) scale.push_back(fit.parameters[p].internal_sigma.value_or(0.1));
//   planckton::EnsembleSamplerResult chain = planckton::sample_ensemble(
//       [&](const double* u) { return posterior.log_probability(u); }, posterior.at_fit(), scale, {});
//   std::vector<double> ln_t(chain.draws());
//   for (std::size_t i = 0; i < chain.draws(); ++i) ln_t[i] = chain.samples[i * chain.dimension];
//   double median = std::exp(planckton::quantile(ln_t, 0.5));   // the temperature's median, K
//
// In: ln p (a finite value or -inf; NaN and +inf count as -inf) of a point of `start.size()` coordinates,
// the start and a per-coordinate scale (positive: e.g. the fit's one-sigma errors), the options.
// Out: the kept draws, their ln p, acceptance, autocorrelation times and the convergence flag.
#pragma once

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <vector>

namespace planckton {

struct EnsembleSamplerOptions {
  int walkers = 32;              // even, >= 2 * dimension
  int steps = 700;               // per walker, including burn-in
  int burn_in = 200;             // discarded steps per walker
  int thin = 1;                  // keep every thin-th step after the burn-in
  double stretch = 2.0;          // a of the stretch move, > 1
  std::uint64_t seed = 1;
  double initial_spread = 1e-3;  // walkers start in a Gaussian ball: start + spread * scale * N(0, 1)
  // Wall-clock seconds for the moves (checked after every step): when they run out the chain stops
  // where it is, keeps what it has kept and is not converged.
  double time_budget_seconds = HUGE_VAL;
};

struct EnsembleSamplerResult {
  std::size_t dimension = 0;
  std::size_t walkers = 0;
  std::vector<double> samples;          // kept draws, row-major (draw x dimension), step-major then walker
  std::vector<double> log_probability;  // per kept draw
  double acceptance_fraction = 0.0;     // over all walkers and post-burn-in steps
  std::vector<double> autocorrelation_time;  // per dimension, in steps (integrated; see above)
  bool converged = false;               // kept steps > 50 * max autocorrelation time, acceptance in (0.1, 0.9)
  std::size_t evaluations = 0;          // calls of log_probability, the start included
  std::size_t steps_taken = 0;          // per walker, the burn-in included: options.steps unless out of time
  bool out_of_time = false;             // the time budget ended the chain early (then not converged)
  std::size_t kept_draws = 0;           // walkers x kept steps (draws() until the samples are dropped)

  std::size_t draws() const { return dimension > 0 ? samples.size() / dimension : 0; }
};

// Throws InputError: start empty or not finite ("start"); scale of another size, not finite or not
// positive ("scale"); bad options ("options.posterior.walkers", ".steps", ".burn_in", ".thin",
// ".stretch", ".initial_spread"), including no kept step; a walker with ln p = -inf after 1,000
// draws ("start": the start is outside the posterior's support, or the ball reaches too far).
EnsembleSamplerResult sample_ensemble(const std::function<double(const double*)>& log_probability,
                                      const std::vector<double>& start, const std::vector<double>& scale,
                                      const EnsembleSamplerOptions& options);

// The q-quantile (q in [0, 1]) of values by linear interpolation between order statistics: with
// the values sorted, h = (n - 1) q, Q = v[floor h] + (h - floor h) (v[floor h + 1] - v[floor h]).
// This is numpy's default ("linear") and R's type 7 (R. J. Hyndman & Y. Fan, Am. Stat. 50, 361
// (1996)), interpolated from the nearer order statistic as numpy's _lerp does, so that the two agree
// to the bit. Throws InputError for no values ("values") or q outside [0, 1] ("q"); NaN values are not
// allowed (they have no order).
double quantile(std::vector<double> values, double q);

// Integrated autocorrelation time of one coordinate of an ensemble's chain, in steps of that chain,
// as in step 4 above (window factor c): the coordinate of walker k at step t is
// chain[(t * walkers + k) * stride] (so chain = result.samples.data() + j, stride = dimension, for
// coordinate j of a sampler's result). +inf when a walker never moved (its autocorrelation is
// undefined); 1 for a chain of one step.
double integrated_autocorrelation_time(const double* chain, std::size_t steps, std::size_t walkers,
                                       std::size_t stride, double window_factor = 5.0);

}  // namespace planckton
