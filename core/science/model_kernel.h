// The model family's kernel: the model of model.h at one frequency, with its derivatives by every
// parameter, from per-frequency constants computed once. Internal to core/science (model_fit.cpp
// fits with it, model_quantities.cpp derives peaks and fluxes from it).
#pragma once

#include <array>
#include <cmath>
#include <vector>

#include "science/constants.h"
#include "science/extinction.h"
#include "science/model.h"
#include "science/planck.h"

namespace planckton::model_kernel {

inline constexpr double kExtinctionPerMagnitude = 0.9210340371976184;  // 0.4 ln 10: 10^(-0.4 A) = e^(-0.921 A)

// ln(1 / (e^x - 1)) and its log-temperature slope d ln / d ln T = x / (1 - e^-x), for x > 0,
// without overflow on the Wien side or cancellation on the Rayleigh-Jeans side.
struct Occupation {
  double log_value;
  double slope;
};
inline Occupation planck_occupation(double x) {
  if (x > 30.0) {
    const double e = std::exp(-x);
    return {-x - std::log1p(-e), x / (1.0 - e)};
  }
  const double em1 = std::expm1(x);
  return {-std::log(em1), x * (em1 + 1.0) / em1};
}

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

// The constants of one frequency: computed once per request, never per iteration (the extinction
// curve included, which keeps a reddened fit within twice the cost of the plain one).
struct NodeTerm {
  double log_prefactor = 0.0;  // ln p(nu) in the data's convention, observed frequency
  double h_nu_over_k = 0.0;    // rest frame: h (1 + z) nu / k
  double log_nu_rest = 0.0;    // ln((1 + z) nu)
  double extinction = 0.0;     // 0.4 ln 10 R_V A_lambda / A_V, per magnitude of E(B-V); 0 without
};

inline double extinction_wavelength(const ModelSpec& spec, double observed_frequency_hz) {
  const double nu = spec.extinction->frame == ExtinctionFrame::kRest ? observed_frequency_hz * (1.0 + spec.redshift)
                                                                      : observed_frequency_hz;
  return constants::kSpeedOfLight / nu;
}

inline double extinction_term(const ModelSpec& spec, double observed_frequency_hz) {
  const double ratio = extinction_ratio(spec.extinction->law, extinction_wavelength(spec, observed_frequency_hz),
                                        spec.extinction->r_v, "model.extinction");
  return kExtinctionPerMagnitude * spec.extinction->r_v * ratio;
}

// Throws InputError outside the extinction law's range (when with_extinction).
inline NodeTerm node_term(const ModelSpec& spec, Convention convention, double frequency_hz, bool with_extinction = true) {
  const double rest = frequency_hz * (1.0 + spec.redshift);
  NodeTerm t;
  t.log_prefactor = std::log(planck_prefactor(convention, frequency_hz));
  t.h_nu_over_k = constants::kPlanckOverBoltzmann * rest;
  t.log_nu_rest = std::log(rest);
  if (spec.extinction && with_extinction) t.extinction = extinction_term(spec, frequency_hz);
  return t;
}

// The model at a frequency and its derivatives with respect to every parameter's internal value u.
class NodeModel {
 public:
  NodeModel(const ModelSpec& spec, const std::vector<ParameterInfo>& parameters)
      : spec_(spec), layout_(parameters), parameter_count_(parameters.size()),
        log_reference_(std::log(spec.reference_frequency_hz)) {}

  std::size_t parameter_count() const { return parameter_count_; }
  const Layout& layout() const { return layout_; }
  const ModelSpec& spec() const { return spec_; }

  // The value at a node; with `derivative` (parameter_count() long), adds d value / d u into it.
  // only_component >= 0 evaluates that component alone.
  double evaluate(const double* u, const NodeTerm& term, double* derivative, int only_component = -1) const {
    const double log_attenuation = layout_.color_excess >= 0 ? -u[layout_.color_excess] * term.extinction : 0.0;
    double total = 0.0;
    for (int c = 0; c < layout_.components; ++c) {
      if (only_component >= 0 && c != only_component) continue;
      const int it = layout_.temperature[static_cast<std::size_t>(c)];
      const int is = layout_.scale[static_cast<std::size_t>(c)];
      const Occupation n = planck_occupation(term.h_nu_over_k * std::exp(-u[it]));
      double log_shape = 0.0, d_beta = 0.0, d_turnover = 0.0;
      if (spec_.kind == ModelKind::kModifiedBlackBody) shape(u, term, log_shape, d_beta, d_turnover);
      const double v = std::exp(term.log_prefactor + u[is] + log_shape + n.log_value + log_attenuation);
      total += v;
      if (derivative != nullptr) {
        derivative[it] += v * n.slope;
        derivative[is] += v;
        if (layout_.beta >= 0) derivative[layout_.beta] += v * d_beta;
        if (layout_.turnover >= 0) derivative[layout_.turnover] += v * d_turnover;
      }
    }
    if (derivative != nullptr && layout_.color_excess >= 0) derivative[layout_.color_excess] -= term.extinction * total;
    return total;
  }

 private:
  // ln g of the modified black body and its derivatives by beta and by ln nu_t.
  void shape(const double* u, const NodeTerm& term, double& log_shape, double& d_beta, double& d_turnover) const {
    const double beta = u[layout_.beta];
    if (spec_.opacity == DustOpacity::kOpticallyThin) {
      const double lever = term.log_nu_rest - log_reference_;
      log_shape = beta * lever;
      d_beta = lever;
      return;
    }
    const double lever = term.log_nu_rest - u[layout_.turnover];
    const double tau = std::exp(beta * lever);
    const double g = -std::expm1(-tau);
    // q = tau e^-tau / g -> 1 for tau -> 0 (optically thin), -> 0 for tau -> infinity (thick).
    const double q = tau < 1e-10 ? 1.0 - 0.5 * tau : tau * std::exp(-tau) / g;
    log_shape = std::log(g);
    d_beta = q * lever;
    d_turnover = -beta * q;
  }

  const ModelSpec& spec_;
  Layout layout_;
  std::size_t parameter_count_;
  double log_reference_;
};

}  // namespace planckton::model_kernel
