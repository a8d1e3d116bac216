// The model family's kernel: the model of model.h at one frequency, with its derivatives by every
// parameter, from per-frequency constants computed once. Internal to core/science (model_fit.cpp
// fits with it, model_quantities.cpp derives peaks and fluxes from it).
#pragma once

#include <Eigen/Dense>

#include <algorithm>
#include <array>
#include <cmath>
#include <vector>

#include "science/constants.h"
#include "science/extinction.h"
#include "science/model.h"
#include "science/planck.h"
#include "science/planck_kernel.h"

namespace planckton::model_kernel {

inline constexpr double kExtinctionPerMagnitude = 0.9210340371976184;  // 0.4 ln 10: 10^(-0.4 A) = e^(-0.921 A)

// Where each role's parameter sits in the parameter list (-1 when the model has none).
struct Layout {
  int components = 1;
  std::array<int, 2> temperature{-1, -1};
  std::array<int, 2> scale{-1, -1};
  int beta = -1;
  int turnover = -1;
  int color_excess = -1;

  explicit Layout(const std::vector<ParameterInfo>& parameters) {
    for (std::size_t i = 0; i < parameters.size(); ++i) {
      const ParameterInfo& p = parameters[i];
      const int index = static_cast<int>(i);
      switch (p.role) {
        case ParameterRole::kTemperature: temperature[static_cast<std::size_t>(p.component)] = index; break;
        case ParameterRole::kScale: scale[static_cast<std::size_t>(p.component)] = index; break;
        case ParameterRole::kBeta: beta = index; break;
        case ParameterRole::kTurnoverFrequency: turnover = index; break;
        case ParameterRole::kColorExcess: color_excess = index; break;
      }
    }
    components = temperature[1] >= 0 ? 2 : 1;
  }
};

inline double extinction_wavelength(const ModelSpec& spec, double observed_frequency_hz) {
  const double nu = spec.extinction->frame == ExtinctionFrame::kRest ? observed_frequency_hz * (1.0 + spec.redshift)
                                                                      : observed_frequency_hz;
  return constants::kSpeedOfLight / nu;
}

// 0.4 ln 10 R_V A_lambda / A_V: the attenuation exponent per magnitude of E(B-V).
inline double extinction_term(const ModelSpec& spec, double observed_frequency_hz) {
  const double ratio = extinction_ratio(spec.extinction->law, extinction_wavelength(spec, observed_frequency_hz),
                                        spec.extinction->r_v, "model.extinction");
  return kExtinctionPerMagnitude * spec.extinction->r_v * ratio;
}

// The constants of the nodes (the frequencies the model is evaluated at), as arrays so that the
// model vectorises (Eigen's packet exp): computed once per request, never per iteration (the
// extinction curve included, which keeps a reddened fit within twice the cost of the plain one).
struct NodeTerms {
  Eigen::ArrayXd prefactor;      // p(nu) in the data's convention, observed frequency (planck.h)
  Eigen::ArrayXd log_prefactor;  // its logarithm, for the far Wien side
  Eigen::ArrayXd h_nu_over_k;    // rest frame: h (1 + z) nu / k
  Eigen::ArrayXd log_nu_rest;    // ln((1 + z) nu)
  Eigen::ArrayXd extinction;     // 0.4 ln 10 R_V A_lambda / A_V, per magnitude of E(B-V); 0 without
  double min_h_nu_over_k = 0.0;
  double max_h_nu_over_k = 0.0;

  Eigen::Index size() const { return h_nu_over_k.size(); }
};

// Node k of t at an observed frequency. Throws InputError outside the extinction law's range (when
// with_extinction).
inline void set_node(NodeTerms& t, Eigen::Index k, const ModelSpec& spec, Convention convention, double frequency_hz,
                     bool with_extinction) {
  const double rest = frequency_hz * (1.0 + spec.redshift);
  t.prefactor[k] = planck_prefactor(convention, frequency_hz);
  t.log_prefactor[k] = std::log(t.prefactor[k]);
  t.h_nu_over_k[k] = constants::kPlanckOverBoltzmann * rest;
  t.log_nu_rest[k] = std::log(rest);
  t.extinction[k] = spec.extinction && with_extinction ? extinction_term(spec, frequency_hz) : 0.0;
}

inline NodeTerms node_terms(const ModelSpec& spec, Convention convention, const std::vector<double>& frequency_hz,
                            bool with_extinction = true) {
  const Eigen::Index n = static_cast<Eigen::Index>(frequency_hz.size());
  NodeTerms t;
  for (Eigen::ArrayXd* a : {&t.prefactor, &t.log_prefactor, &t.h_nu_over_k, &t.log_nu_rest, &t.extinction}) a->resize(n);
  for (Eigen::Index k = 0; k < n; ++k) set_node(t, k, spec, convention, frequency_hz[static_cast<std::size_t>(k)], with_extinction);
  if (n > 0) {
    t.min_h_nu_over_k = t.h_nu_over_k.minCoeff();
    t.max_h_nu_over_k = t.h_nu_over_k.maxCoeff();
  }
  return t;
}

// The model at the nodes and its derivatives with respect to every parameter's internal value u,
// vectorised over a range of nodes and allocation-free per evaluation. As in planck_kernel.h,
// 1 / (e^x - 1) = e^-x / (1 - e^-x) with expm1 below x = 1e-3 and log space beyond x = 600, so that
// neither side loses precision or underflows early. Evaluating again at the point of the previous
// call costs nothing (Levenberg-Marquardt evaluates an accepted point twice).
class NodeModel {
 public:
  NodeModel(const ModelSpec& spec, const std::vector<ParameterInfo>& parameters, NodeTerms terms)
      : spec_(spec), layout_(parameters), terms_(std::move(terms)), parameter_count_(parameters.size()),
        log_reference_(std::log(spec.reference_frequency_hz)) {
    const Eigen::Index n = terms_.size();
    for (Eigen::ArrayXd* a : {&x_, &e_, &inverse_, &component_, &slope_, &shape_, &d_beta_, &d_turnover_, &attenuation_, &value_}) {
      a->resize(n);
    }
    derivatives_.resize(n, static_cast<Eigen::Index>(parameter_count_));
  }

  std::size_t parameter_count() const { return parameter_count_; }
  const Layout& layout() const { return layout_; }
  const ModelSpec& spec() const { return spec_; }
  const NodeTerms& terms() const { return terms_; }

  // Moves a one-node model to another frequency without allocating (for curves evaluated point by
  // point, e.g. the numerical peak search).
  void move_single_node(Convention convention, double frequency_hz, bool with_extinction) const {
    set_node(terms_, 0, spec_, convention, frequency_hz, with_extinction);
    terms_.min_h_nu_over_k = terms_.max_h_nu_over_k = terms_.h_nu_over_k[0];
    last_count_ = -1;  // the cache no longer applies
  }

  // After evaluate(): value().head(count) and derivatives().topRows(count) (column p: d value / d u_p).
  const Eigen::ArrayXd& value() const { return value_; }
  const Eigen::ArrayXXd& derivatives() const { return derivatives_; }

  // Nodes [begin, begin + count); only_component >= 0 evaluates that component alone.
  void evaluate(const double* u, Eigen::Index begin, Eigen::Index count, bool with_derivatives,
                int only_component = -1) const {
    if (cached(u, begin, count, with_derivatives, only_component)) return;
    auto value = value_.head(count);
    value.setZero();
    if (with_derivatives) derivatives_.topRows(count).setZero();
    auto attenuation = attenuation_.head(count);
    const double color_excess = layout_.color_excess >= 0 ? u[layout_.color_excess] : 0.0;
    if (color_excess != 0.0) {
      attenuation = (-color_excess * terms_.extinction.segment(begin, count)).exp();
    } else {
      attenuation.setOnes();
    }
    for (int c = 0; c < layout_.components; ++c) {
      if (only_component < 0 || c == only_component) add_component(u, c, begin, count, with_derivatives, color_excess);
    }
    if (with_derivatives && layout_.color_excess >= 0) {
      derivatives_.col(layout_.color_excess).head(count) = -terms_.extinction.segment(begin, count) * value;
    }
  }

 private:
  bool cached(const double* u, Eigen::Index begin, Eigen::Index count, bool with_derivatives, int only_component) const {
    const bool same = begin == last_begin_ && count == last_count_ && only_component == last_component_ &&
                      (last_with_derivatives_ || !with_derivatives) && last_u_.size() == parameter_count_ &&
                      std::equal(last_u_.begin(), last_u_.end(), u);
    if (same) return true;
    last_u_.assign(u, u + parameter_count_);
    last_begin_ = begin;
    last_count_ = count;
    last_with_derivatives_ = with_derivatives;
    last_component_ = only_component;
    return false;
  }

  void add_component(const double* u, int c, Eigen::Index begin, Eigen::Index count, bool with_derivatives,
                     double color_excess) const {
    const int it = layout_.temperature[static_cast<std::size_t>(c)];
    const int is = layout_.scale[static_cast<std::size_t>(c)];
    const bool dust = spec_.kind == ModelKind::kModifiedBlackBody;
    if (dust) shape(u, begin, count);  // first: it uses x_ and e_ as scratch
    const double inverse_temperature = std::exp(-u[it]);
    auto x = x_.head(count);
    auto e = e_.head(count);
    auto inverse = inverse_.head(count);  // 1 / (1 - e^-x)
    auto v = component_.head(count);
    auto slope = slope_.head(count);
    x = terms_.h_nu_over_k.segment(begin, count) * inverse_temperature;
    e = (-x).exp();
    inverse = 1.0 / (1.0 - e);
    if (terms_.min_h_nu_over_k * inverse_temperature < kExpm1Threshold) {
      for (Eigen::Index k = 0; k < count; ++k) {
        if (x[k] < kExpm1Threshold) inverse[k] = -1.0 / std::expm1(-x[k]);
      }
    }
    v = std::exp(u[is]) * terms_.prefactor.segment(begin, count) * e * inverse * attenuation_.head(count);
    if (dust) v *= shape_.head(count);
    slope = x * inverse;
    // Deep on the Wien side the product would underflow before the value does: use logs.
    if (terms_.max_h_nu_over_k * inverse_temperature > kLogSpaceThreshold) {
      for (Eigen::Index k = 0; k < count; ++k) {
        if (x[k] <= kLogSpaceThreshold) continue;
        const double log_shape = dust ? std::log(shape_[k]) : 0.0;
        v[k] = std::exp(u[is] + terms_.log_prefactor[begin + k] + log_shape - color_excess * terms_.extinction[begin + k] - x[k]);
        slope[k] = x[k];
      }
    }
    value_.head(count) += v;
    if (!with_derivatives) return;
    derivatives_.col(it).head(count) += v * slope;
    derivatives_.col(is).head(count) += v;
    if (layout_.beta >= 0) derivatives_.col(layout_.beta).head(count) += v * d_beta_.head(count);
    if (layout_.turnover >= 0) derivatives_.col(layout_.turnover).head(count) += v * d_turnover_.head(count);
  }

  // The modified black body's g and d ln g / d beta, d ln g / d ln nu_t, into shape_, d_beta_, d_turnover_.
  void shape(const double* u, Eigen::Index begin, Eigen::Index count) const {
    const double beta = u[layout_.beta];
    auto g = shape_.head(count);
    auto d_beta = d_beta_.head(count);
    if (spec_.opacity == DustOpacity::kOpticallyThin) {
      d_beta = terms_.log_nu_rest.segment(begin, count) - log_reference_;  // the lever ln(nu / nu_0)
      g = (beta * d_beta).exp();
      return;
    }
    auto d_turnover = d_turnover_.head(count);
    auto lever = x_.head(count);  // scratch: add_component computes x after the shape
    lever = terms_.log_nu_rest.segment(begin, count) - u[layout_.turnover];
    auto tau = e_.head(count);    // scratch likewise
    tau = (beta * lever).exp();
    for (Eigen::Index k = 0; k < count; ++k) {
      const double t = tau[k];
      const double one_minus = -std::expm1(-t);  // g = 1 - e^-tau
      // q = tau e^-tau / g -> 1 for tau -> 0 (optically thin), -> 0 for tau -> infinity (thick).
      const double q = t < 1e-10 ? 1.0 - 0.5 * t : t * std::exp(-t) / one_minus;
      g[k] = one_minus;
      d_beta[k] = q * lever[k];
      d_turnover[k] = -beta * q;
    }
  }

  const ModelSpec& spec_;
  Layout layout_;
  mutable NodeTerms terms_;
  std::size_t parameter_count_;
  double log_reference_;
  mutable Eigen::ArrayXd x_, e_, inverse_, component_, slope_, shape_, d_beta_, d_turnover_, attenuation_, value_;
  mutable Eigen::ArrayXXd derivatives_;
  mutable std::vector<double> last_u_;
  mutable Eigen::Index last_begin_ = -1, last_count_ = -1;
  mutable bool last_with_derivatives_ = false;
  mutable int last_component_ = -1;
};

}  // namespace planckton::model_kernel
