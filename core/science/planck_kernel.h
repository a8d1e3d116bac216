// The vectorised Planck model of the fits: scale * p(nu) / (e^x - 1) on many frequencies at once,
// with its log-temperature slope, allocation-free per evaluation. Internal to core/science (used by
// planck_fit.cpp on the data points and photometry_fit.cpp on the band quadrature nodes).
//
// Method: the prefactor p(nu) and h nu / k are per-point constants computed once per request (see
// planck.h for p); Eigen's packet exp evaluates e^-x for all points; 1 / (1 - e^-x) switches to
// expm1 below x = 1e-3 and the model to log space beyond x = 600, so that neither side loses
// precision or underflows early.
#pragma once

#include <Eigen/Dense>

#include <cmath>
#include <cstddef>
#include <limits>

namespace planckton {

// Beyond this x the model is evaluated in log space so that tiny values neither underflow through
// the product prefactor * scale * exp(-x) nor lose precision (see planck.h).
inline constexpr double kLogSpaceThreshold = 600.0;
inline constexpr double kExpm1Threshold = 1e-3;

// Per-point constants, computed once per request (never per iteration), as arrays so that the
// model vectorises (Eigen's packet exp).
struct PointTerms {
  Eigen::ArrayXd prefactor;      // p(nu) of planck.h
  Eigen::ArrayXd h_nu_over_k;    // x * T
  Eigen::ArrayXd observed;       // y, SI
  Eigen::ArrayXd weight;         // 1 / sigma
  double min_h_nu_over_k = 0.0;
  double max_h_nu_over_k = 0.0;

  std::size_t size() const { return static_cast<std::size_t>(observed.size()); }
};

// The model scale * p(nu) / (e^x - 1) and its log-temperature slope d ln(model) / d ln T =
// x / (1 - e^-x), on a range of points. Scratch space is allocated once, so evaluating allocates
// nothing.
class PlanckKernel {
 public:
  explicit PlanckKernel(const PointTerms& terms)
      : terms_(terms), x_(terms.size()), e_(terms.size()), inverse_one_minus_e_(terms.size()),
        model_(terms.size()), slope_(terms.size()) {}

  const PointTerms& terms() const { return terms_; }

  // with_slope = false skips the slope, for evaluations that need no Jacobian. Evaluating again at
  // the point of the previous call costs nothing: Levenberg-Marquardt evaluates an accepted trial
  // point a second time for its Jacobian, and the fit once more for its statistics.
  void evaluate(double log_temperature, double log_scale, Eigen::Index begin, Eigen::Index count,
                bool with_slope = true) const {
    const Evaluation call{log_temperature, log_scale, begin, count, with_slope};
    if (last_.covers(call)) return;
    last_ = call;
    const double inverse_temperature = std::exp(-log_temperature);
    const double scale = std::exp(log_scale);
    auto x = x_.head(count);
    auto e = e_.head(count);
    auto inverse_one_minus_e = inverse_one_minus_e_.head(count);
    x = terms_.h_nu_over_k.segment(begin, count) * inverse_temperature;
    e = (-x).exp();
    inverse_one_minus_e = 1.0 / (1.0 - e);
    // 1 - e^-x carries a relative rounding error of about 1e-16 / x; below x = 1e-3 (where that
    // would exceed 1e-13) expm1 takes over, so the Rayleigh-Jeans side keeps full precision.
    if (terms_.min_h_nu_over_k * inverse_temperature < kExpm1Threshold) {
      for (Eigen::Index k = 0; k < count; ++k) {
        if (x[k] < kExpm1Threshold) inverse_one_minus_e[k] = -1.0 / std::expm1(-x[k]);
      }
    }
    model_.head(count) = scale * terms_.prefactor.segment(begin, count) * e * inverse_one_minus_e;
    if (with_slope) slope_.head(count) = x * inverse_one_minus_e;
    // Deep on the Wien side the product would underflow before the value does: use logs.
    if (terms_.max_h_nu_over_k * inverse_temperature > kLogSpaceThreshold) {
      for (Eigen::Index k = 0; k < count; ++k) {
        if (x[k] > kLogSpaceThreshold) {
          model_[k] = std::exp(log_scale + std::log(terms_.prefactor[begin + k]) - x[k]);
          slope_[k] = x[k];
        }
      }
    }
  }

  // After evaluate(): residuals w (y - m) and, optionally, the two Jacobian columns.
  void residuals(Eigen::Index begin, Eigen::Index count, double* residuals) const {
    Eigen::Map<Eigen::ArrayXd>(residuals, count) =
        terms_.weight.segment(begin, count) * (terms_.observed.segment(begin, count) - model_.head(count));
  }
  void jacobian_columns(Eigen::Index begin, Eigen::Index count, double* d_log_temperature, double* d_log_scale) const {
    Eigen::Map<Eigen::ArrayXd> d_scale(d_log_scale, count);
    d_scale = -terms_.weight.segment(begin, count) * model_.head(count);
    Eigen::Map<Eigen::ArrayXd>(d_log_temperature, count) = d_scale * slope_.head(count);
  }
  const Eigen::ArrayXd& model() const { return model_; }
  const Eigen::ArrayXd& slope() const { return slope_; }

 private:
  struct Evaluation {
    double log_temperature = std::numeric_limits<double>::quiet_NaN();
    double log_scale = std::numeric_limits<double>::quiet_NaN();
    Eigen::Index begin = 0, count = 0;
    bool with_slope = false;
    bool covers(const Evaluation& e) const {
      return e.log_temperature == log_temperature && e.log_scale == log_scale && e.begin == begin &&
             e.count == count && (with_slope || !e.with_slope);
    }
  };

  const PointTerms& terms_;
  mutable Eigen::ArrayXd x_, e_, inverse_one_minus_e_, model_, slope_;
  mutable Evaluation last_;
};

}  // namespace planckton
