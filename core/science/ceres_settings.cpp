#include "science/ceres_settings.h"

namespace planckton::ceres_settings {

ceres::Solver::Options solver_options(int max_iterations, double time_budget_seconds) {
  ceres::Solver::Options options;
  options.linear_solver_type = ceres::DENSE_QR;
  options.max_num_iterations = max_iterations;
  options.max_solver_time_in_seconds = time_budget_seconds;
  options.function_tolerance = 1e-15;
  options.parameter_tolerance = kParameterTolerance;
  options.gradient_tolerance = 1e-20;
  options.logging_type = ceres::SILENT;
  options.num_threads = 1;
  return options;
}

std::unique_ptr<ceres::LossFunction> make_loss(RobustLoss loss, double scale) {
  switch (loss) {
    case RobustLoss::kNone: return nullptr;
    case RobustLoss::kHuber: return std::make_unique<ceres::HuberLoss>(scale);
    case RobustLoss::kCauchy: return std::make_unique<ceres::CauchyLoss>(scale);
  }
  return nullptr;
}

std::string termination_name(const ceres::Solver::Summary& summary) {
  switch (summary.termination_type) {
    case ceres::CONVERGENCE:
    case ceres::USER_SUCCESS: return "converged";
    case ceres::NO_CONVERGENCE:
      return summary.message.find("time") != std::string::npos ? "time_limit" : "iteration_limit";
    default: return "failed";
  }
}

}  // namespace planckton::ceres_settings
