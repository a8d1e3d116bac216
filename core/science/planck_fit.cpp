#include "science/planck_fit.h"

#include <ceres/ceres.h>
#include <ceres/tiny_solver.h>

#include <Eigen/Dense>

#include <algorithm>
#include <chrono>
#include <boost/math/special_functions/gamma.hpp>
#include <cmath>
#include <memory>
#include <limits>
#include <numeric>
#include <optional>

#include "science/ceres_settings.h"
#include "science/two_parameter_fit.h"
#include "science/constants.h"
#include "science/input_error.h"
#include "science/peaks.h"
#include "science/planck_kernel.h"

namespace planckton {

namespace {

using namespace two_parameter_fit;

constexpr std::size_t kStartSubsample = 48;

PointTerms make_point_terms(const MeasuredSpectrum& spectrum, const std::vector<std::size_t>& points,
                            double uniform_weight) {
  const Eigen::Index n = static_cast<Eigen::Index>(points.size());
  PointTerms terms;
  terms.prefactor.resize(n);
  terms.h_nu_over_k.resize(n);
  terms.observed.resize(n);
  terms.weight.resize(n);
  for (Eigen::Index k = 0; k < n; ++k) {
    const std::size_t i = points[static_cast<std::size_t>(k)];
    const double nu = spectrum.frequency_hz[i];
    terms.prefactor[k] = planck_prefactor(spectrum.y_unit.convention, nu);
    terms.h_nu_over_k[k] = constants::kPlanckOverBoltzmann * nu;
    terms.observed[k] = spectrum.value_si[i];
    terms.weight[k] = spectrum.has_errors() ? 1.0 / spectrum.error_si[i] : uniform_weight;
  }
  terms.min_h_nu_over_k = terms.h_nu_over_k.minCoeff();
  terms.max_h_nu_over_k = terms.h_nu_over_k.maxCoeff();
  return terms;
}

std::vector<std::size_t> all_points(std::size_t n) {
  std::vector<std::size_t> points(n);
  std::iota(points.begin(), points.end(), 0);
  return points;
}

// Residuals of the points [begin, end) for ceres::Problem, parameters {ln T, ln scale}; the
// Jacobian is row-major as Ceres expects.
class PlanckResiduals final : public ceres::CostFunction {
 public:
  PlanckResiduals(const PlanckKernel* kernel, Eigen::Index begin, Eigen::Index end)
      : kernel_(kernel), begin_(begin), count_(end - begin), columns_(2 * (end - begin)) {
    set_num_residuals(static_cast<int>(count_));
    mutable_parameter_block_sizes()->push_back(kParameters);
  }

  bool Evaluate(double const* const* parameters, double* residuals, double** jacobians) const override {
    kernel_->evaluate(parameters[0][0], parameters[0][1], begin_, count_);
    kernel_->residuals(begin_, count_, residuals);
    if (jacobians != nullptr && jacobians[0] != nullptr) {
      kernel_->jacobian_columns(begin_, count_, columns_.data(), columns_.data() + count_);
      for (Eigen::Index k = 0; k < count_; ++k) {
        jacobians[0][2 * k] = columns_[k];
        jacobians[0][2 * k + 1] = columns_[count_ + k];
      }
    }
    return true;
  }

 private:
  const PlanckKernel* kernel_;
  Eigen::Index begin_, count_;
  mutable Eigen::ArrayXd columns_;
};

// The same residuals for ceres::TinySolver (column-major Jacobian).
struct PlanckTinyProblem {
  using Scalar = double;
  enum { NUM_RESIDUALS = Eigen::Dynamic, NUM_PARAMETERS = kParameters };

  const PlanckKernel* kernel;
  int NumResiduals() const { return static_cast<int>(kernel->terms().size()); }
  bool operator()(const double* parameters, double* residuals, double* jacobian) const {
    const Eigen::Index n = NumResiduals();
    // Always with the slope, so that the Jacobian of an accepted trial point comes from the cache.
    kernel->evaluate(parameters[0], parameters[1], 0, n);
    kernel->residuals(0, n, residuals);
    if (jacobian != nullptr) kernel->jacobian_columns(0, n, jacobian, jacobian + n);
    return true;
  }
};

std::vector<std::size_t> evenly_spaced_subsample(const MeasuredSpectrum& spectrum, std::size_t count) {
  std::vector<std::size_t> order(spectrum.size());
  std::iota(order.begin(), order.end(), 0);
  // Spectra usually arrive sorted (by wavelength or frequency, either way); sort only when not.
  const auto& nu = spectrum.frequency_hz;
  const bool monotonic = std::is_sorted(nu.begin(), nu.end()) || std::is_sorted(nu.rbegin(), nu.rend());
  if (!monotonic) {
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return nu[a] < nu[b]; });
  }
  if (order.size() <= count) return order;
  std::vector<std::size_t> picked(count);
  for (std::size_t j = 0; j < count; ++j) picked[j] = order[(j * (order.size() - 1)) / (count - 1)];
  return picked;
}

// The weighted sums of the data that the closed-form scale needs, computed once per subsample.
struct ProfileSums {
  Eigen::ArrayXd w2;   // w^2
  Eigen::ArrayXd w2y;  // w^2 y
  double yy = 0.0;     // sum w^2 y^2

  explicit ProfileSums(const PointTerms& t)
      : w2(t.weight.square()), w2y(w2 * t.observed), yy((w2y * t.observed).sum()) {}
};

// Best scale in closed form for a fixed temperature, and the (robust) cost there, on the points
// of the kernel.
GridNode profile_scale(const PlanckKernel& kernel, const ProfileSums& sums, double log_temperature,
                       RobustLoss loss, double loss_scale) {
  const PointTerms& t = kernel.terms();
  const Eigen::Index n = static_cast<Eigen::Index>(t.size());
  kernel.evaluate(log_temperature, 0.0, 0, n, false);
  const auto f = kernel.model().head(n);
  const double yf = (sums.w2y * f).sum();
  const double ff = (sums.w2 * f.square()).sum();
  const bool usable = ff > 0.0 && std::isfinite(ff) && yf > 0.0;
  const double scale = usable ? yf / ff : 0.0;
  double cost = usable ? std::max(sums.yy - yf * scale, 0.0) : sums.yy;
  if (loss != RobustLoss::kNone) {
    cost = 0.0;
    for (Eigen::Index k = 0; k < n; ++k) {
      const double r = t.weight[k] * (t.observed[k] - scale * f[k]);
      cost += ceres_settings::robust_rho(loss, loss_scale, r * r);
    }
  }
  return {log_temperature, usable ? std::log(scale) : -HUGE_VAL, usable ? cost : HUGE_VAL};
}

// Stage 1 of the method in the header, on an evenly spaced subsample.
GridNode grid_start(const MeasuredSpectrum& spectrum, const PointTerms& subsample, double log_t_min,
                    double log_t_max, RobustLoss loss, double loss_scale) {
  const auto [lo, hi] = start_range(spectrum.min_frequency_hz, spectrum.max_frequency_hz, log_t_min, log_t_max);
  const PlanckKernel kernel(subsample);
  const ProfileSums sums(subsample);
  return search_log_temperature(
      lo, hi, [&](double log_t) { return profile_scale(kernel, sums, log_t, loss, loss_scale); });
}

double median_absolute_residual(const PlanckKernel& kernel, double log_temperature, double log_scale) {
  const Eigen::Index n = static_cast<Eigen::Index>(kernel.terms().size());
  std::vector<double> absolute(static_cast<std::size_t>(n));
  kernel.evaluate(log_temperature, log_scale, 0, n);
  kernel.residuals(0, n, absolute.data());
  for (double& a : absolute) a = std::abs(a);
  const auto middle = absolute.begin() + static_cast<std::ptrdiff_t>(absolute.size() / 2);
  std::nth_element(absolute.begin(), middle, absolute.end());
  return *middle;
}

// The kernel must have just been evaluated, with the slope, at the solution. The Jacobian columns are
// d r / d ln scale = -w m and d r / d ln T = -w m slope (the sign does not matter for J^T J).
bool gauss_newton_covariance(const PlanckKernel& kernel, std::array<double, 4>& out) {
  const Eigen::Index n = static_cast<Eigen::Index>(kernel.terms().size());
  const Eigen::ArrayXd d_scale = kernel.terms().weight.head(n) * kernel.model().head(n);
  const Eigen::ArrayXd d_temperature = d_scale * kernel.slope().head(n);
  return covariance_from_columns(d_temperature, d_scale, out);
}

struct Bounds {
  double log_t_min;
  double log_t_max;
  std::optional<double> log_scale_max;
};

// The best ln T at a fixed ln scale, by Gauss-Newton in ln T alone with step halving (each step
// must lower the cost), kept within the temperature bounds. With the scale held at its upper
// bound it starts the general path on (or next to) the bounded optimum: a cost that is nearly
// quadratic and whose free optimum lies above the bound has its bounded optimum on the bound, and
// Ceres' projected steps along the bound would otherwise approach it only slowly when temperature
// and scale are strongly correlated.
double refine_temperature_at_scale(const PlanckKernel& kernel, double log_temperature, double log_scale,
                                   const Bounds& bounds) {
  const Eigen::Index n = static_cast<Eigen::Index>(kernel.terms().size());
  Eigen::ArrayXd residuals(n), d_log_temperature(n), d_log_scale(n);
  const auto cost_at = [&](double log_t) {
    kernel.evaluate(log_t, log_scale, 0, n);
    kernel.residuals(0, n, residuals.data());
    return residuals.square().sum();
  };
  double cost = cost_at(log_temperature);
  for (int iteration = 0; iteration < 50 && std::isfinite(cost); ++iteration) {
    kernel.jacobian_columns(0, n, d_log_temperature.data(), d_log_scale.data());
    const double curvature = d_log_temperature.square().sum();
    if (!(curvature > 0.0)) break;
    double step = -(d_log_temperature * residuals).sum() / curvature;
    bool improved = false;
    for (int halving = 0; halving < 30 && !improved; ++halving, step *= 0.5) {
      const double trial = std::clamp(log_temperature + step, bounds.log_t_min, bounds.log_t_max);
      const double trial_cost = cost_at(trial);
      if (trial_cost <= cost) {
        improved = true;
        const bool done = std::abs(trial - log_temperature) < ceres_settings::kParameterTolerance;
        log_temperature = trial;
        cost = trial_cost;
        if (done) return log_temperature;
      }
    }
    if (!improved) break;  // otherwise the kernel and residuals hold the accepted point
  }
  return log_temperature;
}

// General path: a ceres::Problem with bounds on ln T and, for a robust loss, one residual block
// per point so that the loss acts on each point; the covariance at the solution (ceres_settings.h).
SolveOutcome solve_general(const PlanckKernel& kernel, double* parameters, const PlanckFitOptions& options,
                           const Bounds& bounds) {
  const Eigen::Index n = static_cast<Eigen::Index>(kernel.terms().size());
  ceres::Problem::Options problem_options;
  problem_options.loss_function_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
  ceres::Problem problem(problem_options);
  std::unique_ptr<ceres::LossFunction> loss = ceres_settings::make_loss(options.loss, options.loss_scale);
  if (loss) {
    for (Eigen::Index i = 0; i < n; ++i) {
      problem.AddResidualBlock(new PlanckResiduals(&kernel, i, i + 1), loss.get(), parameters);
    }
  } else {
    problem.AddResidualBlock(new PlanckResiduals(&kernel, 0, n), nullptr, parameters);
  }
  problem.SetParameterLowerBound(parameters, 0, bounds.log_t_min);
  problem.SetParameterUpperBound(parameters, 0, bounds.log_t_max);
  if (bounds.log_scale_max) problem.SetParameterUpperBound(parameters, 1, *bounds.log_scale_max);

  return solve_problem(problem, parameters, options);
}

}  // namespace

double PlanckFitResult::temperature_log_sigma() const { return std::sqrt(log_covariance[0]); }
double PlanckFitResult::scale_log_sigma() const { return std::sqrt(log_covariance[3]); }
double PlanckFitResult::log_correlation() const {
  return log_covariance[1] / std::sqrt(log_covariance[0] * log_covariance[3]);
}

ModelPoint fitted_curve(const PlanckFitResult& fit, Convention convention, double frequency_hz) {
  ModelPoint point;
  point.value = fit.scale * planck_radiance(convention, frequency_hz, fit.temperature_k);
  if (fit.covariance_available) {
    const double s = planck_log_temperature_slope(reduced_frequency(frequency_hz, fit.temperature_k));
    const auto& c = fit.log_covariance;
    point.log_sigma = std::sqrt(std::max(s * s * c[0] + 2.0 * s * c[1] + c[3], 0.0));
  }
  return point;
}

PlanckFitResult fit_planck(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options) {
  validate_options(options);
  const std::size_t n = spectrum.size();
  if (n == 0) throw InputError("x", "no points are left to fit (all excluded?)");
  if (n < static_cast<std::size_t>(kParameters)) {
    throw InputError("x", "has " + std::to_string(n) + " point(s) to fit, fewer than the " +
                              std::to_string(kParameters) + " free parameters (temperature, scale)");
  }

  // Without errors, a uniform weight makes the residuals of order one, which keeps the solver's
  // tolerances meaningful whatever the unit of y; the covariance is rescaled afterwards.
  double mean_square = 0.0;
  for (double v : spectrum.value_si) mean_square += v * v;
  const double uniform_weight = 1.0 / std::sqrt(mean_square / static_cast<double>(n));
  PointTerms terms = make_point_terms(spectrum, all_points(n), uniform_weight);
  const PointTerms subsample =
      make_point_terms(spectrum, evenly_spaced_subsample(spectrum, kStartSubsample), uniform_weight);

  std::optional<double> log_scale_max;
  if (options.max_scale) log_scale_max = std::log(*options.max_scale);
  const Bounds bounds{std::log(options.min_temperature_k), std::log(options.max_temperature_k), log_scale_max};
  const bool robust = options.loss != RobustLoss::kNone;

  PlanckFitResult result;
  result.points_used = n;
  result.errors_estimated = !spectrum.has_errors();

  GridNode start = grid_start(spectrum, subsample, bounds.log_t_min, bounds.log_t_max,
                              spectrum.has_errors() ? options.loss : RobustLoss::kNone, options.loss_scale);
  if (!std::isfinite(start.log_scale)) start.log_scale = 0.0;
  result.start_temperature_k = std::exp(start.log_temperature);
  const PlanckKernel kernel(terms);
  if (robust && !spectrum.has_errors()) {
    // The loss scale is in units of the scatter: estimate it robustly (1.4826 MAD, the normal
    // consistency factor) from the residuals at the start.
    const double mad = median_absolute_residual(kernel, start.log_temperature, start.log_scale);
    if (mad > 0.0) terms.weight /= 1.4826 * mad;
  }

  double parameters[kParameters] = {start.log_temperature, start.log_scale};
  SolveOutcome outcome;
  bool general = robust;
  if (!robust) {
    outcome = solve_small_dense(PlanckTinyProblem{&kernel}, parameters, options);
    const bool inside = parameters[0] >= bounds.log_t_min && parameters[0] <= bounds.log_t_max;
    const bool finite = std::isfinite(parameters[0]) && std::isfinite(parameters[1]);
    if (!inside || !finite) {
      general = true;
      parameters[0] = start.log_temperature;
      parameters[1] = start.log_scale;
    } else if (log_scale_max && parameters[1] > *log_scale_max) {
      general = true;  // above the scale's bound
    }
  }
  if (general && log_scale_max && parameters[1] > *log_scale_max) {
    // Ceres needs a feasible start, and the bounded optimum lies on the bound (or next to it): start
    // from the best temperature with the scale at the bound.
    parameters[1] = *log_scale_max;
    parameters[0] = refine_temperature_at_scale(kernel, parameters[0], parameters[1], bounds);
  }
  if (general) outcome = solve_general(kernel, parameters, options, bounds);

  result.scale_at_bound = log_scale_max && std::abs(parameters[1] - *log_scale_max) < 1e-9;
  // Plain chi-square of the final residuals (not the robust cost).
  Eigen::ArrayXd residuals(static_cast<Eigen::Index>(n));
  kernel.evaluate(parameters[0], parameters[1], 0, residuals.size());
  kernel.residuals(0, residuals.size(), residuals.data());
  if (!general) outcome.covariance_available = gauss_newton_covariance(kernel, outcome.covariance);
  if (robust) {
    for (double r : residuals) result.robust_cost += ceres_settings::robust_rho(options.loss, options.loss_scale, r * r);
  }
  const double residual_variance = summarise(outcome, parameters, bounds.log_t_min, bounds.log_t_max,
                                             residuals.square().sum(), n, spectrum.has_errors(), result);
  if (!spectrum.has_errors()) result.residual_scatter_si = std::sqrt(residual_variance) / terms.weight[0];
  add_warnings({spectrum.y_unit.convention, spectrum.min_frequency_hz, spectrum.max_frequency_hz, "points"}, options,
               result);
  return result;
}

}  // namespace planckton
