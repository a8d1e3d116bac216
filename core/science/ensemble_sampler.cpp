#include "science/ensemble_sampler.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <numbers>
#include <random>
#include <string>

#include "science/input_error.h"

namespace planckton {

namespace {

constexpr int kStartAttempts = 1000;  // draws per walker before the start is declared unusable
constexpr double kConvergenceTolerance = 50.0;  // kept steps per autocorrelation time (emcee's tol)
constexpr double kMinAcceptance = 0.1, kMaxAcceptance = 0.9;

// Uniforms and normals from std::mt19937_64, whose output sequence the standard fixes
// ([rand.predef]), rather than from std::uniform_real_distribution / std::normal_distribution,
// whose algorithms it leaves to the implementation.
class Random {
 public:
  explicit Random(std::uint64_t seed) : engine_(seed) {}
  double uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }     // [0, 1)
  double uniform_open_at_zero() { return 1.0 - uniform(); }                           // (0, 1]
  std::size_t index(std::size_t n) {  // uniform in [0, n)
    return std::min(static_cast<std::size_t>(uniform() * static_cast<double>(n)), n - 1);
  }
  // Box & Muller 1958: sqrt(-2 ln u1) cos(2 pi u2), one normal per pair of uniforms.
  double normal() {
    const double u1 = uniform_open_at_zero();
    const double u2 = uniform();
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  }

 private:
  std::mt19937_64 engine_;
};

// ln p with NaN and +inf (nothing a density can be) treated as -inf: never accepted.
double sanitised(double log_p) { return log_p < HUGE_VAL ? log_p : -HUGE_VAL; }

void check_options(const EnsembleSamplerOptions& o, std::size_t dimension) {
  if (o.walkers < 2 || o.walkers % 2 != 0 || static_cast<std::size_t>(o.walkers) < 2 * dimension) {
    throw InputError("options.posterior.walkers",
                     "the number of walkers must be even and at least twice the number of free parameters (" +
                         std::to_string(2 * dimension) + "), got " + std::to_string(o.walkers));
  }
  if (o.burn_in < 0) throw InputError("options.posterior.burn_in", "the burn-in must not be negative");
  if (o.thin < 1) throw InputError("options.posterior.thin", "thin must be at least 1");
  if (o.steps < 1 || o.steps - o.burn_in < o.thin) {
    throw InputError("options.posterior.steps",
                     "the number of steps must exceed the burn-in by at least thin (one kept step), got steps " +
                         std::to_string(o.steps) + ", burn-in " + std::to_string(o.burn_in) + ", thin " +
                         std::to_string(o.thin));
  }
  if (!(o.stretch > 1.0) || !std::isfinite(o.stretch)) {
    throw InputError("options.posterior.stretch", "the stretch parameter a must be finite and greater than 1");
  }
  if (!(o.initial_spread > 0.0) || !std::isfinite(o.initial_spread)) {
    throw InputError("options.posterior.initial_spread", "the initial spread must be finite and positive");
  }
}

}  // namespace

double integrated_autocorrelation_time(const double* chain, std::size_t steps, std::size_t walkers, std::size_t stride,
                                       double window_factor) {
  if (steps < 2 || walkers == 0) return 1.0;
  // Each walker's chain, centred on its own mean, contiguous.
  std::vector<double> centred(steps * walkers);
  std::vector<double> variance(walkers);  // sum of squares: rho's normalisation c(0)
  for (std::size_t k = 0; k < walkers; ++k) {
    double* x = centred.data() + k * steps;
    double mean = 0.0;
    for (std::size_t t = 0; t < steps; ++t) mean += (x[t] = chain[(t * walkers + k) * stride]);
    mean /= static_cast<double>(steps);
    double c0 = 0.0;
    for (std::size_t t = 0; t < steps; ++t) {
      x[t] -= mean;
      c0 += x[t] * x[t];
    }
    if (!(c0 > 0.0)) return HUGE_VAL;  // a walker that never moved
    variance[k] = c0;
  }
  // tau(M) = 1 + 2 sum_{t=1..M} rho(t), with rho the walkers' mean normalised autocorrelation
  // (emcee: taus = 2 cumsum(f) - 1), at the first M >= c tau(M) (emcee.autocorr.auto_window).
  double tau = 1.0;
  for (std::size_t lag = 1; lag < steps; ++lag) {
    double rho = 0.0;
    for (std::size_t k = 0; k < walkers; ++k) {
      const double* x = centred.data() + k * steps;
      double c = 0.0;
      for (std::size_t t = 0; t + lag < steps; ++t) c += x[t] * x[t + lag];
      rho += c / variance[k];
    }
    tau += 2.0 * rho / static_cast<double>(walkers);
    if (static_cast<double>(lag) >= window_factor * tau) break;
  }
  return tau;
}

EnsembleSamplerResult sample_ensemble(const std::function<double(const double*)>& log_probability,
                                      const std::vector<double>& start, const std::vector<double>& scale,
                                      const EnsembleSamplerOptions& options) {
  const std::size_t d = start.size();
  if (d == 0) throw InputError("start", "nothing to sample: the start has no coordinates");
  for (std::size_t j = 0; j < d; ++j) {
    if (!std::isfinite(start[j])) throw InputError("start", "the start must be finite", j);
  }
  if (scale.size() != d) {
    throw InputError("scale", "the scale needs one value per coordinate (" + std::to_string(d) + "), got " +
                                  std::to_string(scale.size()));
  }
  for (std::size_t j = 0; j < d; ++j) {
    if (!(scale[j] > 0.0) || !std::isfinite(scale[j])) throw InputError("scale", "the scale must be finite and positive", j);
  }
  check_options(options, d);

  const std::size_t walkers = static_cast<std::size_t>(options.walkers);
  const std::size_t half = walkers / 2;
  const std::size_t steps = static_cast<std::size_t>(options.steps);
  const std::size_t burn_in = static_cast<std::size_t>(options.burn_in);
  const std::size_t thin = static_cast<std::size_t>(options.thin);
  const std::size_t kept_steps = (steps - burn_in) / thin;
  const double a = options.stretch;

  EnsembleSamplerResult result;
  result.dimension = d;
  result.walkers = walkers;
  result.samples.reserve(kept_steps * walkers * d);
  result.log_probability.reserve(kept_steps * walkers);

  Random random(options.seed);
  std::vector<double> position(walkers * d);  // walker-major
  std::vector<double> log_p(walkers);

  // 1. The Gaussian ball, each walker redrawn while its ln p is -inf.
  for (std::size_t k = 0; k < walkers; ++k) {
    double* x = position.data() + k * d;
    for (int attempt = 0;; ++attempt) {
      if (attempt == kStartAttempts) {
        throw InputError("start", "no point of the initial ball around the start has a finite log-probability after " +
                                      std::to_string(kStartAttempts) + " draws (walker " + std::to_string(k) + ")");
      }
      for (std::size_t j = 0; j < d; ++j) x[j] = start[j] + options.initial_spread * scale[j] * random.normal();
      ++result.evaluations;
      log_p[k] = sanitised(log_probability(x));
      if (log_p[k] > -HUGE_VAL) break;
    }
  }

  // 2. Stretch moves, half against half.
  std::vector<double> proposal(d);
  std::size_t accepted = 0;
  const double exponent = static_cast<double>(d) - 1.0;
  const auto started = std::chrono::steady_clock::now();
  const auto out_of_time = [&] {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count() > options.time_budget_seconds;
  };
  for (std::size_t step = 0; step < steps; ++step) {
    const bool counted = step >= burn_in;
    for (std::size_t moving = 0; moving < 2; ++moving) {
      const std::size_t first = moving * half;
      const std::size_t other = (1 - moving) * half;
      for (std::size_t k = first; k < first + half; ++k) {
        // z from g(z) ~ 1 / sqrt(z) on [1/a, a] by inversion of its distribution function.
        const double w = (a - 1.0) * random.uniform() + 1.0;
        const double z = w * w / a;
        const double* y = position.data() + (other + random.index(half)) * d;
        double* x = position.data() + k * d;
        for (std::size_t j = 0; j < d; ++j) proposal[j] = y[j] + z * (x[j] - y[j]);
        ++result.evaluations;
        const double proposed = sanitised(log_probability(proposal.data()));
        const double log_ratio = exponent * std::log(z) + proposed - log_p[k];
        if (log_ratio > std::log(random.uniform_open_at_zero())) {
          std::copy(proposal.begin(), proposal.end(), x);
          log_p[k] = proposed;
          if (counted) ++accepted;
        }
      }
    }
    // 3. Keep every thin-th step after the burn-in (emcee: chain[discard + thin - 1 :: thin]).
    if (counted && (step - burn_in + 1) % thin == 0) {
      result.samples.insert(result.samples.end(), position.begin(), position.end());
      result.log_probability.insert(result.log_probability.end(), log_p.begin(), log_p.end());
    }
    result.steps_taken = step + 1;
    if (step + 1 < steps && out_of_time()) {
      result.out_of_time = true;
      break;
    }
  }
  const std::size_t kept = result.samples.size() / (walkers * d);
  result.kept_draws = kept * walkers;
  const std::size_t counted_steps = result.steps_taken > burn_in ? result.steps_taken - burn_in : 0;
  if (counted_steps > 0) result.acceptance_fraction = static_cast<double>(accepted) / static_cast<double>(walkers * counted_steps);

  // 4, 5. Autocorrelation times (in steps) and convergence.
  double max_tau = 0.0;
  for (std::size_t j = 0; j < d && kept > 1; ++j) {
    const double tau = static_cast<double>(thin) * integrated_autocorrelation_time(result.samples.data() + j, kept, walkers, d);
    result.autocorrelation_time.push_back(tau);
    max_tau = std::max(max_tau, tau);
  }
  result.converged = !result.out_of_time && kept > 1 && static_cast<double>(kept * thin) > kConvergenceTolerance * max_tau &&
                     result.acceptance_fraction > kMinAcceptance && result.acceptance_fraction < kMaxAcceptance;
  return result;
}

double quantile(std::vector<double> values, double q) {
  if (values.empty()) throw InputError("values", "the quantile of no values is undefined");
  if (!(q >= 0.0 && q <= 1.0)) throw InputError("q", "the quantile's level must be in [0, 1]");
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (std::isnan(values[i])) throw InputError("values", "NaN has no order", i);
  }
  // Hyndman & Fan type 7: h = (n - 1) q between the order statistics floor(h) and floor(h) + 1.
  const double h = static_cast<double>(values.size() - 1) * q;
  const std::size_t lo = static_cast<std::size_t>(std::floor(h));
  auto lo_it = values.begin() + static_cast<std::ptrdiff_t>(lo);
  std::nth_element(values.begin(), lo_it, values.end());
  const double below = *lo_it;
  if (lo + 1 >= values.size()) return below;
  const double above = *std::min_element(lo_it + 1, values.end());  // the next order statistic
  // numpy's _lerp: from the nearer end, so that t = 1 gives the upper value exactly.
  const double t = h - static_cast<double>(lo);
  const double difference = above - below;
  return t >= 0.5 ? above - difference * (1.0 - t) : below + difference * t;
}

}  // namespace planckton
