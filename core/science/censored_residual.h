// The censored residual of an upper limit (photometry.h): -2 ln Phi(u) enters chi-square as the
// square of r = sqrt(-2 ln Phi(u)), u = (limit - model) / sigma (M. Sawicki, PASP 124, 1208 (2012)).
// Internal to core/science (photometry_fit.cpp, model_fit.cpp).
#pragma once

#include <algorithm>
#include <cmath>
#include <numbers>

namespace planckton {

// -2 ln Phi(u) and d/du of sqrt(-2 ln Phi(u)) for the censored residual of an upper limit
// (photometry.h). Phi(u) = erfc(-u / sqrt 2) / 2; beyond u = -37 erfc underflows and the asymptotic
// series of the Mills ratio takes over (Abramowitz & Stegun 26.2.12).
struct Censored {
  double residual;    // sqrt(-2 ln Phi(u)) >= 0
  double derivative;  // d residual / d u
};
inline Censored censored(double u) {
  constexpr double kInverseSqrtTwo = 0.7071067811865476;
  const double density = std::exp(-0.5 * u * u) / std::sqrt(2.0 * std::numbers::pi);
  double minus_two_log_phi = 0.0, mills = 0.0;  // mills = phi / Phi
  if (u > -37.0) {
    const double phi = 0.5 * std::erfc(-u * kInverseSqrtTwo);
    minus_two_log_phi = u > 0.0 ? -2.0 * std::log1p(-0.5 * std::erfc(u * kInverseSqrtTwo)) : -2.0 * std::log(phi);
    mills = density / phi;
  } else {
    const double v = 1.0 / (u * u);
    minus_two_log_phi = u * u + 2.0 * std::log(-u) + std::log(2.0 * std::numbers::pi) - 2.0 * std::log1p(-v + 3.0 * v * v);
    mills = -u / (1.0 - v + 3.0 * v * v);
  }
  const double residual = std::sqrt(std::max(minus_two_log_phi, 0.0));
  return {residual, residual > 0.0 ? -mills / residual : 0.0};
}

}  // namespace planckton
