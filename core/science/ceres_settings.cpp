#include "science/ceres_settings.h"

#include <Eigen/Dense>

#include <cmath>

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

double robust_rho(RobustLoss loss, double scale, double s) {
  const double b = scale * scale;
  switch (loss) {
    case RobustLoss::kNone: return s;
    case RobustLoss::kHuber: return s > b ? 2.0 * std::sqrt(b * s) - b : s;
    case RobustLoss::kCauchy: return b * std::log1p(s / b);
  }
  return s;
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

bool covariance(ceres::Problem& problem, const std::vector<double*>& blocks, std::vector<double>& out) {
  if (blocks.empty()) return false;
  ceres::Problem::EvaluateOptions evaluate;
  evaluate.parameter_blocks = blocks;
  ceres::CRSMatrix jacobian;
  if (!problem.Evaluate(evaluate, nullptr, nullptr, nullptr, &jacobian)) return false;
  const Eigen::Index n = jacobian.num_cols;
  Eigen::MatrixXd information = Eigen::MatrixXd::Zero(n, n);
  for (int row = 0; row < jacobian.num_rows; ++row) {
    for (int a = jacobian.rows[row]; a < jacobian.rows[row + 1]; ++a) {
      for (int b = jacobian.rows[row]; b < jacobian.rows[row + 1]; ++b) {
        information(jacobian.cols[a], jacobian.cols[b]) += jacobian.values[a] * jacobian.values[b];
      }
    }
  }
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(information);
  const Eigen::VectorXd values = eigen.eigenvalues();
  if (!std::isfinite(values.maxCoeff()) || !(values.minCoeff() > 1e-14 * values.maxCoeff())) return false;
  const Eigen::MatrixXd inverse = eigen.eigenvectors() * values.cwiseInverse().asDiagonal() * eigen.eigenvectors().transpose();
  if (!inverse.allFinite()) return false;
  out.resize(static_cast<std::size_t>(n * n));
  Eigen::Map<Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(out.data(), n, n) = inverse;
  return true;
}

}  // namespace planckton::ceres_settings
