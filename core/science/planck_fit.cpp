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
#include "science/constants.h"
#include "science/input_error.h"
#include "science/peaks.h"

namespace planckton {

namespace {

constexpr int kParameters = 2;  // ln T, ln scale
// Beyond this x the model is evaluated in log space so that tiny values neither underflow through
// the product prefactor * scale * exp(-x) nor lose precision (see planck.h).
constexpr double kLogSpaceThreshold = 600.0;
constexpr std::size_t kStartSubsample = 48;
constexpr double kExpm1Threshold = 1e-3;
constexpr double kStartGridRatio = 2.0;
constexpr int kGoldenSectionSteps = 16;
// The reduced frequency range over which data constrain a temperature (see the header).
constexpr double kStartMinX = 1e-3;
constexpr double kStartMaxX = 300.0;

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

// rho(s) of the loss for a squared residual s, as Ceres defines it (loss_function.h).
double robust_rho(RobustLoss loss, double scale, double s) {
  const double b = scale * scale;
  switch (loss) {
    case RobustLoss::kNone: return s;
    case RobustLoss::kHuber: return s > b ? 2.0 * std::sqrt(b * s) - b : s;
    case RobustLoss::kCauchy: return b * std::log1p(s / b);
  }
  return s;
}

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

struct GridNode {
  double log_temperature;
  double log_scale;
  double cost;
};

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
      cost += robust_rho(loss, loss_scale, r * r);
    }
  }
  return {log_temperature, usable ? std::log(scale) : -HUGE_VAL, usable ? cost : HUGE_VAL};
}

// Stage 1 of the method in the header, on an evenly spaced subsample.
GridNode grid_start(const MeasuredSpectrum& spectrum, const PointTerms& subsample, double log_t_min,
                    double log_t_max, RobustLoss loss, double loss_scale) {
  const double h_over_k = constants::kPlanckOverBoltzmann;
  double lo = std::max(log_t_min, std::log(h_over_k * spectrum.min_frequency_hz / kStartMaxX));
  double hi = std::min(log_t_max, std::log(h_over_k * spectrum.max_frequency_hz / kStartMinX));
  if (!(lo < hi)) {
    lo = log_t_min;
    hi = log_t_max;
  }
  const PlanckKernel kernel(subsample);
  const ProfileSums sums(subsample);
  const int nodes = std::clamp(static_cast<int>(std::ceil((hi - lo) / std::log(kStartGridRatio))) + 1, 3, 400);
  const double step = (hi - lo) / (nodes - 1);
  std::vector<GridNode> grid;
  grid.reserve(nodes);
  for (int j = 0; j < nodes; ++j) grid.push_back(profile_scale(kernel, sums, lo + j * step, loss, loss_scale));
  const auto best = std::min_element(grid.begin(), grid.end(),
                                     [](const GridNode& a, const GridNode& b) { return a.cost < b.cost; });
  const std::size_t b = static_cast<std::size_t>(best - grid.begin());
  if (!std::isfinite(best->cost)) return *best;
  // Golden-section search (J. Kiefer 1953) of the profiled cost between the neighbours of the best
  // node; the cost is unimodal there at the grid's resolution.
  constexpr double kInverseGolden = 0.6180339887498949;
  double a = grid[b == 0 ? 0 : b - 1].log_temperature;
  double d = grid[std::min(b + 1, grid.size() - 1)].log_temperature;
  GridNode left = profile_scale(kernel, sums, d - kInverseGolden * (d - a), loss, loss_scale);
  GridNode right = profile_scale(kernel, sums, a + kInverseGolden * (d - a), loss, loss_scale);
  for (int iteration = 0; iteration < kGoldenSectionSteps; ++iteration) {
    if (left.cost <= right.cost) {
      d = right.log_temperature;
      right = left;
      left = profile_scale(kernel, sums, d - kInverseGolden * (d - a), loss, loss_scale);
    } else {
      a = left.log_temperature;
      left = right;
      right = profile_scale(kernel, sums, a + kInverseGolden * (d - a), loss, loss_scale);
    }
  }
  const GridNode& refined = left.cost <= right.cost ? left : right;
  return refined.cost < best->cost ? refined : *best;
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

// The Gauss-Newton covariance (J^T J)^-1 of the parameters at the solution (e.g. W. H. Press et al.,
// Numerical Recipes, 3rd ed., section 15.5), for the fast path. Eigen's self-adjoint eigensolver
// detects a singular matrix the way ceres::Covariance's DENSE_SVD does (reciprocal condition number
// below 1e-14).
// The kernel must have just been evaluated, with the slope, at the solution. J^T J is summed from
// the two Jacobian columns (d r / d ln scale = -w m, d r / d ln T = -w m slope) without forming J.
bool gauss_newton_covariance(const PlanckKernel& kernel, std::array<double, 4>& out) {
  const Eigen::Index n = static_cast<Eigen::Index>(kernel.terms().size());
  const auto d_scale = kernel.terms().weight.head(n) * kernel.model().head(n);
  const auto d_temperature = d_scale * kernel.slope().head(n);
  Eigen::Matrix2d information;
  information(0, 0) = d_temperature.square().sum();
  information(0, 1) = information(1, 0) = (d_temperature * d_scale).sum();
  information(1, 1) = d_scale.square().sum();
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(information);
  const Eigen::Vector2d values = eigen.eigenvalues();
  if (!(values[0] > 1e-14 * values[1]) || !std::isfinite(values[1])) return false;
  const Eigen::Matrix2d covariance =
      eigen.eigenvectors() * values.cwiseInverse().asDiagonal() * eigen.eigenvectors().transpose();
  out = {covariance(0, 0), covariance(0, 1), covariance(1, 0), covariance(1, 1)};
  return true;
}

struct Bounds {
  double log_t_min;
  double log_t_max;
  std::optional<double> log_scale_max;
};

struct SolveOutcome {
  std::string termination;
  std::string message;
  int iterations = 0;
  bool covariance_available = false;
  std::array<double, 4> covariance{};
};

// ceres::TinySolver (Ceres 2.1) reads its cost before checking that the first evaluation succeeded;
// the functor below always succeeds (non-finite results are caught after the solve), so GCC's
// warning about that read does not apply.
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
// Fast path for plain least squares: ceres::TinySolver, Ceres' Levenberg-Marquardt for small dense
// problems, without the set-up cost of a ceres::Problem. It has no clock of its own, so it runs in
// rounds of kIterationsPerRound and the time budget is checked between rounds.
SolveOutcome solve_small_dense(const PlanckKernel& kernel, double* parameters, const PlanckFitOptions& options) {
  using Solver = ceres::TinySolver<PlanckTinyProblem>;
  constexpr int kIterationsPerRound = 20;
  const auto started = std::chrono::steady_clock::now();
  Solver solver;
  solver.options.parameter_tolerance = ceres_settings::kParameterTolerance;
  solver.options.function_tolerance = 0.0;
  solver.options.gradient_tolerance = 0.0;
  solver.options.cost_threshold = 0.0;
  Solver::Parameters x(parameters[0], parameters[1]);
  SolveOutcome outcome;
  while (true) {
    const int remaining = options.max_iterations - outcome.iterations;
    // TinySolver counts its first evaluation as iteration 0 and stops at max_num_iterations - 1.
    solver.options.max_num_iterations = std::min(remaining, kIterationsPerRound) + 1;
    const Solver::Summary& summary = solver.Solve(PlanckTinyProblem{&kernel}, &x);
    outcome.iterations += summary.iterations;
    if (summary.status != Solver::HIT_MAX_ITERATIONS) {
      outcome.termination = "converged";
      outcome.message = summary.status == Solver::RELATIVE_STEP_SIZE_TOO_SMALL
                            ? "relative step below the parameter tolerance"
                            : "cost change or gradient vanished";
      break;
    }
    if (outcome.iterations >= options.max_iterations) {
      outcome.termination = "iteration_limit";
      outcome.message = "maximum number of iterations reached";
      break;
    }
    const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    if (elapsed >= options.time_budget_seconds) {
      outcome.termination = "time_limit";
      outcome.message = "time budget of " + std::to_string(options.time_budget_seconds) + " s used up";
      break;
    }
  }
  parameters[0] = x[0];
  parameters[1] = x[1];
  return outcome;
}
#pragma GCC diagnostic pop

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
// per point so that the loss acts on each point; ceres::Covariance at the solution.
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

  const ceres::Solver::Options solver_options = ceres_settings::solver_options(options.max_iterations, options.time_budget_seconds);
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);

  SolveOutcome outcome;
  outcome.termination = ceres_settings::termination_name(summary);
  outcome.message = summary.message;
  outcome.iterations = static_cast<int>(summary.iterations.size()) - 1;

  ceres::Covariance::Options covariance_options;
  covariance_options.algorithm_type = ceres::DENSE_SVD;
  covariance_options.num_threads = 1;
  ceres::Covariance covariance(covariance_options);
  const std::vector<std::pair<const double*, const double*>> blocks = {{parameters, parameters}};
  outcome.covariance_available = covariance.Compute(blocks, &problem) &&
                                 covariance.GetCovarianceBlock(parameters, parameters, outcome.covariance.data());
  return outcome;
}

void validate_options(const PlanckFitOptions& options) {
  if (!(options.min_temperature_k > 0.0) || !(options.max_temperature_k > options.min_temperature_k) ||
      !std::isfinite(options.max_temperature_k)) {
    throw InputError("options.temperature_bounds", "must be [lo, hi] with 0 < lo < hi, finite, in K");
  }
  if (options.loss != RobustLoss::kNone && (!(options.loss_scale > 0.0) || !std::isfinite(options.loss_scale))) {
    throw InputError("options.loss.scale", "must be a positive finite number");
  }
  if (options.max_iterations < 1) throw InputError("options.max_iterations", "must be at least 1");
  if (!(options.time_budget_seconds > 0.0)) {
    throw InputError("options.time_budget_seconds", "must be positive");
  }
  if (options.max_scale && (!(*options.max_scale > 0.0) || !std::isfinite(*options.max_scale))) {
    throw InputError("options.max_scale", "must be a positive finite number");
  }
}

void add_diagnostic_warnings(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options,
                             PlanckFitResult& result) {
  const auto warn = [&](std::string code, std::string message) {
    result.warnings.push_back({std::move(code), std::move(message)});
  };
  if (result.errors_estimated) {
    warn("errors_estimated",
         "no y_error was given: all points have equal weight, the one-sigma scatter is estimated from "
         "the residuals and the intervals are scaled by it; chi-square and p-value are not reported");
  }
  if (!result.converged) {
    warn("not_converged", "the solver stopped before converging (" + result.termination + ": " +
                              result.solver_message + "); the values are its best estimate so far");
  }
  if (result.temperature_at_bound) {
    warn("temperature_at_bound", "the temperature sits at a bound of options.temperature_bounds [" +
                                     std::to_string(options.min_temperature_k) + ", " +
                                     std::to_string(options.max_temperature_k) + "] K; the interval is not reliable");
  }
  const double peak_nu = peak_frequency(peak_exponent(spectrum.y_unit.convention), result.temperature_k);
  if (peak_nu < spectrum.min_frequency_hz) {
    warn("peak_outside_data",
         "the fitted curve peaks below the lowest frequency (longest wavelength) of the data: the data "
         "cover only the Wien side, so the temperature rests on the curve's exponential fall-off");
  } else if (peak_nu > spectrum.max_frequency_hz) {
    warn("peak_outside_data",
         "the fitted curve peaks above the highest frequency (shortest wavelength) of the data: the data "
         "cover only the Rayleigh-Jeans side, where the shape hardly depends on temperature, so the "
         "temperature is weakly constrained (often only from below)");
  }
  if (result.p_value && *result.p_value < 1e-3) {
    warn("poor_fit", "p-value below 0.001: the model does not describe the data within their errors "
                     "(underestimated errors, lines or a source that is not a black body?)");
  }
  if (result.points_used < 3 * kParameters) {
    warn("few_points", "fewer points than three per free parameter: the intervals rest on few data");
  }
  if (!result.covariance_available) {
    warn("covariance_unavailable", "the covariance matrix is singular at the solution: the data do not "
                                   "constrain both temperature and scale; no errors are reported");
  }
}

}  // namespace

double PlanckFitResult::temperature_log_sigma() const { return std::sqrt(log_covariance[0]); }
double PlanckFitResult::scale_log_sigma() const { return std::sqrt(log_covariance[3]); }
double PlanckFitResult::log_correlation() const {
  return log_covariance[1] / std::sqrt(log_covariance[0] * log_covariance[3]);
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
    outcome = solve_small_dense(kernel, parameters, options);
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

  result.termination = outcome.termination;
  result.converged = outcome.termination == "converged";
  result.solver_message = outcome.message;
  result.iterations = outcome.iterations;
  result.temperature_k = std::exp(parameters[0]);
  result.scale = std::exp(parameters[1]);
  result.temperature_at_bound = std::abs(parameters[0] - bounds.log_t_min) < 1e-9 ||
                                std::abs(parameters[0] - bounds.log_t_max) < 1e-9;
  result.scale_at_bound = log_scale_max && std::abs(parameters[1] - *log_scale_max) < 1e-9;

  // Plain chi-square of the final residuals (not the robust cost).
  Eigen::ArrayXd residuals(static_cast<Eigen::Index>(n));
  kernel.evaluate(parameters[0], parameters[1], 0, residuals.size());
  kernel.residuals(0, residuals.size(), residuals.data());
  if (!general) outcome.covariance_available = gauss_newton_covariance(kernel, outcome.covariance);
  const double chi_square = residuals.square().sum();
  if (robust) {
    for (double r : residuals) result.robust_cost += robust_rho(options.loss, options.loss_scale, r * r);
  }
  result.degrees_of_freedom = static_cast<int>(n) - kParameters;
  const double residual_variance = result.degrees_of_freedom > 0 ? chi_square / result.degrees_of_freedom : 0.0;
  if (spectrum.has_errors()) {
    result.chi_square = chi_square;
    if (result.degrees_of_freedom > 0) {
      result.p_value = boost::math::gamma_q(0.5 * result.degrees_of_freedom, 0.5 * chi_square);
    }
  } else {
    result.residual_scatter_si = std::sqrt(residual_variance) / terms.weight[0];
  }

  if (outcome.covariance_available && !result.temperature_at_bound) {
    result.log_covariance = outcome.covariance;
    const double factor = result.errors_estimated ? residual_variance : 1.0;
    for (double& c : result.log_covariance) c *= factor;
    result.covariance_available = std::isfinite(result.log_covariance[0]) && result.log_covariance[0] > 0.0 &&
                                  (!result.errors_estimated || result.degrees_of_freedom > 0);
  }
  add_diagnostic_warnings(spectrum, options, result);
  return result;
}

}  // namespace planckton
