#include "science/model_quantities.h"

#include <boost/math/special_functions/gamma.hpp>
#include <boost/math/special_functions/zeta.hpp>
#include <boost/math/tools/roots.hpp>

#include <cmath>
#include <functional>
#include <numbers>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/model_kernel.h"
#include "science/peaks.h"

namespace planckton {

namespace {

using namespace model_kernel;
using std::numbers::pi;

using Quantity = std::function<double(const std::vector<double>& u)>;

}  // namespace

double quadratic_form(const ModelFitResult& fit, const std::vector<double>& g) {
  double sum = 0.0;
  for (std::size_t a = 0; a < g.size(); ++a) {
    for (std::size_t b = 0; b < g.size(); ++b) sum += g[a] * fit.covariance_at(a, b) * g[b];
  }
  return sum;
}

namespace {

// The delta method of the header: Gaussian in ln Q, the gradient by central differences.
class Propagation {
 public:
  Propagation(const ModelFitResult& fit, const std::optional<Distance>& distance, const IntervalRule& rule)
      : fit_(fit), u_(fit.internal_values()), distance_(distance), rule_(rule) {}

  const std::vector<double>& u() const { return u_; }

  Estimate positive(const Quantity& q, double distance_power = 0.0, double extra_log_variance = 0.0) const {
    Estimate e = linearised(q, distance_power, extra_log_variance);
    if (rule_ && std::isfinite(e.value)) {
      double extra = extra_log_variance;
      if (distance_) extra += distance_power * distance_power * distance_->relative_error * distance_->relative_error;
      rule_(q, extra, e);
    }
    return e;
  }

  Estimate linearised(const Quantity& q, double distance_power, double extra_log_variance) const {
    Estimate e;
    e.value = q(u_);
    if (!fit_.covariance_available || !(e.value > 0.0) || !std::isfinite(e.value)) return e;
    double variance = quadratic_form(fit_, log_gradient(q, e.value)) + extra_log_variance;
    if (distance_) variance += distance_power * distance_power * distance_->relative_error * distance_->relative_error;
    const double sigma = std::sqrt(std::max(variance, 0.0));
    if (!std::isfinite(sigma) || !std::isfinite(e.value * sigma)) return e;
    e.error = e.value * sigma;
    // Intervals only where both ends are numbers (a huge sigma overflows exp).
    if (std::isfinite(e.value * std::exp(sigma))) e.interval_68 = {e.value * std::exp(-sigma), e.value * std::exp(sigma)};
    if (std::isfinite(e.value * std::exp(2.0 * sigma))) {
      e.interval_95 = {e.value * std::exp(-2.0 * sigma), e.value * std::exp(2.0 * sigma)};
    }
    return e;
  }

  // A quantity of either sign (beta, E(B-V)): symmetric Gaussian intervals.
  Estimate linear(double value, std::optional<double> sigma) const {
    Estimate e;
    e.value = value;
    if (!sigma || !fit_.covariance_available) return e;
    e.error = *sigma;
    e.interval_68 = {value - *sigma, value + *sigma};
    e.interval_95 = {value - 2.0 * *sigma, value + 2.0 * *sigma};
    return e;
  }

 private:
  std::vector<double> log_gradient(const Quantity& q, double value) const {
    std::vector<double> g(fit_.free.size());
    for (std::size_t i = 0; i < fit_.free.size(); ++i) {
      const std::size_t p = fit_.free[i];
      const double sigma = fit_.parameters[p].internal_sigma.value_or(0.0);
      const double h = sigma > 0.0 ? 1e-2 * sigma : 1e-6;
      std::vector<double> up = u_, down = u_;
      up[p] += h;
      down[p] -= h;
      const double qu = q(up), qd = q(down);
      g[i] = qu > 0.0 && qd > 0.0 ? (std::log(qu) - std::log(qd)) / (2.0 * h) : (qu - qd) / (2.0 * h * value);
    }
    return g;
  }

  const ModelFitResult& fit_;
  std::vector<double> u_;
  const std::optional<Distance>& distance_;
  const IntervalRule& rule_;
};

// The fitted model in its rest frame and without extinction: the intrinsic curve the peaks and
// bolometric fluxes belong to.
struct IntrinsicModel {
  ModelSpec spec;
  std::vector<ParameterInfo> infos;
  NodeModel model;

  explicit IntrinsicModel(const ModelFitResult& fit)
      : spec(rest_spec(fit.spec)), infos(model_parameters(fit.spec)),
        model(spec, infos, node_terms(spec, Convention::kEnergyPerFrequency, {1e12}, false)) {}

  static ModelSpec rest_spec(ModelSpec spec) {
    spec.redshift = 0.0;
    return spec;
  }

  double log_f_nu(const std::vector<double>& u, double log_nu, int component = -1) const {
    model.move_single_node(Convention::kEnergyPerFrequency, std::exp(log_nu), false);
    model.evaluate(u.data(), 0, 1, false, component);
    return std::log(model.value()[0]);
  }
  double temperature(const std::vector<double>& u, int c) const {
    return std::exp(u[static_cast<std::size_t>(model.layout().temperature[static_cast<std::size_t>(c)])]);
  }
  double log_scale(const std::vector<double>& u, int c) const {
    return u[static_cast<std::size_t>(model.layout().scale[static_cast<std::size_t>(c)])];
  }
  double beta(const std::vector<double>& u) const { return u[static_cast<std::size_t>(model.layout().beta)]; }
  // Closed-form peaks: one Planck curve, or optically thin dust (exponent n + beta).
  bool analytic_peaks(int component) const {
    if (spec.kind == ModelKind::kTwoTemperature) return component >= 0;
    return !(spec.kind == ModelKind::kModifiedBlackBody && spec.opacity == DustOpacity::kGeneral);
  }
};

// d ln(nu^n F_nu / nu^3) / d ln nu, by central differences of the model (step 1e-5 in ln nu, where
// truncation and rounding errors are both below 1e-9).
double log_slope(const IntrinsicModel& m, const std::vector<double>& u, double n, double log_nu, int component) {
  constexpr double h = 1e-5;
  return n - 3.0 + (m.log_f_nu(u, log_nu + h, component) - m.log_f_nu(u, log_nu - h, component)) / (2.0 * h);
}

// The rest-frame peak frequency of nu^(n-3) F_nu (the convention with exponent n), or NaN when the
// curve has no interior maximum. near: a previous peak to bracket around (for the gradients).
double numeric_peak(const IntrinsicModel& m, const std::vector<double>& u, double n, int component,
                    std::optional<double> near = std::nullopt) {
  const auto slope = [&](double log_nu) { return log_slope(m, u, n, log_nu, component); };
  const auto height = [&](double log_nu) { return (n - 3.0) * log_nu + m.log_f_nu(u, log_nu, component); };
  std::vector<std::pair<double, double>> brackets;
  if (near) {
    for (double width = 0.05; width < 5.0 && brackets.empty(); width *= 4.0) {
      const double a = std::log(*near) - width, b = std::log(*near) + width;
      if (slope(a) > 0.0 && slope(b) < 0.0) brackets.push_back({a, b});
    }
  }
  if (brackets.empty()) {
    double t_min = HUGE_VAL, t_max = 0.0;
    for (int c = 0; c < m.model.layout().components; ++c) {
      t_min = std::min(t_min, m.temperature(u, c));
      t_max = std::max(t_max, m.temperature(u, c));
    }
    const double lo = std::log(1e-3 * constants::kBoltzmann * t_min / constants::kPlanck);
    const double hi = std::log(50.0 * constants::kBoltzmann * t_max / constants::kPlanck);
    constexpr double kStep = 0.05;
    double previous = slope(lo);
    for (double a = lo; a < hi; a += kStep) {
      const double next = slope(a + kStep);
      if (previous > 0.0 && next <= 0.0) brackets.push_back({a, a + kStep});
      previous = next;
    }
  }
  double best = std::numeric_limits<double>::quiet_NaN(), best_height = -HUGE_VAL;
  for (const auto& [a, b] : brackets) {
    boost::uintmax_t iterations = 100;
    const auto root = boost::math::tools::toms748_solve(slope, a, b, boost::math::tools::eps_tolerance<double>(48),
                                                        iterations);
    const double log_nu = 0.5 * (root.first + root.second);
    if (const double h = height(log_nu); h > best_height) {
      best_height = h;
      best = std::exp(log_nu);
    }
  }
  return best;
}

// Rest-frame peak frequency in the convention of exponent n; NaN without a maximum.
double peak_frequency_rest(const IntrinsicModel& m, const std::vector<double>& u, double n, int component,
                           std::optional<double> near = std::nullopt) {
  if (!m.analytic_peaks(component)) return numeric_peak(m, u, n, component, near);
  const int c = std::max(component, 0);
  double exponent = n;
  if (m.spec.kind == ModelKind::kModifiedBlackBody) exponent += m.beta(u);
  if (!(exponent > 1.0)) return std::numeric_limits<double>::quiet_NaN();
  return peak_reduced_frequency(exponent) * constants::kBoltzmann * m.temperature(u, c) / constants::kPlanck;
}

std::vector<PeakEstimate> peaks_of(const IntrinsicModel& m, const Propagation& propagation, int component,
                                   double frequency_factor) {
  std::vector<PeakEstimate> peaks;
  for (const PeakConvention& convention : peak_conventions()) {
    const double n = convention.exponent;
    const double at_fit = peak_frequency_rest(m, propagation.u(), n, component);
    if (!std::isfinite(at_fit)) continue;
    const Quantity nu = [&, at_fit](const std::vector<double>& u) {
      return peak_frequency_rest(m, u, n, component, at_fit) * frequency_factor;
    };
    const Quantity lambda = [&](const std::vector<double>& u) { return constants::kSpeedOfLight / nu(u); };
    const bool one_temperature = m.spec.kind != ModelKind::kTwoTemperature || component >= 0;
    const double x = one_temperature ? constants::kPlanckOverBoltzmann * at_fit / m.temperature(propagation.u(), std::max(component, 0))
                                     : std::numeric_limits<double>::quiet_NaN();
    // Beyond one Planck curve, the curve is the model's: "maximum of B_nu, energy per ..." becomes
    // "maximum of the fitted model's intrinsic curve (without extinction), energy per ...".
    std::string description(convention.description);
    if (m.spec.kind != ModelKind::kPlanck && m.spec.kind != ModelKind::kDilutedPlanck) {
      const std::size_t comma = description.find(", ");
      const std::string what = comma != std::string::npos ? description.substr(comma + 2)
                                                          : description.substr(std::string("maximum of the ").size());
      description = "maximum of the fitted model's intrinsic curve (without extinction), " + what;
    }
    peaks.push_back({std::string(convention.id), description, convention.reported_as_wavelength, x,
                     propagation.positive(nu), propagation.positive(lambda)});
  }
  return peaks;
}

// Bolometric flux of one component (or all, -1) of the intrinsic curve in the observed frame, W m^-2
// (or per steradian): the closed forms of the header, or a trapezoid rule in ln nu (smooth and
// decaying at both ends, so it converges geometrically) for the general opacity form.
double bolometric(const IntrinsicModel& m, const std::vector<double>& u, double z, int component) {
  if (component < 0 && m.model.layout().components == 2) return bolometric(m, u, z, 0) + bolometric(m, u, z, 1);
  const int c = std::max(component, 0);
  const double t = m.temperature(u, c), scale = std::exp(m.log_scale(u, c));
  const double observed_t = t / (1.0 + z);
  if (m.spec.kind != ModelKind::kModifiedBlackBody) return scale * constants::kStefanBoltzmann * std::pow(observed_t, 4) / pi;
  if (m.spec.opacity == DustOpacity::kOpticallyThin) {
    const double beta = m.beta(u), p = 4.0 + beta;
    return scale * std::pow((1.0 + z) / m.spec.reference_frequency_hz, beta) * 2.0 * constants::kPlanck /
           (constants::kSpeedOfLight * constants::kSpeedOfLight) *
           std::pow(constants::kBoltzmann * observed_t / constants::kPlanck, p) * std::tgamma(p) * boost::math::zeta(p);
  }
  // Rest-frame integral, then (1 + z)^-4 to the observed frame (as for the black body).
  const double lo = std::log(1e-4 * constants::kBoltzmann * t / constants::kPlanck);
  const double hi = std::log(60.0 * constants::kBoltzmann * t / constants::kPlanck);
  constexpr int kPanels = 2000;
  const double step = (hi - lo) / kPanels;
  double sum = 0.0;
  for (int i = 0; i <= kPanels; ++i) {
    const double log_nu = lo + i * step;
    const double f = std::exp(m.log_f_nu(u, log_nu, c) + log_nu);  // F_nu nu: integrand in ln nu
    sum += (i == 0 || i == kPanels) ? 0.5 * f : f;
  }
  return sum * step / std::pow(1.0 + z, 4);
}

void check_inputs(const std::optional<Distance>& distance, const std::optional<DustOpacityInput>& dust) {
  if (distance && (!(distance->metres > 0.0) || !std::isfinite(distance->metres) ||
                   !(distance->relative_error >= 0.0) || !std::isfinite(distance->relative_error))) {
    throw InputError("options.distance", "must have a positive finite value and a non-negative error");
  }
  if (dust && (!(dust->kappa_m2_per_kg > 0.0) || !std::isfinite(dust->kappa_m2_per_kg) || !(dust->frequency_hz > 0.0) ||
               !std::isfinite(dust->frequency_hz))) {
    throw InputError("model.dust_opacity", "needs a positive finite opacity and frequency");
  }
}

}  // namespace

ModelQuantities derive_model_quantities(const ModelFitResult& fit, const FluxDensityUnit& y_unit,
                                        const std::optional<Distance>& distance,
                                        const std::optional<DustOpacityInput>& dust_opacity, const IntervalRule& rule) {
  check_inputs(distance, dust_opacity);
  const Propagation propagation(fit, distance, rule);
  const IntrinsicModel m(fit);
  const Layout& layout = m.model.layout();
  const double z = fit.spec.redshift;
  ModelQuantities out;

  for (const FittedParameter& p : fit.parameters) {
    if (!p.info.logarithmic) {
      out.parameters.push_back(propagation.linear(p.value, p.internal_sigma));
      continue;
    }
    // A known angular radius's own error widens the dilution factor's (zeta proportional to 1 / theta).
    const double theta_error = p.info.name == "dilution_factor" && fit.spec.angular_radius ? fit.spec.angular_radius->relative_error : 0.0;
    const std::size_t index = out.parameters.size();
    Estimate e = propagation.linearised([&, index](const std::vector<double>& u) { return fit.parameters[index].info.natural(u[index]); },
                                        0.0, theta_error * theta_error);
    if (p.fixed) {
      e = Estimate{};
      e.value = p.value;
    }
    out.parameters.push_back(e);
  }

  out.peaks = peaks_of(m, propagation, -1, 1.0 / (1.0 + z));
  if (z > 0.0) {
    out.rest_frame_peaks = peaks_of(m, propagation, -1, 1.0);
    for (int c = 0; c < layout.components; ++c) {
      out.observed_temperatures_k.push_back(
          propagation.positive([&, c](const std::vector<double>& u) { return m.temperature(u, c) / (1.0 + z); }));
    }
  }
  if (y_unit.relative) {
    out.notes.push_back("relative spectrum: no bolometric flux, radius or luminosity");
    return out;
  }
  const Quantity total = [&](const std::vector<double>& u) { return bolometric(m, u, z, -1); };
  if (y_unit.per_steradian) {
    out.bolometric_radiance_w_m2_sr = propagation.positive(total);
  } else {
    out.bolometric_flux_w_m2 = propagation.positive(total);
  }
  if (layout.components == 2) {
    const double all = total(propagation.u());
    for (int c = 0; c < 2; ++c) {
      ComponentQuantities q;
      q.temperature_k = propagation.positive([&, c](const std::vector<double>& u) { return m.temperature(u, c); });
      q.bolometric_flux = propagation.positive([&, c](const std::vector<double>& u) { return bolometric(m, u, z, c); });
      q.share = all > 0.0 ? q.bolometric_flux.value / all : 0.0;
      q.peaks = peaks_of(m, propagation, c, 1.0 / (1.0 + z));
      if (!y_unit.per_steradian) {
        q.angular_radius_rad = propagation.positive([&, c](const std::vector<double>& u) { return std::sqrt(std::exp(m.log_scale(u, c)) / pi); });
      }
      out.components.push_back(std::move(q));
    }
  }
  if (y_unit.per_steradian) return out;

  // D_A = D_L / (1 + z)^2 for the radius; the distance given is D_L.
  const double angular_to_radius = distance ? distance->metres / ((1.0 + z) * (1.0 + z)) : 0.0;
  if (fit.spec.kind == ModelKind::kPlanck) {
    out.angular_radius_rad = propagation.positive([&](const std::vector<double>& u) { return std::sqrt(std::exp(m.log_scale(u, 0)) / pi); });
    if (distance) {
      out.radius_m = propagation.positive(
          [&](const std::vector<double>& u) { return std::sqrt(std::exp(m.log_scale(u, 0)) / pi) * angular_to_radius; }, 1.0);
    }
  } else if (fit.spec.kind == ModelKind::kDilutedPlanck && fit.spec.angular_radius) {
    const AngularRadius& theta = *fit.spec.angular_radius;
    Estimate given;
    given.value = theta.radians;
    given.error = theta.radians * theta.relative_error;
    given.interval_68 = {theta.radians * std::exp(-theta.relative_error), theta.radians * std::exp(theta.relative_error)};
    given.interval_95 = {theta.radians * std::exp(-2 * theta.relative_error), theta.radians * std::exp(2 * theta.relative_error)};
    out.angular_radius_rad = given;
    if (distance) {
      out.radius_m = propagation.positive([&](const std::vector<double>&) { return theta.radians * angular_to_radius; }, 1.0,
                                          theta.relative_error * theta.relative_error);
    }
  } else if (fit.spec.kind == ModelKind::kDilutedPlanck) {
    out.notes.push_back("no angular radius was given: only theta zeta is constrained (angular_radius_dilution); "
                        "give model.angular_radius, or model.radius with options.distance, to fit the dilution factor");
  }
  if (distance) {
    out.luminosity_w = propagation.positive(
        [&](const std::vector<double>& u) { return 4.0 * pi * distance->metres * distance->metres * total(u); }, 2.0);
  }
  if (fit.spec.kind == ModelKind::kModifiedBlackBody && dust_opacity) {
    if (!distance) {
      out.notes.push_back("dust mass needs options.distance as well as model.dust_opacity");
    } else if (z > 0.0) {
      out.notes.push_back("dust mass is not derived for a redshift > 0 (the opacity and distance would need a cosmology)");
    } else {
      const double log_reference = std::log(fit.spec.reference_frequency_hz);
      out.dust_mass_kg = propagation.positive(
          [&](const std::vector<double>& u) {
            const double log_nu0 = layout.turnover >= 0 ? u[static_cast<std::size_t>(layout.turnover)] : log_reference;
            return std::exp(m.log_scale(u, 0) + m.beta(u) * (std::log(dust_opacity->frequency_hz) - log_nu0)) *
                   distance->metres * distance->metres / dust_opacity->kappa_m2_per_kg;
          },
          2.0);
    }
  }
  return out;
}

}  // namespace planckton
