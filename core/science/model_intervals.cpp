#include "science/model_intervals.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "science/input_error.h"
#include "science/model_kernel.h"
#include "science/profile_likelihood.h"

namespace planckton {

namespace {

using Quantity = std::function<double(const std::vector<double>&)>;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Percentiles of a standard normal at -1, +1, -2 and +2 sigma: the posterior's 68.27 % and 95.45 %.
constexpr std::array<double, 2> kLowerQuantile = {0.158655253931457, 0.0227501319481792};
constexpr std::array<double, 2> kUpperQuantile = {0.841344746068543, 0.977249868051821};
// Derived quantities are evaluated on at most this many draws (their percentiles' Monte Carlo error
// is then below a tenth of their width); parameters use every draw.
constexpr std::size_t kDerivedDraws = 1000;

// [lo, hi] around v widened in the logarithm by an independent extra variance (the distance's):
// each side's log distance d becomes sqrt(d^2 + k^2 extra) at k sigma.
std::array<double, 2> widened(double v, std::array<double, 2> range, double extra_log_variance, double k) {
  if (!(extra_log_variance > 0.0) || !(v > 0.0)) return range;
  const double add = k * k * extra_log_variance;
  if (range[0] > 0.0) range[0] = v * std::exp(-std::sqrt(std::pow(std::log(v / range[0]), 2) + add));
  if (range[1] > 0.0) range[1] = v * std::exp(std::sqrt(std::pow(std::log(range[1] / v), 2) + add));
  return range;
}

// The inverse of widened: the interval without the extra variance (the delta method's intervals of
// distance-dependent quantities include it, and set_intervals adds it once more).
std::optional<std::array<double, 2>> without_extra(double v, const std::optional<std::array<double, 2>>& range,
                                                   double extra_log_variance, double k) {
  if (!range || !(extra_log_variance > 0.0) || !(v > 0.0)) return range;
  const double remove = k * k * extra_log_variance;
  const auto shrink = [&](double d) { return std::sqrt(std::max(d * d - remove, 0.0)); };
  return std::array<double, 2>{v * std::exp(-shrink(std::log(v / (*range)[0]))), v * std::exp(shrink(std::log((*range)[1] / v)))};
}

void set_intervals(Estimate& e, const std::array<std::array<double, 2>, 2>& ranges, double extra_log_variance) {
  e.interval_68 = widened(e.value, ranges[0], extra_log_variance, 1.0);
  e.interval_95 = widened(e.value, ranges[1], extra_log_variance, 2.0);
}

// The relative error of a known angular radius enters the dilution factor (zeta ~ 1 / theta) besides
// the fit.
double parameter_extra_log_variance(const ModelFitResult& fit, const FittedParameter& p) {
  if (p.info.name != "dilution_factor" || !fit.spec.angular_radius) return 0.0;
  return fit.spec.angular_radius->relative_error * fit.spec.angular_radius->relative_error;
}

void apply_profile(const ModelFitResult& fit, const ProfileResult& profile, ModelIntervals& out) {
  for (std::size_t i = 0; i < fit.free.size(); ++i) {
    const FittedParameter& p = fit.parameters[fit.free[i]];
    const ProfileBounds& b = profile.parameters[i];
    Estimate& e = out.quantities.parameters[fit.free[i]];
    std::array<std::array<double, 2>, 2> ranges{};
    for (std::size_t level = 0; level < 2; ++level) {
      ranges[level] = {b.lower[level] ? p.info.natural(*b.lower[level]) : kNaN,
                       b.upper[level] ? p.info.natural(*b.upper[level]) : kNaN};
    }
    set_intervals(e, ranges, parameter_extra_log_variance(fit, p));
    if (b.lower_open != b.upper_open) {
      e.one_sided = b.upper_open ? OneSided::kLowerLimit : OneSided::kUpperLimit;
      out.warnings.push_back({b.upper_open ? "lower_limit_only" : "upper_limit_only",
                              p.info.name + ": " + (b.upper_open ? "lower" : "upper") +
                                  " limit only (the profile does not rise by the threshold before the parameter's "
                                  "bound): the interval's open end is null, the other end a one-sided limit"});
    } else if (b.lower_open && b.upper_open) {
      out.warnings.push_back({"unconstrained", p.info.name + ": the profile stays within the thresholds between both "
                                                             "bounds: the data do not constrain it"});
    }
  }
}

std::vector<double> draw(const EnsembleSamplerResult& chain, std::size_t k) {
  return {chain.samples.begin() + static_cast<std::ptrdiff_t>(k * chain.dimension),
          chain.samples.begin() + static_cast<std::ptrdiff_t>((k + 1) * chain.dimension)};
}

// The items' mean ln nu weighted by their (S/N)^2 (a band's ln nu: its nodes' weighted mean).
double pivot_frequency(const ModelData& data) {
  double sum = 0.0, weights = 0.0;
  for (const ModelData::Item& item : data.items) {
    if (item.space == ModelData::Space::kUpperLimit || !(item.sigma > 0.0)) continue;
    const double signal_to_noise = item.space == ModelData::Space::kMagnitude ? 1.0 / item.sigma : item.observed / item.sigma;
    double ln_nu = 0.0, node_weights = 0.0;
    for (std::size_t n = item.first_node; n < item.first_node + item.node_count; ++n) {
      ln_nu += data.nodes[n].weight * std::log(data.nodes[n].frequency_hz);
      node_weights += data.nodes[n].weight;
    }
    if (!(node_weights > 0.0) || !std::isfinite(signal_to_noise)) continue;
    sum += signal_to_noise * signal_to_noise * ln_nu / node_weights;
    weights += signal_to_noise * signal_to_noise;
  }
  return weights > 0.0 ? std::exp(sum / weights) : std::sqrt(data.min_node_frequency_hz * data.max_node_frequency_hz);
}

// The sampler's coordinates. Each free scale S_c (u = ln S_c) is replaced by the logarithm of its
// component's model at a pivot frequency, y_c = ln S_c + ln g_c(nu_p; theta), with g_c the component
// at S_c = 1 and theta the other parameters: the normalisation at the pivot, the common practice of
// quoting a power law's amplitude at its decorrelation energy. The data fix y_c nearly independently
// of the temperature, where ln S and ln T trace a curved valley (S ~ e^(h nu / k T) on the Wien
// side, S ~ 1/T on the Rayleigh-Jeans side) that an affine-invariant sampler crosses only slowly.
// The map is a shear (ln S_c = y_c - f(theta)), so its Jacobian is 1 and the posterior's density
// is the same in both coordinates.
class PivotCoordinates {
 public:
  PivotCoordinates(const ModelData& data, const ModelFitResult& fit, const ModelPosterior& posterior)
      : fit_(fit), posterior_(posterior), infos_(model_parameters(fit.spec)),
        pivot_(fit.spec, infos_, model_kernel::node_terms(fit.spec, data.convention, {pivot_frequency(data)}, true)) {
    for (std::size_t i = 0; i < fit.free.size(); ++i) {
      const ParameterInfo& info = fit.parameters[fit.free[i]].info;
      if (info.role == ParameterRole::kScale) scales_.push_back({i, info.component});
    }
  }

  void to_sampler(std::vector<double>& x) const { shift(x, +1.0); }
  void from_sampler(double* y) const {
    std::vector<double> x(y, y + fit_.free.size());
    shift(x, -1.0);
    std::copy(x.begin(), x.end(), y);
  }

 private:
  // y_c = x_c + sign * ln g_c(theta); theta is the same in both coordinates.
  void shift(std::vector<double>& x, double sign) const {
    if (scales_.empty()) return;
    std::vector<double> all = posterior_.all_internal(x.data());
    for (const Scale& s : scales_) all[fit_.free[s.index]] = 0.0;
    for (const Scale& s : scales_) {
      pivot_.evaluate(all.data(), 0, 1, false, s.component);
      const double g = pivot_.value()[0];
      x[s.index] = g > 0.0 && std::isfinite(g) ? x[s.index] + sign * std::log(g) : kNaN;
    }
  }

  struct Scale {
    std::size_t index;  // into the free parameters
    int component;
  };
  const ModelFitResult& fit_;
  const ModelPosterior& posterior_;
  std::vector<ParameterInfo> infos_;
  std::vector<Scale> scales_;
  model_kernel::NodeModel pivot_;
};

void set_percentiles(Estimate& e, std::vector<double> values, double extra_log_variance) {
  values.erase(std::remove_if(values.begin(), values.end(), [](double v) { return !std::isfinite(v); }), values.end());
  if (values.empty()) return;
  e.median = quantile(values, 0.5);
  std::array<std::array<double, 2>, 2> ranges{};
  for (std::size_t level = 0; level < 2; ++level) {
    ranges[level] = {quantile(values, kLowerQuantile[level]), quantile(values, kUpperQuantile[level])};
  }
  set_intervals(e, ranges, extra_log_variance);
}

}  // namespace

ModelIntervals model_intervals(const ModelData& data, const ModelFitResult& fit, const ModelFitOptions& options,
                               const IntervalOptions& intervals, const FluxDensityUnit& y_unit,
                               const std::optional<Distance>& distance,
                               const std::optional<DustOpacityInput>& dust_opacity) {
  ModelIntervals out;
  if (intervals.method == IntervalMethod::kCovariance || fit.free.empty()) {
    out.quantities = derive_model_quantities(fit, y_unit, distance, dust_opacity);
    return out;
  }
  const ModelPosterior posterior(data, fit, options);
  const std::vector<double> best = posterior.at_fit();
  const auto on_free = [&](const Quantity& q) {
    return [&posterior, q](const std::vector<double>& x) { return q(posterior.all_internal(x.data())); };
  };

  if (intervals.method == IntervalMethod::kProfile) {
    const ProfileResult profile = profile_intervals(posterior, fit);
    out.profile_evaluations = profile.evaluations;
    out.profile_found_lower_minimum = profile.minimum_moved;
    const IntervalRule rule = [&](const Quantity& q, double extra, Estimate& e) {
      const QuantityProfile p = profile_quantity(profile, best, on_free(q),
                                                 {without_extra(e.value, e.interval_68, extra, 1.0),
                                                  without_extra(e.value, e.interval_95, extra, 2.0)});
      set_intervals(e, p.intervals, extra);
      if (p.lower_open != p.upper_open) e.one_sided = p.upper_open ? OneSided::kLowerLimit : OneSided::kUpperLimit;
    };
    out.quantities = derive_model_quantities(fit, y_unit, distance, dust_opacity, rule);
    apply_profile(fit, profile, out);
    if (profile.minimum_moved) {
      out.warnings.push_back({"profile_found_lower_minimum",
                              "a profile found a lower -2 ln p than the fit's minimum: the fit may have stopped short "
                              "of the optimum; the intervals are relative to the fit's"});
    }
    return out;
  }

  const double work = static_cast<double>(intervals.sampler.walkers) * intervals.sampler.steps * static_cast<double>(data.nodes.size());
  if (work > kMaxPosteriorWork) {
    throw InputError("options.posterior", "asks for " + std::to_string(static_cast<long long>(work)) +
                                              " model evaluations (walkers x steps x points); this service allows " +
                                              std::to_string(static_cast<long long>(kMaxPosteriorWork)) +
                                              ": fewer steps or walkers, or fewer points");
  }
  // The posterior: walkers start in a small ball around the fit, scaled by the covariance's sigmas.
  std::vector<double> scale;
  for (std::size_t p : fit.free) scale.push_back(fit.parameters[p].internal_sigma.value_or(0.1));
  const bool jeffreys = intervals.prior == PosteriorPrior::kJeffreys;
  EnsembleSamplerOptions sampler = intervals.sampler;  // the fit's time budget bounds the chain too
  sampler.time_budget_seconds = std::min(sampler.time_budget_seconds, options.solver.time_budget_seconds);
  const PivotCoordinates coordinates(data, fit, posterior);
  std::vector<double> start = best;
  coordinates.to_sampler(start);
  std::vector<double> x(best.size());
  EnsembleSamplerResult chain = sample_ensemble(
      [&](const double* y) {
        std::copy(y, y + x.size(), x.begin());
        coordinates.from_sampler(x.data());
        return jeffreys ? posterior.log_probability_jeffreys(x.data()) : posterior.log_probability(x.data());
      },
      start, scale, sampler);
  if (chain.out_of_time) {
    out.warnings.push_back({"posterior_out_of_time",
                            "the time budget (options.time_budget_seconds) ended the chain after " +
                                std::to_string(chain.steps_taken) + " of " + std::to_string(sampler.steps) + " steps" +
                                (chain.kept_draws == 0 ? ", within the burn-in: the intervals are the covariance's"
                                                       : ": the percentiles are from the draws kept so far")});
  }
  if (!chain.converged) {
    out.warnings.push_back({"posterior_not_converged",
                            "the chain is shorter than 50 autocorrelation times (or its acceptance fraction is outside "
                            "0.1-0.9): the percentiles are rough; ask for more options.posterior.steps" +
                                std::string(chain.out_of_time ? " and a larger options.time_budget_seconds" : "")});
  }
  if (chain.kept_draws == 0) {
    out.quantities = derive_model_quantities(fit, y_unit, distance, dust_opacity);
    chain.samples.clear();
    chain.log_probability.clear();
    out.chain = std::move(chain);
    return out;
  }
  for (std::size_t k = 0; k < chain.draws(); ++k) coordinates.from_sampler(&chain.samples[k * chain.dimension]);
  const std::size_t draws = chain.draws();
  const std::size_t stride = std::max<std::size_t>(1, draws / kDerivedDraws);
  const IntervalRule rule = [&](const Quantity& q, double extra, Estimate& e) {
    std::vector<double> values;
    for (std::size_t k = 0; k < draws; k += stride) values.push_back(q(posterior.all_internal(draw(chain, k).data())));
    set_percentiles(e, std::move(values), extra);
  };
  out.quantities = derive_model_quantities(fit, y_unit, distance, dust_opacity, rule);
  for (std::size_t i = 0; i < fit.free.size(); ++i) {
    const FittedParameter& p = fit.parameters[fit.free[i]];
    std::vector<double> values(draws);
    for (std::size_t k = 0; k < draws; ++k) values[k] = p.info.natural(chain.samples[k * chain.dimension + i]);
    set_percentiles(out.quantities.parameters[fit.free[i]], std::move(values), parameter_extra_log_variance(fit, p));
  }
  // Where the likelihood does not confine a parameter, the draws follow the prior: with the flat
  // one into its bounds (the temperature of Rayleigh-Jeans data) or towards a vanishing scale (low
  // S/N Wien data), where the coverage study (bench/coverage_study.cpp) shows its percentiles
  // failing; Jeffreys' prior falls off there, but a parameter the data do not confine at all still
  // spreads over decades. The percentiles then describe the prior more than the data; say so.
  for (std::size_t i = 0; i < fit.free.size(); ++i) {
    std::vector<double> u(draws);
    for (std::size_t k = 0; k < draws; ++k) u[k] = chain.samples[k * chain.dimension + i];
    const double lo = quantile(u, kLowerQuantile[1]), hi = quantile(u, kUpperQuantile[1]);
    const std::array<double, 2> bounds = posterior.bounds(i);
    const bool logarithmic = fit.parameters[fit.free[i]].info.logarithmic;
    const double near = logarithmic ? 1.0 : 1e-3 * (1.0 + std::abs(hi - lo));
    const bool at_bound = hi > bounds[1] - near || lo < bounds[0] + near;
    const bool unconfined = logarithmic && hi - lo > 2.0 * std::log(1e3);  // six decades at 95 %
    if (at_bound || unconfined) {
      out.warnings.push_back({"posterior_prior_dominated",
                              fit.parameters[fit.free[i]].info.name + ": the posterior's 95 % range " +
                                  (at_bound ? "reaches the parameter's bound" : "spans more than six decades") +
                                  ": the data do not confine it and its percentiles follow the prior (" +
                                  (jeffreys ? "Jeffreys'" : "flat in the solver's space") +
                                  "); prefer the profile method's intervals or limits here"});
    }
  }
  if (intervals.samples_returned > 0) {
    const std::size_t every = std::max<std::size_t>(1, (draws + intervals.samples_returned - 1) / intervals.samples_returned);
    for (std::size_t k = 0; k < draws; k += every) {
      std::vector<double> row;
      for (std::size_t i = 0; i < fit.free.size(); ++i) {
        row.push_back(fit.parameters[fit.free[i]].info.natural(chain.samples[k * chain.dimension + i]));
      }
      out.returned_samples.push_back(std::move(row));
    }
  }
  chain.samples.clear();
  chain.log_probability.clear();
  out.chain = std::move(chain);
  return out;
}

}  // namespace planckton
