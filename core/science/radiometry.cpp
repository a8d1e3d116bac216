#include "science/radiometry.h"

#include <ceres/ceres.h>

#include <Eigen/Dense>

#include <algorithm>
#include <boost/math/special_functions/gamma.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <memory>
#include <string>
#include <utility>

#include "science/ceres_settings.h"
#include "science/constants.h"
#include "science/input_error.h"
#include "science/peaks.h"
#include "science/planck.h"

namespace planckton {

namespace {

using constants::kPlanck;
using constants::kSecondRadiation;
using constants::kSpeedOfLight;

// First radiation constant for spectral radiance, c1L = 2 h c^2, W m^2 sr^-1 (Planck's law per
// unit wavelength is c1L / lambda^5 / (exp(c2 / (lambda T)) - 1)).
constexpr double kFirstRadiationRadiance = 2.0 * kPlanck * kSpeedOfLight * kSpeedOfLight;

// The bracket of the ratio temperature (the interface's promise).
constexpr double kRatioMinTemperatureK = 1.0;
constexpr double kRatioMaxTemperatureK = 1e7;

// Lower bound of e0 in the linear fit: (0, 1] as a closed box for Ceres.
constexpr double kMinEmissivity = 1e-9;
// |corr(ln T, epsilon)| above which the two are reported as degenerate.
constexpr double kDegenerateCorrelation = 0.95;
constexpr int kLinearParameters = 3;  // ln T, e0, q = s h (h the band's half-width)

// ln(e^x - 1) for x > 0: expm1 keeps the small-x side exact, and for large x it is
// x + ln(1 - e^-x), which never overflows.
double log_expm1(double x) { return x > 30.0 ? x + std::log1p(-std::exp(-x)) : std::log(std::expm1(x)); }

void require_positive_finite(double value, const char* field, const std::string& what) {
  if (!std::isfinite(value) || !(value > 0.0)) throw InputError(field, what + " must be positive and finite");
}

// Per-point constants of the linear grey-body fit, computed once per request.
struct GreyBodyTerms {
  Eigen::ArrayXd prefactor;    // p(nu) of planck.h, in the spectrum's convention
  Eigen::ArrayXd h_nu_over_k;  // x T
  Eigen::ArrayXd observed;     // y, SI
  Eigen::ArrayXd weight;       // 1 / sigma
  Eigen::ArrayXd band;         // t = (lambda - lambda_c) / h, in [-1, 1]
};

// Black-body radiance p / (e^x - 1) and d ln B / d ln T = x / (1 - e^-x) at x (planck.h).
struct Radiance {
  double value;
  double log_slope;
};

Radiance black_body(double prefactor, double x) {
  return {planck_from_prefactor(prefactor, x), planck_log_temperature_slope(x)};
}

// Residuals w (y - epsilon B) of the points [begin, end) for ceres::Problem, one parameter block
// {ln T, e0, q} with epsilon = e0 + q t; the Jacobian (row-major, as Ceres expects) is analytic:
//   d r / d ln T = -w epsilon B x / (1 - e^-x),  d r / d e0 = -w B,  d r / d q = -w B t.
// Evaluating allocates nothing.
class LinearGreyBodyResiduals final : public ceres::CostFunction {
 public:
  LinearGreyBodyResiduals(const GreyBodyTerms* terms, Eigen::Index begin, Eigen::Index end)
      : terms_(terms), begin_(begin), end_(end) {
    set_num_residuals(static_cast<int>(end - begin));
    mutable_parameter_block_sizes()->push_back(kLinearParameters);
  }

  bool Evaluate(double const* const* parameters, double* residuals, double** jacobians) const override {
    const double* p = parameters[0];
    const double inverse_temperature = std::exp(-p[0]);
    const GreyBodyTerms& t = *terms_;
    double* jacobian = jacobians != nullptr ? jacobians[0] : nullptr;
    for (Eigen::Index i = begin_; i < end_; ++i) {
      const Radiance b = black_body(t.prefactor[i], t.h_nu_over_k[i] * inverse_temperature);
      const double emissivity = p[1] + p[2] * t.band[i];
      const Eigen::Index k = i - begin_;
      residuals[k] = t.weight[i] * (t.observed[i] - emissivity * b.value);
      if (jacobian != nullptr) {
        const double d_emissivity = -t.weight[i] * b.value;
        jacobian[kLinearParameters * k] = d_emissivity * emissivity * b.log_slope;
        jacobian[kLinearParameters * k + 1] = d_emissivity;
        jacobian[kLinearParameters * k + 2] = d_emissivity * t.band[i];
      }
    }
    return true;
  }

 private:
  const GreyBodyTerms* terms_;
  Eigen::Index begin_, end_;
};

struct Band {
  double min_wavelength_m;
  double max_wavelength_m;
  double centre_m() const { return 0.5 * (min_wavelength_m + max_wavelength_m); }
  double half_width_m() const { return 0.5 * (max_wavelength_m - min_wavelength_m); }
};

Band band_of(const MeasuredSpectrum& spectrum) {
  return {kSpeedOfLight / spectrum.max_frequency_hz, kSpeedOfLight / spectrum.min_frequency_hz};
}

void warn(std::vector<FitWarning>& warnings, std::string code, std::string message) {
  warnings.push_back({std::move(code), std::move(message)});
}

// The diagnostics of planck_fit.h's result, for the three-parameter fit.
void add_linear_fit_warnings(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options,
                             PlanckFitResult& fit) {
  auto& w = fit.warnings;
  if (fit.errors_estimated) {
    warn(w, "errors_estimated",
         "no y_error was given: all points have equal weight, the one-sigma scatter is estimated from "
         "the residuals and the intervals are scaled by it; chi-square and p-value are not reported");
  }
  if (!fit.converged) {
    warn(w, "not_converged", "the solver stopped before converging (" + fit.termination + ": " +
                                 fit.solver_message + "); the values are its best estimate so far");
  }
  if (fit.temperature_at_bound) {
    warn(w, "temperature_at_bound", "the temperature sits at a bound of options.temperature_bounds [" +
                                        std::to_string(options.min_temperature_k) + ", " +
                                        std::to_string(options.max_temperature_k) +
                                        "] K; the interval is not reliable");
  }
  const double peak_nu = peak_frequency(peak_exponent(spectrum.y_unit.convention), fit.temperature_k);
  if (peak_nu < spectrum.min_frequency_hz || peak_nu > spectrum.max_frequency_hz) {
    warn(w, "peak_outside_data",
         "the fitted black body peaks outside the data: the temperature rests on one side of the "
         "curve only, where it trades off most strongly against the emissivity and its slope");
  }
  if (fit.p_value && *fit.p_value < 1e-3) {
    warn(w, "poor_fit", "p-value below 0.001: the model does not describe the data within their errors "
                        "(underestimated errors, lines, or an emissivity that is not linear in wavelength?)");
  }
  if (fit.points_used < 3 * kLinearParameters) {
    warn(w, "few_points", "fewer points than three per free parameter: the intervals rest on few data");
  }
  if (!fit.covariance_available) {
    warn(w, "covariance_unavailable", "the covariance matrix is singular at the solution: the data do not "
                                      "constrain temperature, emissivity and slope together; no errors "
                                      "are reported");
  }
}

// The linear form, started from the constant fit (its temperature and emissivity, slope 0).
void fit_linear(const MeasuredSpectrum& spectrum, const PlanckFitOptions& options, GreyBodyFitResult& result) {
  const Band band = band_of(spectrum);
  const double lambda_c = band.centre_m();
  const double half_width = band.half_width_m();
  if (!(half_width > 0.0)) {
    throw InputError("x", "the linear emissivity needs data at more than one wavelength");
  }
  const std::size_t n = spectrum.size();
  const Eigen::Index count = static_cast<Eigen::Index>(n);

  // Without errors, a uniform weight of 1 / rms(y) keeps the residuals of order one (as in
  // planck_fit.cpp); the covariance is rescaled afterwards.
  double mean_square = 0.0;
  for (double v : spectrum.value_si) mean_square += v * v;
  const double uniform_weight = 1.0 / std::sqrt(mean_square / static_cast<double>(n));
  GreyBodyTerms terms;
  terms.prefactor.resize(count);
  terms.h_nu_over_k.resize(count);
  terms.observed.resize(count);
  terms.weight.resize(count);
  terms.band.resize(count);
  for (Eigen::Index k = 0; k < count; ++k) {
    const std::size_t i = static_cast<std::size_t>(k);
    const double nu = spectrum.frequency_hz[i];
    terms.prefactor[k] = planck_prefactor(spectrum.y_unit.convention, nu);
    terms.h_nu_over_k[k] = constants::kPlanckOverBoltzmann * nu;
    terms.observed[k] = spectrum.value_si[i];
    terms.weight[k] = spectrum.has_errors() ? 1.0 / spectrum.error_si[i] : uniform_weight;
    terms.band[k] = std::clamp((kSpeedOfLight / nu - lambda_c) / half_width, -1.0, 1.0);
  }

  PlanckFitResult& fit = result.planck;
  const double log_t_min = std::log(options.min_temperature_k);
  const double log_t_max = std::log(options.max_temperature_k);
  double parameters[kLinearParameters] = {std::clamp(std::log(fit.temperature_k), log_t_min, log_t_max),
                                          std::clamp(fit.scale, kMinEmissivity, 1.0), 0.0};
  const bool robust = options.loss != RobustLoss::kNone;
  Eigen::ArrayXd residuals(count);
  if (robust && !spectrum.has_errors()) {
    // The loss scale is in units of the scatter: 1.4826 MAD (the normal consistency factor) of the
    // residuals at the start, as planck_fit.cpp does.
    const LinearGreyBodyResiduals all(&terms, 0, count);
    const double* blocks[] = {parameters};
    all.Evaluate(blocks, residuals.data(), nullptr);
    std::vector<double> absolute(residuals.data(), residuals.data() + count);
    for (double& a : absolute) a = std::abs(a);
    const auto middle = absolute.begin() + static_cast<std::ptrdiff_t>(absolute.size() / 2);
    std::nth_element(absolute.begin(), middle, absolute.end());
    if (*middle > 0.0) terms.weight /= 1.4826 * *middle;
  }

  ceres::Problem::Options problem_options;
  problem_options.loss_function_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
  std::unique_ptr<ceres::LossFunction> loss = ceres_settings::make_loss(options.loss, options.loss_scale);
  const auto make_problem = [&](ceres::Problem& problem) {
    if (loss) {
      // One residual block per point, so that the loss acts on each point.
      for (Eigen::Index i = 0; i < count; ++i) {
        problem.AddResidualBlock(new LinearGreyBodyResiduals(&terms, i, i + 1), loss.get(), parameters);
      }
    } else {
      problem.AddResidualBlock(new LinearGreyBodyResiduals(&terms, 0, count), nullptr, parameters);
    }
    problem.SetParameterLowerBound(parameters, 0, log_t_min);
    problem.SetParameterUpperBound(parameters, 0, log_t_max);
  };
  ceres::Problem problem(problem_options);
  make_problem(problem);
  problem.SetParameterLowerBound(parameters, 1, kMinEmissivity);
  problem.SetParameterUpperBound(parameters, 1, 1.0);

  ceres::Solver::Options solver_options = ceres_settings::solver_options(options.max_iterations, options.time_budget_seconds);
  ceres::Solver::Summary summary;
  ceres::Solve(solver_options, &problem, &summary);
  int iterations = static_cast<int>(summary.iterations.size()) - 1;

  // On the bound e0 = 1, Ceres' projected steps approach the optimum only slowly when temperature,
  // e0 and slope are strongly correlated, and may stop short of it. The bound is then held as an
  // active constraint (common practice in bound-constrained least squares): e0 fixed at 1
  // (ceres::SubsetManifold), temperature and slope solved freely, and the bound kept only if the
  // cost still falls towards larger e0 there (a non-positive gradient in e0).
  if (std::abs(parameters[1] - 1.0) < 1e-9) {
    parameters[1] = 1.0;
    ceres::Problem on_bound(problem_options);
    make_problem(on_bound);
    on_bound.SetManifold(parameters, new ceres::SubsetManifold(kLinearParameters, {1}));
    // What is left of the budget.
    solver_options.max_num_iterations = std::max(1, options.max_iterations - iterations);
    solver_options.max_solver_time_in_seconds =
        std::max(1e-3, options.time_budget_seconds - summary.total_time_in_seconds);
    ceres::Solver::Summary bound_summary;
    ceres::Solve(solver_options, &on_bound, &bound_summary);
    iterations += static_cast<int>(bound_summary.iterations.size()) - 1;
    double cost = 0.0;
    std::vector<double> gradient;
    problem.Evaluate(ceres::Problem::EvaluateOptions(), &cost, nullptr, &gradient, nullptr);
    if (gradient.size() == kLinearParameters && gradient[1] > 0.0) {
      ceres::Solve(solver_options, &problem, &summary);  // the optimum is inside after all
      iterations += static_cast<int>(summary.iterations.size()) - 1;
    } else {
      summary = bound_summary;
    }
  }

  std::vector<double> internal;  // (ln T, e0, q), row-major 3 x 3
  const bool covariance_computed = ceres_settings::covariance(problem, {parameters}, internal);

  const double start_temperature = fit.temperature_k;
  fit = PlanckFitResult{};
  fit.termination = ceres_settings::termination_name(summary);
  fit.converged = fit.termination == "converged";
  fit.solver_message = summary.message;
  fit.iterations = iterations;
  fit.start_temperature_k = start_temperature;
  fit.temperature_k = std::exp(parameters[0]);
  fit.scale = parameters[1];
  fit.temperature_at_bound =
      std::abs(parameters[0] - log_t_min) < 1e-9 || std::abs(parameters[0] - log_t_max) < 1e-9;
  fit.scale_at_bound = std::abs(parameters[1] - 1.0) < 1e-9;

  // Plain chi-square of the final residuals (not the robust cost).
  const LinearGreyBodyResiduals all(&terms, 0, count);
  const double* final_blocks[] = {parameters};
  all.Evaluate(final_blocks, residuals.data(), nullptr);
  const double chi_square = residuals.square().sum();
  fit.points_used = n;
  fit.errors_estimated = !spectrum.has_errors();
  fit.degrees_of_freedom = static_cast<int>(n) - kLinearParameters;
  const double residual_variance = fit.degrees_of_freedom > 0 ? chi_square / fit.degrees_of_freedom : 0.0;
  if (robust) {
    for (double r : residuals) {
      double rho[3];
      loss->Evaluate(r * r, rho);
      fit.robust_cost += rho[0];
    }
  }
  if (spectrum.has_errors()) {
    fit.chi_square = chi_square;
    if (fit.degrees_of_freedom > 0) fit.p_value = boost::math::gamma_q(0.5 * fit.degrees_of_freedom, 0.5 * chi_square);
  } else {
    fit.residual_scatter_si = std::sqrt(residual_variance) / terms.weight[0];
  }

  result.linear = true;
  result.reference_wavelength_m = lambda_c;
  result.emissivity = parameters[1];
  result.slope_per_m = parameters[2] / half_width;
  const double factor = fit.errors_estimated ? residual_variance : 1.0;
  const bool usable = covariance_computed && !fit.temperature_at_bound && internal[0] > 0.0 &&
                      std::isfinite(internal[0]) && (!fit.errors_estimated || fit.degrees_of_freedom > 0);
  if (usable) {
    // (ln T, e0, q) -> (ln T, e0, s = q / h): C' = D C D with D = diag(1, 1, 1 / h).
    const std::array<double, 3> d = {1.0, 1.0, 1.0 / half_width};
    for (int r = 0; r < 3; ++r) {
      for (int c = 0; c < 3; ++c) result.covariance[3 * r + c] = factor * internal[3 * r + c] * d[r] * d[c];
    }
    const auto& cov = result.covariance;
    const double e0 = parameters[1];
    fit.log_covariance = {cov[0], cov[1] / e0, cov[3] / e0, cov[4] / (e0 * e0)};
    fit.covariance_available = cov[0] > 0.0 && cov[4] > 0.0 && std::isfinite(cov[4]);
  }
  if (fit.covariance_available) {
    result.emissivity_error = std::sqrt(result.covariance[4]);
    result.slope_error = std::sqrt(result.covariance[8]);
    result.temperature_emissivity_correlation = result.covariance[1] / std::sqrt(result.covariance[0] * result.covariance[4]);
  } else {
    result.covariance.fill(0.0);
    fit.log_covariance.fill(0.0);
  }
  add_linear_fit_warnings(spectrum, options, fit);

  const double low_end = parameters[1] - std::abs(parameters[2]);
  const double high_end = parameters[1] + std::abs(parameters[2]);
  result.emissivity_at_bound = fit.scale_at_bound || high_end > 1.0 || low_end < 0.0;
}

}  // namespace

double radiance_temperature(double wavelength_m, double spectral_radiance_w_m2_sr_m) {
  const double lambda = wavelength_m;
  const double radiance = spectral_radiance_w_m2_sr_m;
  require_positive_finite(lambda, "radiance_temperature_at", "the wavelength");
  require_positive_finite(radiance, "radiance_temperature_at", "the spectral radiance");
  // T = c2 / (lambda ln(1 + a)), a = c1L / (lambda^5 L): Planck's law per unit wavelength solved
  // for T (planck.h). log1p keeps the Rayleigh-Jeans side (a << 1) exact.
  const double lambda5 = lambda * lambda * lambda * lambda * lambda;
  const double a = kFirstRadiationRadiance / lambda5 / radiance;
  double log_one_plus_a;
  if (std::isfinite(a) && a >= std::numeric_limits<double>::min()) {
    log_one_plus_a = std::log1p(a);
  } else {
    // a overflows (far Wien side) or underflows: ln(1 + a) from ln a, without forming a.
    const double log_a = std::log(kFirstRadiationRadiance) - 5.0 * std::log(lambda) - std::log(radiance);
    log_one_plus_a = log_a > 0.0 ? log_a + std::log1p(std::exp(-log_a)) : std::log1p(std::exp(log_a));
  }
  const double temperature = kSecondRadiation / (lambda * log_one_plus_a);
  if (!std::isfinite(temperature) || !(temperature > 0.0)) {
    throw InputError("radiance_temperature_at",
                     "the spectral radiance is beyond what a black body of representable temperature emits "
                     "at this wavelength");
  }
  return temperature;
}

std::optional<double> ratio_temperature(double l1_m, double L1, double l2_m, double L2) {
  require_positive_finite(l1_m, "ratio_pair", "the first wavelength");
  require_positive_finite(L1, "ratio_pair", "the radiance at the first wavelength");
  require_positive_finite(l2_m, "ratio_pair", "the second wavelength");
  require_positive_finite(L2, "ratio_pair", "the radiance at the second wavelength");
  if (l1_m == l2_m) {
    throw InputError("ratio_pair", "the two wavelengths must differ: at one wavelength the ratio of "
                                   "radiances does not depend on the temperature");
  }
  // ln(B(l1, T) / B(l2, T)) = -5 ln(l1 / l2) - ln(e^x1 - 1) + ln(e^x2 - 1), x = c2 / (lambda T)
  // (Planck's law per unit wavelength), minus ln(L1 / L2); monotonic in T for l1 != l2.
  const double log_prefactor_ratio = -5.0 * (std::log(l1_m) - std::log(l2_m));
  const double log_target = std::log(L1) - std::log(L2);
  const double c2_over_l1 = kSecondRadiation / l1_m;
  const double c2_over_l2 = kSecondRadiation / l2_m;
  const auto mismatch = [&](double log_temperature) {
    const double inverse_temperature = std::exp(-log_temperature);
    return log_prefactor_ratio - log_expm1(c2_over_l1 * inverse_temperature) +
           log_expm1(c2_over_l2 * inverse_temperature) - log_target;
  };
  const double lo = std::log(kRatioMinTemperatureK);
  const double hi = std::log(kRatioMaxTemperatureK);
  const double f_lo = mismatch(lo);
  const double f_hi = mismatch(hi);
  if (f_lo == 0.0) return kRatioMinTemperatureK;
  if (f_hi == 0.0) return kRatioMaxTemperatureK;
  if (!std::isfinite(f_lo) || !std::isfinite(f_hi) || (f_lo > 0.0) == (f_hi > 0.0)) return std::nullopt;
  // TOMS 748 (Alefeld, Potra and Shi 1995) to full double precision in ln T.
  std::uintmax_t max_iterations = 200;
  const auto [a, b] = boost::math::tools::toms748_solve(mismatch, lo, hi, f_lo, f_hi,
                                                        boost::math::tools::eps_tolerance<double>(), max_iterations);
  return std::exp(0.5 * (a + b));
}

GreyBodyFitResult fit_grey_body(const MeasuredSpectrum& spectrum, const GreyBodyFitOptions& options) {
  if (!spectrum.y_unit.per_steradian || spectrum.y_unit.relative) {
    throw InputError("y_unit", "is \"" + spectrum.y_unit.text +
                                   "\"; an emissivity needs an absolute radiance per steradian, e.g. "
                                   "W/m2/sr/nm or W/m2/sr/um");
  }
  if (options.linear_emissivity && spectrum.size() < static_cast<std::size_t>(kLinearParameters)) {
    throw InputError("x", "has " + std::to_string(spectrum.size()) + " point(s) to fit, fewer than the " +
                              std::to_string(kLinearParameters) +
                              " free parameters (temperature, emissivity, emissivity slope)");
  }
  PlanckFitOptions fit_options = options.fit;
  fit_options.max_scale = 1.0;

  GreyBodyFitResult result;
  // Constant emissivity: the Planck fit with the scale bounded by 1 (planck_fit.h).
  result.planck = fit_planck(spectrum, fit_options);
  result.reference_wavelength_m = band_of(spectrum).centre_m();
  if (options.linear_emissivity) {
    fit_linear(spectrum, fit_options, result);
  } else {
    const PlanckFitResult& fit = result.planck;
    result.emissivity = fit.scale;
    result.emissivity_at_bound = fit.scale_at_bound;
    if (fit.covariance_available) {
      // (ln T, ln epsilon) -> (ln T, epsilon): d epsilon = epsilon d ln epsilon.
      const auto& c = fit.log_covariance;
      const double e = fit.scale;
      result.covariance[0] = c[0];
      result.covariance[1] = result.covariance[3] = e * c[1];
      result.covariance[4] = e * e * c[3];
      result.emissivity_error = e * std::sqrt(c[3]);
      result.temperature_emissivity_correlation = fit.log_correlation();
    }
  }

  result.warnings = result.planck.warnings;
  if (result.emissivity_at_bound) {
    if (!result.linear) {
      warn(result.warnings, "emissivity_at_bound",
           "the emissivity reached its bound of 1 (a black body): its interval is one-sided and the "
           "temperature is the one of a black body");
    } else {
      const double half_width = 0.5 * (band_of(spectrum).max_wavelength_m - band_of(spectrum).min_wavelength_m);
      const double ends[2] = {result.emissivity - result.slope_per_m * half_width,
                              result.emissivity + result.slope_per_m * half_width};
      warn(result.warnings, "emissivity_at_bound",
           "the linear emissivity reaches or leaves [0, 1] inside the band (" + std::to_string(ends[0]) +
               " at the shortest wavelength, " + std::to_string(ends[1]) + " at the longest, " +
               std::to_string(result.emissivity) +
               " in the middle): the linear form is not physical there and the intervals are not reliable");
    }
  }
  if (std::abs(result.temperature_emissivity_correlation) > kDegenerateCorrelation) {
    warn(result.warnings, "emissivity_temperature_degenerate",
         "temperature and emissivity are correlated at " + std::to_string(result.temperature_emissivity_correlation) +
             " (|corr| > " + std::to_string(kDegenerateCorrelation) +
             "): over this band a hotter, darker body fits almost as well, so each is poorly determined "
             "alone; a wider band (or a known emissivity) separates them");
  }
  return result;
}

}  // namespace planckton
