#include "science/model_fit.h"

#include <ceres/ceres.h>

#include <Eigen/Dense>

#include <algorithm>
#include <boost/math/special_functions/gamma.hpp>
#include <cmath>
#include <cstdio>
#include <memory>
#include <numeric>
#include <stdexcept>

#include "science/ceres_settings.h"
#include "science/censored_residual.h"
#include "science/constants.h"
#include "science/extinction.h"
#include "science/input_error.h"
#include "science/peaks.h"
#include "science/planck.h"
#include "science/model_kernel.h"
#include "science/two_parameter_fit.h"

namespace planckton {

namespace {

using namespace model_kernel;

constexpr double kMagnitudesPerLnFlux = 1.0857362047581294;  // 2.5 / ln 10
constexpr double kSmallestFlux = 1e-300;                       // keeps magnitudes finite
constexpr std::size_t kStartSubsample = 48;
constexpr double kDegenerateCorrelation = 0.95;

// The items (points or bands) from the node model, and their residuals.
class ItemModel {
 public:
  ItemModel(const ModelData& data, const ModelSpec& spec, const std::vector<ParameterInfo>& parameters)
      : data_(data), nodes_(spec, parameters, node_terms(spec, data.convention, node_frequencies(data))),
        weight_(static_cast<Eigen::Index>(data.nodes.size())), flux_(static_cast<Eigen::Index>(data.items.size())),
        flux_derivatives_(static_cast<Eigen::Index>(data.items.size()), static_cast<Eigen::Index>(parameters.size())) {
    for (std::size_t k = 0; k < data.nodes.size(); ++k) weight_[static_cast<Eigen::Index>(k)] = data.nodes[k].weight;
  }

  const ModelData& data() const { return data_; }
  const NodeModel& nodes() const { return nodes_; }
  std::size_t parameter_count() const { return nodes_.parameter_count(); }

  // F_j of the items [begin, end) into flux() (in the nodes' convention) and, with derivatives,
  // d F_j / d u into the rows of flux_derivatives(); indices are the items'.
  void evaluate(const double* u, std::size_t begin, std::size_t end, bool with_derivatives, int only_component = -1) const {
    const Eigen::Index first = static_cast<Eigen::Index>(data_.items[begin].first_node);
    const ModelData::Item& last = data_.items[end - 1];
    const Eigen::Index count = static_cast<Eigen::Index>(last.first_node + last.node_count) - first;
    nodes_.evaluate(u, first, count, with_derivatives, only_component);
    first_node_ = first;
    if (!data_.bands) return;  // a spectrum point is the model at its frequency: read the nodes directly
    for (std::size_t j = begin; j < end; ++j) {
      const ModelData::Item& item = data_.items[j];
      const Eigen::Index row = static_cast<Eigen::Index>(j);
      const Eigen::Index k = static_cast<Eigen::Index>(item.first_node) - first;
      const Eigen::Index n = static_cast<Eigen::Index>(item.node_count);
      const auto w = weight_.segment(static_cast<Eigen::Index>(item.first_node), n);
      flux_[row] = (w * nodes_.value().segment(k, n)).sum();
      if (with_derivatives) flux_derivatives_.row(row) = (nodes_.derivatives().middleRows(k, n).colwise() * w).colwise().sum();
    }
  }
  // After evaluate(): F_j and d F_j / d u_p of an item in the range evaluated.
  double flux(std::size_t j) const {
    const Eigen::Index row = static_cast<Eigen::Index>(j);
    return data_.bands ? flux_[row] : nodes_.value()[row - first_node_];
  }
  double flux_derivative(std::size_t j, std::size_t p) const {
    const Eigen::Index row = static_cast<Eigen::Index>(j), col = static_cast<Eigen::Index>(p);
    return data_.bands ? flux_derivatives_(row, col) : nodes_.derivatives()(row - first_node_, col);
  }


  // F_j of every item (of one component when only_component >= 0).
  Eigen::ArrayXd item_values(const std::vector<double>& u, int only_component = -1) const {
    evaluate(u.data(), 0, data_.items.size(), false, only_component);
    if (data_.bands) return flux_;
    return nodes_.value().head(static_cast<Eigen::Index>(data_.items.size()));
  }

  // The residual of item j and d r / d F.
  struct Residual {
    double value;
    double d_model;
  };
  Residual residual(std::size_t j, double model, const std::vector<double>& sigma) const {
    const ModelData::Item& item = data_.items[j];
    switch (item.space) {
      case ModelData::Space::kMagnitude: {
        const double flux = std::max(model, kSmallestFlux);
        return {(item.observed + 2.5 * std::log10(flux / item.zero_point_si)) / sigma[j],
                kMagnitudesPerLnFlux / (flux * sigma[j])};
      }
      case ModelData::Space::kUpperLimit: {
        const Censored c = censored((item.observed - item.to_measured * model) / sigma[j]);
        return {c.residual, -c.derivative * item.to_measured / sigma[j]};
      }
      case ModelData::Space::kLinear: break;
    }
    return {(item.observed - item.to_measured * model) / sigma[j], -item.to_measured / sigma[j]};
  }

  // The item's model in its own space (what `residual` compares with the measurement).
  double in_item_space(std::size_t j, double model) const {
    const ModelData::Item& item = data_.items[j];
    if (item.space == ModelData::Space::kMagnitude) {
      return -2.5 * std::log10(std::max(model, kSmallestFlux) / item.zero_point_si);
    }
    return item.to_measured * model;
  }

 private:
  static std::vector<double> node_frequencies(const ModelData& data) {
    std::vector<double> nu;
    nu.reserve(data.nodes.size());
    for (const ModelData::Node& node : data.nodes) nu.push_back(node.frequency_hz);
    return nu;
  }

  const ModelData& data_;
  NodeModel nodes_;
  Eigen::ArrayXd weight_;
  mutable Eigen::ArrayXd flux_;             // bands only
  mutable Eigen::ArrayXXd flux_derivatives_;
  mutable Eigen::Index first_node_ = 0;     // of the range evaluated last
};

// Residuals of the items [begin, end) for ceres::Problem, one parameter block of size 1 per
// parameter (so that any of them can be held constant or bounded).
class ItemResiduals final : public ceres::CostFunction {
 public:
  ItemResiduals(const ItemModel* model, const std::vector<double>* sigma, std::size_t begin, std::size_t end)
      : model_(model), sigma_(sigma), begin_(begin), end_(end), u_(model->parameter_count()) {
    set_num_residuals(static_cast<int>(end - begin));
    for (std::size_t p = 0; p < model->parameter_count(); ++p) mutable_parameter_block_sizes()->push_back(1);
  }

  // Always with the derivatives, so that the Jacobian of an accepted trial point comes from the cache.
  bool Evaluate(double const* const* parameters, double* residuals, double** jacobians) const override {
    for (std::size_t p = 0; p < u_.size(); ++p) u_[p] = parameters[p][0];
    model_->evaluate(u_.data(), begin_, end_, true);
    for (std::size_t j = begin_; j < end_; ++j) {
      const std::size_t row = j - begin_;
      const ItemModel::Residual r = model_->residual(j, model_->flux(j), *sigma_);
      residuals[row] = r.value;
      if (!std::isfinite(r.value)) return false;
      if (jacobians == nullptr) continue;
      for (std::size_t p = 0; p < u_.size(); ++p) {
        if (jacobians[p] != nullptr) {
          jacobians[p][row] = r.d_model * model_->flux_derivative(j, p);
        }
      }
    }
    return true;
  }

 private:
  const ItemModel* model_;
  const std::vector<double>* sigma_;
  std::size_t begin_, end_;
  mutable std::vector<double> u_;
};

// A Gaussian prior as one more residual, (p(u) - mean) / sigma.
class PriorResidual final : public ceres::SizedCostFunction<1, 1> {
 public:
  PriorResidual(ParameterInfo info, GaussianPrior prior) : info_(std::move(info)), prior_(prior) {}
  bool Evaluate(double const* const* parameters, double* residuals, double** jacobians) const override {
    const double u = parameters[0][0];
    residuals[0] = (info_.natural(u) - prior_.mean) / prior_.sigma;
    if (jacobians != nullptr && jacobians[0] != nullptr) jacobians[0][0] = info_.derivative(u) / prior_.sigma;
    return std::isfinite(residuals[0]);
  }

 private:
  ParameterInfo info_;
  GaussianPrior prior_;
};

// ----- parameters and their controls -------------------------------------------------------

std::string control_field(const std::string& name) { return "model.parameters." + name; }

void check_inside_domain(const ParameterInfo& info, double value, const std::string& what) {
  if (!std::isfinite(value) || (info.logarithmic && !(value > 0.0))) {
    throw InputError(control_field(info.name) + "." + what, std::string("must be ") + (info.logarithmic ? "positive and " : "") + "finite");
  }
}

// The parameters with their controls applied: bounds (natural units), fixed values, priors.
std::vector<FittedParameter> controlled_parameters(const std::vector<ParameterInfo>& infos,
                                                   const ModelFitOptions& options) {
  for (const auto& [name, control] : options.controls) {
    // Through a reference: clang before 16 cannot capture a structured binding in a lambda.
    const std::string& wanted = name;
    const bool known = std::any_of(infos.begin(), infos.end(), [&](const ParameterInfo& p) { return p.name == wanted; });
    if (!known) {
      std::string names;
      for (const ParameterInfo& p : infos) names += (names.empty() ? "" : ", ") + p.name;
      throw InputError("model.parameters", "has no parameter '" + name + "' for this model (it has: " + names + ")");
    }
  }
  std::vector<FittedParameter> list;
  for (const ParameterInfo& info : infos) {
    FittedParameter p;
    p.info = info;
    p.lower = info.lower;
    p.upper = info.upper;
    if (info.role == ParameterRole::kTemperature) {
      p.lower = options.solver.min_temperature_k;
      p.upper = options.solver.max_temperature_k;
    }
    if (info.role == ParameterRole::kScale && options.solver.max_scale && info.log_slope == 1.0) {
      p.upper = *options.solver.max_scale;
    }
    const auto found = options.controls.find(info.name);
    const ParameterControl control = found != options.controls.end() ? found->second : ParameterControl{};
    if (control.bounds) {
      const auto [lo, hi] = *control.bounds;
      if (!(lo < hi) || std::isnan(lo) || std::isnan(hi) || (info.logarithmic && !(lo >= 0.0))) {
        throw InputError(control_field(info.name) + ".bounds",
                         std::string("must be [lo, hi] with lo < hi") + (info.logarithmic ? " and lo >= 0" : ""));
      }
      p.lower = lo;
      p.upper = hi;
    }
    if (control.prior) {
      if (!(control.prior->sigma > 0.0) || !std::isfinite(control.prior->sigma) || !std::isfinite(control.prior->mean)) {
        throw InputError(control_field(info.name) + ".prior", "needs a finite mean and a positive finite sigma");
      }
      p.prior = control.prior;
    }
    double start = std::clamp(info.start, p.lower, p.upper);
    if (control.initial) {
      check_inside_domain(info, *control.initial, "initial");
      if (*control.initial < p.lower || *control.initial > p.upper) {
        throw InputError(control_field(info.name) + ".initial", "lies outside the parameter's bounds");
      }
      start = *control.initial;
    }
    if (control.fixed) {
      check_inside_domain(info, *control.fixed, "fixed");
      if (control.bounds && (*control.fixed < p.lower || *control.fixed > p.upper)) {
        throw InputError(control_field(info.name) + ".fixed", "lies outside the bounds given");
      }
      p.fixed = true;
      start = *control.fixed;
    }
    if (info.logarithmic && !(start > 0.0)) start = info.start > 0.0 ? info.start : 1.0;
    p.value = start;
    p.internal = info.internal(start);
    list.push_back(p);
  }
  return list;
}

double internal_bound(const ParameterInfo& info, double natural_bound) {
  if (!info.logarithmic) return natural_bound;
  if (natural_bound <= 0.0) return -HUGE_VAL;
  if (std::isinf(natural_bound)) return HUGE_VAL;
  return info.internal(natural_bound);
}

// ----- the start ----------------------------------------------------------------------------

bool searched(const FittedParameter& p, const ModelFitOptions& options) {
  const auto found = options.controls.find(p.info.name);
  return !p.fixed && (found == options.controls.end() || !found->second.initial);
}

std::vector<double> candidates(const FittedParameter& p, const ModelFitOptions& options, const ModelData& data,
                               const ModelSpec& spec) {
  if (!searched(p, options)) return {p.internal};
  std::vector<double> natural;
  switch (p.info.role) {
    case ParameterRole::kBeta: natural = {1.0, 1.5, 2.0}; break;
    case ParameterRole::kColorExcess: natural = {0.0, 0.5, 1.5}; break;
    case ParameterRole::kTurnoverFrequency: {
      const double lo = data.min_frequency_hz * (1.0 + spec.redshift), hi = data.max_frequency_hz * (1.0 + spec.redshift);
      natural = {lo, std::sqrt(lo * hi), hi, 3.0 * hi};
      break;
    }
    default: return {p.internal};
  }
  std::vector<double> u;
  for (double v : natural) {
    const double clamped = std::clamp(v, p.lower, p.upper);
    if (p.info.logarithmic && !(clamped > 0.0)) continue;
    const double internal = p.info.internal(clamped);
    if (std::find(u.begin(), u.end(), internal) == u.end()) u.push_back(internal);
  }
  return u.empty() ? std::vector<double>{p.internal} : u;
}

// Items for the start search: at most kStartSubsample points evenly spaced in frequency (all bands).
std::vector<std::size_t> start_items(const ModelData& data) {
  std::vector<std::size_t> order(data.items.size());
  std::iota(order.begin(), order.end(), 0);
  if (data.bands || order.size() <= kStartSubsample) return order;
  const auto frequency = [&](std::size_t j) { return data.nodes[data.items[j].first_node].frequency_hz; };
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return frequency(a) < frequency(b); });
  std::vector<std::size_t> picked(kStartSubsample);
  for (std::size_t i = 0; i < kStartSubsample; ++i) picked[i] = order[(i * (order.size() - 1)) / (kStartSubsample - 1)];
  return picked;
}

// The data of some items only (with their nodes).
ModelData subset(const ModelData& data, const std::vector<std::size_t>& items) {
  ModelData sub;
  sub.convention = data.convention;
  sub.has_errors = data.has_errors;
  sub.bands = data.bands;
  sub.min_frequency_hz = data.min_frequency_hz;
  sub.max_frequency_hz = data.max_frequency_hz;
  sub.min_node_frequency_hz = data.min_node_frequency_hz;
  sub.max_node_frequency_hz = data.max_node_frequency_hz;
  for (std::size_t j : items) {
    ModelData::Item item = data.items[j];
    item.first_node = sub.nodes.size();
    sub.nodes.insert(sub.nodes.end(), data.nodes.begin() + static_cast<std::ptrdiff_t>(data.items[j].first_node),
                     data.nodes.begin() + static_cast<std::ptrdiff_t>(data.items[j].first_node + item.node_count));
    sub.items.push_back(item);
  }
  return sub;
}

// The profiled cost over the scales, on the start items, in linearised space.
class StartSearch {
 public:
  StartSearch(const ModelData& data, const ModelSpec& spec, const std::vector<ParameterInfo>& infos,
              const std::vector<FittedParameter>& parameters, const ModelFitOptions& options)
      : data_(subset(data, start_items(data))), model_(data_, spec, infos), spec_(spec), parameters_(parameters),
        options_(options), layout_(model_.nodes().layout()), w2_(weights()), y_(observed()), kappa_(item_extinction()) {
    // One temperature with E(B-V) and the scale both free: at each temperature, the two follow in
    // closed form from a weighted linear fit of ln y = ln S + ln f - E kappa (the start needs no grid
    // over E(B-V), and begins next to the optimum).
    closed_form_extinction_ = layout_.components == 1 && layout_.color_excess >= 0 &&
                              searched(parameter(layout_.color_excess), options_) &&
                              searched(parameter(layout_.scale[0]), options_);
  }

  // Fills u with the best start found.
  void run(std::vector<double>& u) {
    std::vector<std::vector<double>> extra;  // beta, turnover, colour excess candidates
    std::vector<int> extra_index;
    for (int index : {layout_.beta, layout_.turnover, layout_.color_excess}) {
      if (index < 0 || (index == layout_.color_excess && closed_form_extinction_)) continue;
      extra_index.push_back(index);
      extra.push_back(candidates(parameters_[static_cast<std::size_t>(index)], options_, data_, spec_));
    }
    double best_cost = HUGE_VAL;
    std::vector<double> best = u, trial = u;
    std::vector<std::size_t> pick(extra.size(), 0);
    while (true) {
      for (std::size_t e = 0; e < extra.size(); ++e) trial[static_cast<std::size_t>(extra_index[e])] = extra[e][pick[e]];
      const double cost = layout_.components == 2 ? search_two(trial) : search_one(trial);
      if (cost < best_cost) {
        best_cost = cost;
        best = trial;
      }
      std::size_t e = 0;
      while (e < extra.size() && ++pick[e] == extra[e].size()) pick[e++] = 0;
      if (e == extra.size()) break;
    }
    u = best;
  }

 private:
  const FittedParameter& parameter(int index) const { return parameters_[static_cast<std::size_t>(index)]; }

  // The candidate ln T values of component c: the grid nodes (ratio 2) over what the data constrain.
  std::vector<double> temperature_grid(int c) const {
    const FittedParameter& p = parameter(layout_.temperature[static_cast<std::size_t>(c)]);
    if (!searched(p, options_)) return {p.internal};
    const double z1 = 1.0 + spec_.redshift;
    const auto [lo, hi] = two_parameter_fit::start_range(data_.min_node_frequency_hz * z1,
                                                         data_.max_node_frequency_hz * z1, std::log(p.lower),
                                                         std::log(p.upper));
    std::vector<double> grid;
    const int nodes = std::max(2, static_cast<int>(std::ceil((hi - lo) / std::log(2.0))) + 1);
    for (int j = 0; j < nodes; ++j) grid.push_back(lo + (hi - lo) * j / (nodes - 1));
    return grid;
  }

  // Per start item: the component's value at unit scale.
  Eigen::ArrayXd unit_values(std::vector<double> u, int c) const {
    u[static_cast<std::size_t>(layout_.scale[static_cast<std::size_t>(c)])] = 0.0;
    return model_.item_values(u, c);
  }

  double censored_cost(const Eigen::ArrayXd& model) const {
    double cost = 0.0;
    for (std::size_t i = 0; i < data_.items.size(); ++i) {
      const ModelData::Item& item = data_.items[i];
      if (item.space != ModelData::Space::kUpperLimit) continue;
      const double r = censored((item.start_observed - model[static_cast<Eigen::Index>(i)]) / item.start_sigma).residual;
      cost += r * r;
    }
    return cost;
  }

  // w^2 = 1 / sigma^2 of the linearised detections (0 for upper limits), and their values.
  Eigen::ArrayXd weights() const {
    Eigen::ArrayXd w2(static_cast<Eigen::Index>(data_.items.size()));
    for (std::size_t i = 0; i < data_.items.size(); ++i) {
      const ModelData::Item& item = data_.items[i];
      w2[static_cast<Eigen::Index>(i)] = item.space == ModelData::Space::kUpperLimit ? 0.0 : 1.0 / (item.start_sigma * item.start_sigma);
    }
    return w2;
  }
  Eigen::ArrayXd observed() const {
    Eigen::ArrayXd y(static_cast<Eigen::Index>(data_.items.size()));
    for (std::size_t i = 0; i < data_.items.size(); ++i) y[static_cast<Eigen::Index>(i)] = data_.items[i].start_observed;
    return y;
  }

  // Best ln S for one component given its unit values (or the fixed / initial one), and the cost.
  std::pair<double, double> profile_scale(const Eigen::ArrayXd& f, int c, const std::vector<double>& u) const {
    const Eigen::ArrayXd& w2 = w2_;
    const Eigen::ArrayXd& y = y_;
    const FittedParameter& s = parameter(layout_.scale[static_cast<std::size_t>(c)]);
    double log_scale = u[static_cast<std::size_t>(layout_.scale[static_cast<std::size_t>(c)])];
    if (searched(s, options_)) {
      const double yf = (w2 * y * f).sum(), ff = (w2 * f * f).sum();
      if (!(ff > 0.0) || !std::isfinite(ff) || !(yf > 0.0)) return {0.0, HUGE_VAL};
      log_scale = std::min(std::log(yf / ff), internal_bound(s.info, s.upper));
    }
    const Eigen::ArrayXd model = std::exp(log_scale) * f;
    const double cost = (w2 * (y - model).square()).sum() + censored_cost(model);
    return {log_scale, std::isfinite(cost) ? cost : HUGE_VAL};
  }

  double search_one(std::vector<double>& u) const {
    const std::size_t it = static_cast<std::size_t>(layout_.temperature[0]);
    const std::size_t is = static_cast<std::size_t>(layout_.scale[0]);
    const auto profile = [&](double log_t) {
      std::vector<double> trial = u;
      trial[it] = log_t;
      if (closed_form_extinction_) fit_extinction(trial);
      const auto [log_scale, cost] = profile_scale(unit_values(trial, 0), 0, trial);
      return two_parameter_fit::GridNode{log_t, log_scale, cost};
    };
    const std::vector<double> grid = temperature_grid(0);
    const two_parameter_fit::GridNode node =
        grid.size() == 1 ? profile(grid[0]) : two_parameter_fit::search_log_temperature(grid.front(), grid.back(), profile);
    u[it] = node.log_temperature;
    if (closed_form_extinction_) fit_extinction(u);
    if (std::isfinite(node.cost)) u[is] = node.log_scale;
    return node.cost;
  }

  // E(B-V) at u's temperature by weighted linear least squares of ln(y / f) = ln S - E kappa over the
  // positive detections (weights (y / sigma)^2, the inverse variance of ln y), within its bounds.
  void fit_extinction(std::vector<double>& u) const {
    const std::size_t ie = static_cast<std::size_t>(layout_.color_excess);
    u[ie] = 0.0;
    const Eigen::ArrayXd f = unit_values(u, 0);
    double sw = 0.0, sk = 0.0, skk = 0.0, sz = 0.0, skz = 0.0;
    for (Eigen::Index i = 0; i < f.size(); ++i) {
      if (!(w2_[i] > 0.0) || !(y_[i] > 0.0) || !(f[i] > 0.0)) continue;
      const double w = w2_[i] * y_[i] * y_[i], z = std::log(y_[i] / f[i]), k = kappa_[i];
      sw += w;
      sk += w * k;
      skk += w * k * k;
      sz += w * z;
      skz += w * k * z;
    }
    const double det = sw * skk - sk * sk;
    if (!(det > 0.0) || !std::isfinite(det)) return;
    const FittedParameter& e = parameter(layout_.color_excess);
    u[ie] = std::clamp(-(sw * skz - sk * sz) / det, e.lower, e.upper);
  }

  // Each start item's extinction exponent: its nodes' mean, weighted as the band integrates them.
  Eigen::ArrayXd item_extinction() const {
    const Eigen::ArrayXd& node = model_.nodes().terms().extinction;
    Eigen::ArrayXd kappa(static_cast<Eigen::Index>(data_.items.size()));
    for (std::size_t i = 0; i < data_.items.size(); ++i) {
      const ModelData::Item& item = data_.items[i];
      double sum = 0.0, weight = 0.0;
      for (std::size_t k = item.first_node; k < item.first_node + item.node_count; ++k) {
        sum += data_.nodes[k].weight * node[static_cast<Eigen::Index>(k)];
        weight += data_.nodes[k].weight;
      }
      kappa[static_cast<Eigen::Index>(i)] = weight > 0.0 ? sum / weight : 0.0;
    }
    return kappa;
  }

  // Both scales in closed form for a pair of temperatures (2 x 2 normal equations); a negative
  // scale makes the pair unusable.
  double search_two(std::vector<double>& u) const {
    const std::vector<double> grid_1 = temperature_grid(0), grid_2 = temperature_grid(1);
    const std::size_t it1 = static_cast<std::size_t>(layout_.temperature[0]), it2 = static_cast<std::size_t>(layout_.temperature[1]);
    const std::size_t is1 = static_cast<std::size_t>(layout_.scale[0]), is2 = static_cast<std::size_t>(layout_.scale[1]);
    std::vector<Eigen::ArrayXd> f1, f2;
    for (double t : grid_1) { std::vector<double> trial = u; trial[it1] = t; f1.push_back(unit_values(trial, 0)); }
    for (double t : grid_2) { std::vector<double> trial = u; trial[it2] = t; f2.push_back(unit_values(trial, 1)); }
    const Eigen::ArrayXd& w2 = w2_;
    const Eigen::ArrayXd& y = y_;
    const bool fixed_1 = !searched(parameter(static_cast<int>(is1)), options_);
    const bool fixed_2 = !searched(parameter(static_cast<int>(is2)), options_);
    double best = HUGE_VAL;
    std::vector<double> best_u = u;
    for (std::size_t a = 0; a < grid_1.size(); ++a) {
      for (std::size_t b = 0; b < grid_2.size(); ++b) {
        // Apart by at least the grid ratio (2) when both are searched; ordered in any case.
        const double gap = grid_1.size() > 1 && grid_2.size() > 1 ? std::log(2.0) - 1e-9 : 0.0;
        if (grid_2[b] - grid_1[a] < gap || grid_2[b] <= grid_1[a] - 1e-12) continue;
        double s1 = std::exp(u[is1]), s2 = std::exp(u[is2]);
        const Eigen::ArrayXd& x1 = f1[a];
        const Eigen::ArrayXd& x2 = f2[b];
        const double a11 = (w2 * x1 * x1).sum(), a12 = (w2 * x1 * x2).sum(), a22 = (w2 * x2 * x2).sum();
        const double b1 = (w2 * x1 * y).sum(), b2 = (w2 * x2 * y).sum();
        if (!fixed_1 && !fixed_2) {
          const double det = a11 * a22 - a12 * a12;
          if (!(std::abs(det) > 0.0) || !std::isfinite(det)) continue;
          s1 = (b1 * a22 - b2 * a12) / det;
          s2 = (a11 * b2 - a12 * b1) / det;
        } else if (!fixed_1) {
          s1 = (b1 - s2 * a12) / a11;
        } else if (!fixed_2) {
          s2 = (b2 - s1 * a12) / a22;
        }
        if (!(s1 > 0.0) || !(s2 > 0.0)) continue;
        const Eigen::ArrayXd model = s1 * x1 + s2 * x2;
        const double cost = (w2 * (y - model).square()).sum() + censored_cost(model);
        if (cost < best) {
          best = cost;
          best_u = u;
          best_u[it1] = grid_1[a];
          best_u[it2] = grid_2[b];
          best_u[is1] = std::log(s1);
          best_u[is2] = std::log(s2);
        }
      }
    }
    if (!std::isfinite(best)) {
      // No pair with two positive scales: the warmer component starts as a small addition to the
      // best single curve, which the solver can grow or drop.
      std::vector<double> single = u;
      const double cost = search_one(single);
      best_u = single;
      best_u[it2] = std::min(single[it1] + std::log(3.0), grid_2.back());
      if (searched(parameter(static_cast<int>(is2)), options_)) {
        const auto [log_scale, unused] = profile_scale(unit_values(best_u, 1), 1, best_u);
        (void)unused;
        best_u[is2] = log_scale + std::log(1e-2);
      }
      best = cost;
    }
    u = best_u;
    return best;
  }

  ModelData data_;
  ItemModel model_;
  const ModelSpec& spec_;
  const std::vector<FittedParameter>& parameters_;
  const ModelFitOptions& options_;
  const Layout& layout_;
  Eigen::ArrayXd w2_, y_, kappa_;
  bool closed_form_extinction_ = false;
};

// ----- after the solve ----------------------------------------------------------------------

double median_absolute_residual(const ItemModel& model, const std::vector<double>& u, const std::vector<double>& sigma) {
  std::vector<double> absolute;
  const Eigen::ArrayXd f = model.item_values(u);
  for (std::size_t j = 0; j < model.data().items.size(); ++j) {
    absolute.push_back(std::abs(model.residual(j, f[static_cast<Eigen::Index>(j)], sigma).value));
  }
  const auto middle = absolute.begin() + static_cast<std::ptrdiff_t>(absolute.size() / 2);
  std::nth_element(absolute.begin(), middle, absolute.end());
  return *middle;
}

void warn(ModelFitResult& result, std::string code, std::string message) {
  result.warnings.push_back({std::move(code), std::move(message)});
}

std::string format_number(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.6g", value);
  return text;
}

void add_model_warnings(const ModelData& data, const ItemModel& model, const std::vector<double>& sigma,
                        ModelFitResult& result) {
  const std::string items = data.bands ? "bands" : "points";
  if (result.errors_estimated) {
    warn(result, "errors_estimated",
         std::string(data.bands ? "no errors were given" : "no y_error was given") + ": all " + items +
             " have equal weight, the one-sigma scatter is estimated from the residuals and the intervals are "
             "scaled by it; chi-square and p-value are not reported");
  }
  if (!result.converged) {
    warn(result, "not_converged", "the solver stopped before converging (" + result.termination + ": " +
                                      result.solver_message + "); the values are its best estimate so far");
  }
  for (const FittedParameter& p : result.parameters) {
    if (p.at_bound) {
      // The Planck fits' code for a temperature, so that both paths warn alike.
      warn(result, p.info.role == ParameterRole::kTemperature ? "temperature_at_bound" : "parameter_at_bound",
           p.info.name + " sits at a bound [" + format_number(p.lower) + ", " + format_number(p.upper) +
               "]; its interval is not reliable");
    }
  }
  if (result.covariance_available) {
    // Scales are normalisations: their correlation with the shape parameters is in the matrix, but
    // only degeneracies among the shape parameters (temperatures, beta, turnover, E(B-V)) are warned of.
    const auto shape = [&](std::size_t a) { return result.parameters[result.free[a]].info.role != ParameterRole::kScale; };
    for (std::size_t a = 0; a < result.free.size(); ++a) {
      for (std::size_t b = a + 1; b < result.free.size(); ++b) {
        const double rho = result.correlation_at(a, b);
        if (std::abs(rho) <= kDegenerateCorrelation || !shape(a) || !shape(b)) continue;
        const std::string& na = result.parameters[result.free[static_cast<std::size_t>(a)]].info.name;
        const std::string& nb = result.parameters[result.free[static_cast<std::size_t>(b)]].info.name;
        warn(result, "parameters_degenerate",
             na + " and " + nb + " are strongly correlated (" + format_number(rho) +
                 "): the data constrain a combination of them better than either; their separate intervals are wide "
                 "and the Gaussian ones may mislead");
      }
    }
  } else {
    warn(result, "covariance_unavailable", "the covariance matrix is singular at the solution: the data do not "
                                           "constrain every free parameter; no errors are reported");
  }

  const std::vector<double> u = result.internal_values();
  const Layout& layout = model.nodes().layout();
  const double z1 = 1.0 + result.spec.redshift;
  const double data_peak_exponent = peak_exponent(data.convention);
  for (int c = 0; c < layout.components; ++c) {
    const FittedParameter& t = result.parameters[static_cast<std::size_t>(layout.temperature[static_cast<std::size_t>(c)])];
    const std::string label = layout.components == 2 ? t.info.name + ": " : "";
    // Rest-frame peak of the component's Planck curve in the data's convention, seen at observed frequencies.
    const double peak_nu = peak_frequency(data_peak_exponent, t.value) / z1;
    if (peak_nu < data.min_frequency_hz) {
      warn(result, "peak_outside_data",
           label + "the fitted curve peaks below the lowest frequency (longest wavelength) of the data: the data "
                   "cover only the Wien side, so the temperature rests on the curve's exponential fall-off");
    } else if (peak_nu > data.max_frequency_hz) {
      warn(result, "peak_outside_data",
           label + "the fitted curve peaks above the highest frequency (shortest wavelength) of the data: the data "
                   "cover only the Rayleigh-Jeans side, where the shape hardly depends on temperature, so the "
                   "temperature is weakly constrained (often only from below)");
    }
    if (layout.components == 2) {
      // A component that nowhere reaches the errors contributes nothing the data can see.
      double largest = 0.0;
      const Eigen::ArrayXd component = model.item_values(u, c), total = model.item_values(u);
      for (std::size_t j = 0; j < data.items.size(); ++j) {
        const double f = component[static_cast<Eigen::Index>(j)];
        // In magnitudes the component's share of the flux, in flux units its value, against sigma.
        const double seen = data.items[j].space == ModelData::Space::kMagnitude
                                ? kMagnitudesPerLnFlux * f / std::max(total[static_cast<Eigen::Index>(j)], kSmallestFlux)
                                : std::abs(data.items[j].to_measured * f);
        largest = std::max(largest, seen / sigma[j]);
      }
      if (largest < 1.0) {
        warn(result, "component_negligible",
             t.info.name + " belongs to a component that stays below one sigma in every " +
                 (data.bands ? "band" : "point") + ": the data do not need it; fit one temperature instead");
      }
    }
  }
  if (layout.beta >= 0 && !result.parameters[static_cast<std::size_t>(layout.beta)].fixed) {
    const double t = result.parameters[static_cast<std::size_t>(layout.temperature[0])].value;
    const double lowest_x = constants::kPlanckOverBoltzmann * data.min_frequency_hz * z1 / t;
    if (lowest_x > 1.5) {
      warn(result, "beta_unconstrained",
           "no data towards the Rayleigh-Jeans side (h nu / k T < 1.5), where beta shapes the spectrum: beta and the "
           "temperature trade off; consider fixing beta or adding longer wavelengths");
    }
  }
  if (layout.turnover >= 0 && !result.parameters[static_cast<std::size_t>(layout.turnover)].fixed) {
    const double nu_t = result.parameters[static_cast<std::size_t>(layout.turnover)].value / z1;
    if (nu_t < data.min_frequency_hz || nu_t > data.max_frequency_hz) {
      warn(result, "turnover_outside_data",
           "the frequency where the optical depth is one lies outside the data: the data see only the optically " +
               std::string(nu_t > data.max_frequency_hz ? "thin" : "thick") + " side, so turnover_frequency is "
                                                                              "poorly constrained");
    }
  }
  if (result.p_value && *result.p_value < 1e-3) {
    warn(result, "poor_fit", "p-value below 0.001: the model does not describe the data within their errors "
                             "(underestimated errors, lines or a different model?)");
  }
  if (result.points_used < 3 * result.free.size()) {
    warn(result, "few_points", "fewer " + items + " than three per free parameter: the intervals rest on few data");
  }
}

// Two temperatures are reported cooler first: a solve that ended with them crossed is relabelled
// (values, bounds, priors and covariance rows move with their component).
void order_components(const Layout& layout, ModelFitResult& result) {
  if (layout.components != 2) return;
  auto& p = result.parameters;
  const std::size_t t1 = static_cast<std::size_t>(layout.temperature[0]), t2 = static_cast<std::size_t>(layout.temperature[1]);
  const std::size_t s1 = static_cast<std::size_t>(layout.scale[0]), s2 = static_cast<std::size_t>(layout.scale[1]);
  if (p[t1].value <= p[t2].value) return;
  const auto swap_component_data = [&](std::size_t a, std::size_t b) {
    std::swap(p[a].value, p[b].value);
    std::swap(p[a].internal, p[b].internal);
    std::swap(p[a].internal_sigma, p[b].internal_sigma);
    std::swap(p[a].fixed, p[b].fixed);
    std::swap(p[a].at_bound, p[b].at_bound);
    std::swap(p[a].prior, p[b].prior);
    std::swap(p[a].lower, p[b].lower);
    std::swap(p[a].upper, p[b].upper);
  };
  swap_component_data(t1, t2);
  swap_component_data(s1, s2);
  // The free list keeps its order by parameter index; permute the covariance to follow.
  if (result.covariance_available) {
    std::vector<std::size_t> index_of(p.size(), 0);
    for (std::size_t i = 0; i < result.free.size(); ++i) index_of[result.free[i]] = i;
    const auto partner = [&](std::size_t q) { return q == t1 ? t2 : q == t2 ? t1 : q == s1 ? s2 : q == s2 ? s1 : q; };
    std::vector<double> c = result.covariance;
    const std::size_t n = result.free.size();
    for (std::size_t a = 0; a < n; ++a) {
      for (std::size_t b = 0; b < n; ++b) {
        c[a * n + b] = result.covariance_at(index_of[partner(result.free[a])], index_of[partner(result.free[b])]);
      }
    }
    result.covariance = c;
  }
  warn(result, "components_reordered",
       "the solve ended with the components' temperatures crossed; they are reported cooler first, each with "
       "the controls (bounds, priors, fixed values) it was fitted with");
}

}  // namespace

// ----- data ---------------------------------------------------------------------------------

ModelData model_data(const MeasuredSpectrum& spectrum) {
  ModelData data;
  data.convention = spectrum.y_unit.convention;
  data.has_errors = spectrum.has_errors();
  const std::size_t n = spectrum.size();
  // Without errors, a uniform sigma of the rms of y keeps residuals of order one (planck_fit.h).
  double mean_square = 0.0;
  for (double v : spectrum.value_si) mean_square += v * v;
  const double uniform_sigma = n > 0 ? std::sqrt(mean_square / static_cast<double>(n)) : 1.0;
  for (std::size_t i = 0; i < n; ++i) {
    data.nodes.push_back({spectrum.frequency_hz[i], 1.0});
    ModelData::Item item;
    item.observed = item.start_observed = spectrum.value_si[i];
    item.sigma = item.start_sigma = data.has_errors ? spectrum.error_si[i] : uniform_sigma;
    item.first_node = i;
    data.items.push_back(item);
  }
  data.min_frequency_hz = data.min_node_frequency_hz = spectrum.min_frequency_hz;
  data.max_frequency_hz = data.max_node_frequency_hz = spectrum.max_frequency_hz;
  return data;
}

ModelData model_data(const MeasuredPhotometry& photometry) {
  ModelData data;
  data.convention = Convention::kEnergyPerFrequency;  // the bands' quoted F_nu
  data.has_errors = photometry.has_errors;
  data.bands = true;
  data.min_frequency_hz = HUGE_VAL;
  for (const BandMeasurement& m : photometry.bands) {
    ModelData::Item item;
    item.first_node = data.nodes.size();
    item.node_count = m.quadrature.frequency_hz.size();
    for (std::size_t k = 0; k < item.node_count; ++k) data.nodes.push_back({m.quadrature.frequency_hz[k], m.quadrature.weight[k]});
    item.observed = m.value;
    // Without errors every detection gets the same fractional weight (photometry.h).
    item.sigma = photometry.has_errors || m.upper_limit ? m.error
                 : m.scale == MeasurementScale::kFluxDensity ? m.value
                                                             : kMagnitudesPerLnFlux;
    if (m.scale == MeasurementScale::kFluxDensity) {
      item.space = m.upper_limit ? ModelData::Space::kUpperLimit : ModelData::Space::kLinear;
      item.to_measured = m.from_quoted_f_nu(1.0);
      item.start_observed = m.value / item.to_measured;
      item.start_sigma = item.sigma / item.to_measured;
    } else {
      item.space = ModelData::Space::kMagnitude;
      item.zero_point_si = m.zero_point_si;
      item.start_observed = m.to_quoted_f_nu(m.value);
      item.start_sigma = item.start_observed * item.sigma / kMagnitudesPerLnFlux;
    }
    data.items.push_back(item);
    const double quoted_nu = constants::kSpeedOfLight / m.quadrature.quoted_wavelength_m;
    data.min_frequency_hz = std::min(data.min_frequency_hz, quoted_nu);
    data.max_frequency_hz = std::max(data.max_frequency_hz, quoted_nu);
  }
  data.min_node_frequency_hz = photometry.min_frequency_hz;
  data.max_node_frequency_hz = photometry.max_frequency_hz;
  return data;
}

// ----- results ------------------------------------------------------------------------------

const FittedParameter& ModelFitResult::parameter(const std::string& name) const {
  for (const FittedParameter& p : parameters) {
    if (p.info.name == name) return p;
  }
  throw std::out_of_range("no parameter " + name);
}

std::vector<double> ModelFitResult::internal_values() const {
  std::vector<double> u;
  for (const FittedParameter& p : parameters) u.push_back(p.internal);
  return u;
}

double ModelFitResult::correlation_at(std::size_t a, std::size_t b) const {
  if (a == b) return 1.0;
  return covariance_at(a, b) / std::sqrt(covariance_at(a, a) * covariance_at(b, b));
}

double model_value(const ModelSpec& spec, const std::vector<ParameterInfo>& parameters, const std::vector<double>& internal,
                   Convention convention, double frequency_hz, bool with_extinction, int only_component) {
  const NodeModel model(spec, parameters, node_terms(spec, convention, {frequency_hz}, with_extinction));
  model.evaluate(internal.data(), 0, 1, false, only_component);
  return model.value()[0];
}

// ----- the fit ------------------------------------------------------------------------------

ModelFitResult fit_model(const ModelData& data, const ModelSpec& spec, const ModelFitOptions& options) {
  two_parameter_fit::validate_options(options.solver);
  if (!(spec.redshift >= 0.0) || !std::isfinite(spec.redshift)) throw InputError("model.redshift", "must be finite and >= 0");
  if (spec.kind == ModelKind::kModifiedBlackBody && (!(spec.reference_frequency_hz > 0.0) || !std::isfinite(spec.reference_frequency_hz))) {
    throw InputError("model.reference_frequency", "must be positive and finite");
  }
  if (spec.kind == ModelKind::kDilutedPlanck && spec.angular_radius && !(spec.angular_radius->radians > 0.0)) {
    throw InputError("model.angular_radius", "must be positive");
  }
  if (data.bands && options.solver.loss != RobustLoss::kNone) {
    throw InputError("options.loss", "robust losses are for spectra with many points; with band measurements, "
                                     "use errors and options.systematic_error instead");
  }
  if (data.items.empty()) throw InputError(data.bands ? "photometry" : "x", "no points are left to fit (all excluded?)");

  ModelFitResult result;
  result.spec = spec;
  const std::vector<ParameterInfo> infos = model_parameters(spec);
  result.parameters = controlled_parameters(infos, options);
  for (std::size_t i = 0; i < result.parameters.size(); ++i) {
    if (!result.parameters[i].fixed) result.free.push_back(i);
  }
  if (data.items.size() < result.free.size()) {
    throw InputError(data.bands ? "photometry" : "x",
                     "has " + std::to_string(data.items.size()) + " " + (data.bands ? "band(s)" : "point(s)") +
                         " to fit, fewer than the " + std::to_string(result.free.size()) + " free parameters");
  }

  const ItemModel model(data, spec, infos);
  std::vector<double> u = result.internal_values();
  StartSearch(data, spec, infos, result.parameters, options).run(u);
  for (std::size_t p = 0; p < u.size(); ++p) {
    const FittedParameter& fp = result.parameters[p];
    if (!fp.fixed) u[p] = std::clamp(u[p], internal_bound(fp.info, fp.lower), internal_bound(fp.info, fp.upper));
  }

  std::vector<double> sigma;
  for (const ModelData::Item& item : data.items) sigma.push_back(item.sigma);
  const bool robust = options.solver.loss != RobustLoss::kNone;
  if (robust && !data.has_errors) {
    // The loss scale is in units of the scatter: estimate it robustly (1.4826 MAD) at the start.
    const double mad = median_absolute_residual(model, u, sigma);
    if (mad > 0.0) for (double& s : sigma) s *= 1.4826 * mad;
  }

  ceres::Problem::Options problem_options;
  problem_options.loss_function_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
  ceres::Problem problem(problem_options);
  std::vector<double*> blocks;
  for (double& value : u) blocks.push_back(&value);
  std::unique_ptr<ceres::LossFunction> loss = ceres_settings::make_loss(options.solver.loss, options.solver.loss_scale);
  if (loss) {
    for (std::size_t j = 0; j < data.items.size(); ++j) problem.AddResidualBlock(new ItemResiduals(&model, &sigma, j, j + 1), loss.get(), blocks);
  } else {
    problem.AddResidualBlock(new ItemResiduals(&model, &sigma, 0, data.items.size()), nullptr, blocks);
  }
  for (std::size_t p = 0; p < u.size(); ++p) {
    FittedParameter& fp = result.parameters[p];
    if (fp.prior && !fp.fixed) problem.AddResidualBlock(new PriorResidual(fp.info, *fp.prior), nullptr, blocks[p]);
    if (fp.fixed) {
      problem.SetParameterBlockConstant(blocks[p]);
      continue;
    }
    const double lo = internal_bound(fp.info, fp.lower), hi = internal_bound(fp.info, fp.upper);
    if (std::isfinite(lo)) problem.SetParameterLowerBound(blocks[p], 0, lo);
    if (std::isfinite(hi)) problem.SetParameterUpperBound(blocks[p], 0, hi);
  }
  const ceres::Solver::Options solver_options =
      ceres_settings::solver_options(options.solver.max_iterations, options.solver.time_budget_seconds);
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);
  result.termination = ceres_settings::termination_name(summary);
  result.converged = result.termination == "converged";
  result.solver_message = summary.message;
  result.iterations = std::max(static_cast<int>(summary.iterations.size()) - 1, 0);

  std::vector<double*> free_blocks;
  for (std::size_t p : result.free) free_blocks.push_back(blocks[p]);
  result.covariance_available = ceres_settings::covariance(problem, free_blocks, result.covariance);

  // Statistics of the data alone.
  double chi_square = 0.0;
  const Eigen::ArrayXd fitted = model.item_values(u);
  for (std::size_t j = 0; j < data.items.size(); ++j) {
    const double f = fitted[static_cast<Eigen::Index>(j)];
    const double r = model.residual(j, f, sigma).value;
    chi_square += r * r;
    if (robust) result.robust_cost += ceres_settings::robust_rho(options.solver.loss, options.solver.loss_scale, r * r);
    result.items.push_back({model.in_item_space(j, f), r});
  }
  result.chi_square_unscaled = chi_square;
  result.points_used = data.items.size();
  result.degrees_of_freedom = static_cast<int>(data.items.size()) - static_cast<int>(result.free.size());
  result.errors_estimated = !data.has_errors;
  const double residual_variance = result.degrees_of_freedom > 0 ? chi_square / result.degrees_of_freedom : 0.0;
  if (data.has_errors) {
    result.chi_square = chi_square;
    if (result.degrees_of_freedom > 0) result.p_value = boost::math::gamma_q(0.5 * result.degrees_of_freedom, 0.5 * chi_square);
  } else {
    result.residual_scatter = std::sqrt(residual_variance) * (data.bands ? 1.0 : sigma.front());
    if (result.degrees_of_freedom > 0) {
      for (double& c : result.covariance) c *= residual_variance;
      for (ItemFit& item : result.items) item.residual /= std::sqrt(residual_variance > 0.0 ? residual_variance : 1.0);
    } else {
      result.covariance_available = false;
    }
  }
  for (std::size_t p = 0; p < u.size(); ++p) {
    FittedParameter& fp = result.parameters[p];
    fp.internal = u[p];
    if (!fp.fixed) fp.value = fp.info.natural(u[p]);  // a fixed value stays as given, without round-off
    if (fp.prior) {
      const double r = (fp.value - fp.prior->mean) / fp.prior->sigma;
      result.prior_chi_square += r * r;
    }
    if (!fp.fixed) {
      const double lo = internal_bound(fp.info, fp.lower), hi = internal_bound(fp.info, fp.upper);
      const auto near = [](double a, double b) { return std::isfinite(b) && std::abs(a - b) <= 1e-9 * std::max(1.0, std::abs(b)); };
      fp.at_bound = near(u[p], lo) || near(u[p], hi);
    }
  }
  if (result.covariance_available) {
    for (std::size_t i = 0; i < result.free.size(); ++i) {
      const double variance = result.covariance_at(i, i);
      result.parameters[result.free[i]].internal_sigma = std::sqrt(std::max(variance, 0.0));
    }
  } else {
    result.covariance.clear();
  }
  order_components(model.nodes().layout(), result);
  add_model_warnings(data, model, sigma, result);
  return result;
}

// ----- the posterior --------------------------------------------------------------------------

struct ModelPosterior::Impl {
  const ModelFitResult& fit;
  std::vector<ParameterInfo> infos;
  ItemModel model;
  std::vector<double> sigma;
  RobustLoss loss;
  double loss_scale;
  std::vector<double> lower, upper;  // internal bounds of the free parameters
  mutable std::vector<double> u;
  // Profiles evaluate their trial points with the Jacobian, so that an accepted point's comes from
  // the model's cache; sampling needs none.
  mutable bool with_derivatives = false;

  Impl(const ModelData& data, const ModelFitResult& f, const ModelFitOptions& options)
      : fit(f), infos(model_parameters(f.spec)), model(data, f.spec, infos), loss(options.solver.loss),
        loss_scale(options.solver.loss_scale), u(f.internal_values()) {
    // The sigmas the fit's residuals were divided by: the items' own, or, without errors, scaled to
    // the fitted scatter (spectra: uniform sigma; bands: fractional).
    const double scatter = f.errors_estimated && f.degrees_of_freedom > 0 && f.chi_square_unscaled > 0.0
                               ? std::sqrt(f.chi_square_unscaled / f.degrees_of_freedom)
                               : 1.0;
    for (const ModelData::Item& item : data.items) sigma.push_back(item.sigma * scatter);
    for (std::size_t p : f.free) {
      const FittedParameter& fp = f.parameters[p];
      lower.push_back(internal_bound(fp.info, fp.lower));
      upper.push_back(internal_bound(fp.info, fp.upper));
    }
  }

  const std::vector<double>& full(const double* x) const {
    for (std::size_t i = 0; i < fit.free.size(); ++i) u[fit.free[i]] = x[i];
    return u;
  }

  // sum of rho(r^2) (plain: chi^2) over the items, or +inf where the model is not finite.
  double cost(const double* x, bool plain) const {
    const std::vector<double>& all = full(x);
    model.evaluate(all.data(), 0, sigma.size(), with_derivatives);
    double sum = 0.0;
    for (std::size_t j = 0; j < sigma.size(); ++j) {
      const double r = model.residual(j, model.flux(j), sigma).value;
      sum += plain ? r * r : ceres_settings::robust_rho(loss, loss_scale, r * r);
    }
    return std::isfinite(sum) ? sum : HUGE_VAL;
  }
};

ModelPosterior::ModelPosterior(const ModelData& data, const ModelFitResult& fit, const ModelFitOptions& options)
    : impl_(std::make_unique<Impl>(data, fit, options)) {}
ModelPosterior::~ModelPosterior() = default;

std::size_t ModelPosterior::dimension() const { return impl_->fit.free.size(); }

std::vector<double> ModelPosterior::at_fit() const {
  std::vector<double> x;
  for (std::size_t p : impl_->fit.free) x.push_back(impl_->fit.parameters[p].internal);
  return x;
}

std::array<double, 2> ModelPosterior::bounds(std::size_t i) const { return {impl_->lower[i], impl_->upper[i]}; }

double ModelPosterior::log_probability(const double* x) const {
  const Impl& m = *impl_;
  double log_prior = 0.0;
  for (std::size_t i = 0; i < m.fit.free.size(); ++i) {
    if (!(x[i] >= m.lower[i] && x[i] <= m.upper[i])) return -HUGE_VAL;
    const FittedParameter& fp = m.fit.parameters[m.fit.free[i]];
    if (fp.prior) {
      const double r = (fp.info.natural(x[i]) - fp.prior->mean) / fp.prior->sigma;
      log_prior -= 0.5 * r * r;
    }
  }
  const double cost = m.cost(x, false);
  return std::isfinite(cost) ? log_prior - 0.5 * cost : -HUGE_VAL;
}

double ModelPosterior::chi_square(const double* x) const { return impl_->cost(x, true); }

double ModelPosterior::log_probability_jeffreys(const double* x) const {
  const Impl& m = *impl_;
  m.with_derivatives = true;
  const double lp = log_probability(x);
  m.with_derivatives = false;
  if (!std::isfinite(lp)) return lp;
  // The Fisher information of the Gaussian residuals, J^T J with J_ja = dr_j/du_a, from the
  // derivatives the evaluation above left in the model's cache.
  const std::size_t dim = m.fit.free.size(), n = m.sigma.size();
  Eigen::MatrixXd information = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(dim), static_cast<Eigen::Index>(dim));
  std::vector<double> row(dim);
  for (std::size_t j = 0; j < n; ++j) {
    const double d_model = m.model.residual(j, m.model.flux(j), m.sigma).d_model;
    for (std::size_t a = 0; a < dim; ++a) row[a] = d_model * m.model.flux_derivative(j, m.fit.free[a]);
    for (std::size_t a = 0; a < dim; ++a) {
      for (std::size_t b = 0; b <= a; ++b) information(static_cast<Eigen::Index>(a), static_cast<Eigen::Index>(b)) += row[a] * row[b];
    }
  }
  const Eigen::LLT<Eigen::MatrixXd> llt(information.selfadjointView<Eigen::Lower>());
  if (llt.info() != Eigen::Success) return -HUGE_VAL;
  // ln sqrt(det I) = sum ln diag(L)
  const double log_root_det = llt.matrixL().toDenseMatrix().diagonal().array().log().sum();
  return std::isfinite(log_root_det) ? lp + log_root_det : -HUGE_VAL;
}

namespace {

// rho'(s) of the loss: the IRLS weight of a squared residual s (Ceres' loss_function.h).
double robust_weight(RobustLoss loss, double scale, double s) {
  const double b = scale * scale;
  switch (loss) {
    case RobustLoss::kNone: return 1.0;
    case RobustLoss::kHuber: return s > b ? std::sqrt(b / s) : 1.0;
    case RobustLoss::kCauchy: return 1.0 / (1.0 + s / b);
  }
  return 1.0;
}

}  // namespace

double ModelPosterior::profile(std::size_t fixed, double value, std::vector<double>& x) const {
  const Impl& m = *impl_;
  const std::size_t dim = m.fit.free.size();
  x[fixed] = value;
  m.with_derivatives = true;
  struct Reset {
    const Impl& m;
    ~Reset() { m.with_derivatives = false; }
  } reset{m};
  const auto total = [&](const std::vector<double>& at) {
    const double lp = log_probability(at.data());
    return std::isfinite(lp) ? -2.0 * lp : HUGE_VAL;
  };
  double cost = total(x);
  if (dim == 1 || !std::isfinite(cost)) return cost;
  std::vector<std::size_t> moving;  // indices into the free parameters
  for (std::size_t i = 0; i < dim; ++i) {
    if (i != fixed) moving.push_back(i);
  }
  const Eigen::Index k = static_cast<Eigen::Index>(moving.size());
  const std::size_t n = m.sigma.size();
  double lambda = 1e-3;
  for (int iteration = 0; iteration < 100; ++iteration) {
    // Residuals and Jacobian (in the moving parameters) of the data and the priors, IRLS-weighted.
    const std::vector<double>& all = m.full(x.data());
    m.model.evaluate(all.data(), 0, n, true);  // usually from the cache: the accepted trial point
    Eigen::MatrixXd jtj = Eigen::MatrixXd::Zero(k, k);
    Eigen::VectorXd jtr = Eigen::VectorXd::Zero(k);
    std::vector<double> row(static_cast<std::size_t>(k));
    for (std::size_t j = 0; j < n; ++j) {
      const ItemModel::Residual r = m.model.residual(j, m.model.flux(j), m.sigma);
      const double w = robust_weight(m.loss, m.loss_scale, r.value * r.value);
      for (std::size_t a = 0; a < row.size(); ++a) row[a] = r.d_model * m.model.flux_derivative(j, m.fit.free[moving[a]]);
      for (std::size_t a = 0; a < row.size(); ++a) {
        jtr[static_cast<Eigen::Index>(a)] += w * r.value * row[a];
        for (std::size_t b = 0; b <= a; ++b) jtj(static_cast<Eigen::Index>(a), static_cast<Eigen::Index>(b)) += w * row[a] * row[b];
      }
    }
    jtj = jtj.selfadjointView<Eigen::Lower>();
    for (Eigen::Index a = 0; a < k; ++a) {
      const std::size_t i = moving[static_cast<std::size_t>(a)];
      const FittedParameter& fp = m.fit.parameters[m.fit.free[i]];
      if (!fp.prior) continue;
      const double r = (fp.info.natural(x[i]) - fp.prior->mean) / fp.prior->sigma;
      const double d = fp.info.derivative(x[i]) / fp.prior->sigma;
      jtj(a, a) += d * d;
      jtr[a] += r * d;
    }
    bool improved = false;
    for (int attempt = 0; attempt < 12 && !improved; ++attempt, lambda *= 10.0) {
      Eigen::MatrixXd damped = jtj;
      damped.diagonal() *= 1.0 + lambda;
      const Eigen::VectorXd step = damped.ldlt().solve(-jtr);
      if (!step.allFinite()) continue;
      std::vector<double> trial = x;
      for (Eigen::Index a = 0; a < k; ++a) {
        const std::size_t i = moving[static_cast<std::size_t>(a)];
        trial[i] = std::clamp(x[i] + step[a], m.lower[i], m.upper[i]);
      }
      const double trial_cost = total(trial);
      if (trial_cost <= cost) {
        improved = true;
        const bool done = step.norm() < 1e-10 * (1.0 + Eigen::Map<const Eigen::VectorXd>(x.data(), static_cast<Eigen::Index>(dim)).norm()) ||
                          cost - trial_cost < 1e-12 * (1.0 + cost);
        x = trial;
        cost = trial_cost;
        lambda = std::max(lambda / 100.0, 1e-9);
        if (done) return cost;
      }
    }
    if (!improved) break;
  }
  return cost;
}

std::vector<double> ModelPosterior::all_internal(const double* x) const { return impl_->full(x); }

}  // namespace planckton
