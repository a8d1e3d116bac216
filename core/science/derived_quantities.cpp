#include "science/derived_quantities.h"

#include <cmath>
#include <numbers>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/peaks.h"

namespace planckton {

namespace {

struct Monomial {
  double log_constant;
  double temperature_power;
  double scale_power;
  double distance_power = 0.0;
};

Estimate evaluate(const Monomial& q, const PlanckFitResult& fit, const std::optional<Distance>& distance) {
  const double log_d = distance ? std::log(distance->metres) : 0.0;
  const double log_value = q.log_constant + q.temperature_power * std::log(fit.temperature_k) +
                           q.scale_power * std::log(fit.scale) + q.distance_power * log_d;
  Estimate estimate;
  estimate.value = std::exp(log_value);
  if (!fit.covariance_available) return estimate;
  const auto& c = fit.log_covariance;
  const double a = q.temperature_power, b = q.scale_power;
  double variance = a * a * c[0] + 2.0 * a * b * c[1] + b * b * c[3];
  if (distance) variance += q.distance_power * q.distance_power * distance->relative_error * distance->relative_error;
  const double sigma = std::sqrt(std::max(variance, 0.0));
  estimate.error = estimate.value * sigma;
  estimate.interval_68 = {std::exp(log_value - sigma), std::exp(log_value + sigma)};
  estimate.interval_95 = {std::exp(log_value - 2.0 * sigma), std::exp(log_value + 2.0 * sigma)};
  return estimate;
}

}  // namespace

DerivedQuantities derive_quantities(const PlanckFitResult& fit, const FluxDensityUnit& y_unit,
                                    const std::optional<Distance>& distance) {
  if (distance && (!(distance->metres > 0.0) || !std::isfinite(distance->metres) ||
                   !(distance->relative_error >= 0.0) || !std::isfinite(distance->relative_error))) {
    throw InputError("options.distance", "must have a positive finite value and a non-negative error");
  }
  using std::numbers::pi;
  DerivedQuantities out;
  out.temperature_k = evaluate({0.0, 1.0, 0.0}, fit, distance);
  out.scale = evaluate({0.0, 0.0, 1.0}, fit, distance);

  for (const PeakConvention& convention : peak_conventions()) {
    const double x = peak_reduced_frequency(convention.exponent);
    PeakEstimate peak{std::string(convention.id), std::string(convention.description),
                      convention.reported_as_wavelength, x, {}, {}};
    const double log_nu_per_kelvin = std::log(x * constants::kBoltzmann / constants::kPlanck);
    peak.frequency_hz = evaluate({log_nu_per_kelvin, 1.0, 0.0}, fit, distance);
    peak.wavelength_m = evaluate({std::log(constants::kSpeedOfLight) - log_nu_per_kelvin, -1.0, 0.0}, fit, distance);
    out.peaks.push_back(std::move(peak));
  }

  if (y_unit.relative) return out;
  const double log_sigma_over_pi = std::log(constants::kStefanBoltzmann / pi);
  if (y_unit.per_steradian) {
    out.bolometric_radiance_w_m2_sr = evaluate({log_sigma_over_pi, 4.0, 1.0}, fit, distance);
    return out;
  }
  out.bolometric_flux_w_m2 = evaluate({log_sigma_over_pi, 4.0, 1.0}, fit, distance);
  out.angular_radius_rad = evaluate({-0.5 * std::log(pi), 0.0, 0.5}, fit, distance);
  if (distance) {
    out.radius_m = evaluate({-0.5 * std::log(pi), 0.0, 0.5, 1.0}, fit, distance);
    out.luminosity_w = evaluate({std::log(4.0 * pi) + log_sigma_over_pi, 4.0, 1.0, 2.0}, fit, distance);
  }
  return out;
}

}  // namespace planckton
