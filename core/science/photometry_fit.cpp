#include "science/photometry_fit.h"

#include <algorithm>
#include <cmath>
#include <memory>
#include <numbers>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/planck.h"
#include "science/censored_residual.h"
#include "science/planck_kernel.h"
#include "science/two_parameter_fit.h"

namespace planckton {

namespace {

using namespace two_parameter_fit;

constexpr double kMagnitudesPerLnFlux = 1.0857362047581294;  // 2.5 / ln 10
constexpr double kSmallestFlux = 1e-300;                       // keeps magnitudes finite

// The quadrature nodes of all bands, one after the other, as the kernel's points.
PointTerms node_terms(const MeasuredPhotometry& data) {
  std::size_t n = 0;
  for (const BandMeasurement& b : data.bands) n += b.quadrature.frequency_hz.size();
  PointTerms terms;
  terms.prefactor.resize(static_cast<Eigen::Index>(n));
  terms.h_nu_over_k.resize(static_cast<Eigen::Index>(n));
  terms.observed = Eigen::ArrayXd::Zero(static_cast<Eigen::Index>(n));
  terms.weight = Eigen::ArrayXd::Ones(static_cast<Eigen::Index>(n));
  Eigen::Index k = 0;
  for (const BandMeasurement& b : data.bands) {
    for (double nu : b.quadrature.frequency_hz) {
      terms.prefactor[k] = planck_prefactor(Convention::kEnergyPerFrequency, nu);
      terms.h_nu_over_k[k++] = constants::kPlanckOverBoltzmann * nu;
    }
  }
  terms.min_h_nu_over_k = terms.h_nu_over_k.minCoeff();
  terms.max_h_nu_over_k = terms.h_nu_over_k.maxCoeff();
  return terms;
}

// The band model F_b = scale sum_j w_bj B_nu(nu_bj; T) and the residuals of the measurements.
class PhotometryModel {
 public:
  PhotometryModel(const MeasuredPhotometry& data, const PointTerms& nodes)
      : data_(data), kernel_(nodes), weight_(nodes.size()), flux_(data.bands.size()), flux_slope_(data.bands.size()),
        sigma_(data.bands.size()) {
    Eigen::Index k = 0;
    for (std::size_t b = 0; b < data.bands.size(); ++b) {
      const BandMeasurement& m = data.bands[b];
      begin_.push_back(k);
      for (double w : m.quadrature.weight) weight_[k++] = w;
      // Without errors every detection gets the same fractional weight (photometry.h).
      sigma_[b] = data.has_errors || m.upper_limit ? m.error
                  : m.scale == MeasurementScale::kFluxDensity ? m.value
                                                               : kMagnitudesPerLnFlux;
    }
    begin_.push_back(k);
  }

  std::size_t size() const { return data_.bands.size(); }
  const Eigen::ArrayXd& sigma() const { return sigma_; }
  const Eigen::ArrayXd& flux() const { return flux_; }  // quoted F_nu per band, SI

  void evaluate(double log_temperature, double log_scale) const {
    const Eigen::Index n = static_cast<Eigen::Index>(kernel_.terms().size());
    kernel_.evaluate(log_temperature, log_scale, 0, n);
    for (std::size_t b = 0; b < size(); ++b) {
      const Eigen::Index begin = begin_[b], count = begin_[b + 1] - begin_[b];
      const auto w = weight_.segment(begin, count);
      const auto model = kernel_.model().segment(begin, count);
      flux_[b] = (w * model).sum();
      flux_slope_[b] = (w * model * kernel_.slope().segment(begin, count)).sum();
    }
  }

  // After evaluate(): residuals and, optionally, the Jacobian columns d r / d ln T and d r / d ln scale.
  void residuals(double* r, double* d_log_temperature, double* d_log_scale) const {
    for (std::size_t b = 0; b < size(); ++b) {
      const BandMeasurement& m = data_.bands[b];
      double dr_dflux = 0.0;  // d r / d F_b
      const double flux = std::max(flux_[b], kSmallestFlux);
      if (m.scale != MeasurementScale::kFluxDensity) {
        r[b] = (m.value - m.from_quoted_f_nu(flux)) / sigma_[b];
        dr_dflux = kMagnitudesPerLnFlux / (flux * sigma_[b]);
      } else {
        const double to_measured = m.from_quoted_f_nu(1.0);
        const double model = to_measured * flux_[b];
        if (m.upper_limit) {
          const Censored c = censored((m.value - model) / sigma_[b]);
          r[b] = c.residual;
          dr_dflux = -c.derivative * to_measured / sigma_[b];
        } else {
          r[b] = (m.value - model) / sigma_[b];
          dr_dflux = -to_measured / sigma_[b];
        }
      }
      if (d_log_temperature != nullptr) {
        d_log_temperature[b] = dr_dflux * flux_slope_[b];
        d_log_scale[b] = dr_dflux * flux_[b];
      }
    }
  }

 private:
  const MeasuredPhotometry& data_;
  PlanckKernel kernel_;
  Eigen::ArrayXd weight_;
  std::vector<Eigen::Index> begin_;
  mutable Eigen::ArrayXd flux_, flux_slope_;
  Eigen::ArrayXd sigma_;
};

struct PhotometryTinyProblem {
  using Scalar = double;
  enum { NUM_RESIDUALS = Eigen::Dynamic, NUM_PARAMETERS = kParameters };
  const PhotometryModel* model;
  int NumResiduals() const { return static_cast<int>(model->size()); }
  bool operator()(const double* parameters, double* residuals, double* jacobian) const {
    model->evaluate(parameters[0], parameters[1]);
    const int n = NumResiduals();
    model->residuals(residuals, jacobian, jacobian == nullptr ? nullptr : jacobian + n);
    return true;
  }
};

class PhotometryResiduals final : public ceres::CostFunction {
 public:
  explicit PhotometryResiduals(const PhotometryModel* model) : model_(model), columns_(2 * model->size()) {
    set_num_residuals(static_cast<int>(model->size()));
    mutable_parameter_block_sizes()->push_back(kParameters);
  }
  bool Evaluate(double const* const* parameters, double* residuals, double** jacobians) const override {
    const std::size_t n = model_->size();
    model_->evaluate(parameters[0][0], parameters[0][1]);
    model_->residuals(residuals, columns_.data(), columns_.data() + n);
    if (jacobians != nullptr && jacobians[0] != nullptr) {
      for (std::size_t b = 0; b < n; ++b) {
        jacobians[0][2 * b] = columns_[b];
        jacobians[0][2 * b + 1] = columns_[n + b];
      }
    }
    return true;
  }

 private:
  const PhotometryModel* model_;
  mutable std::vector<double> columns_;
};

// The start (two_parameter_fit.h) with each band's model taken at its quoted wavelength, which is
// enough to find the basin, and the measurements linearised in quoted F_nu.
GridNode start_estimate(const MeasuredPhotometry& data, const PhotometryModel& model, double log_t_min, double log_t_max) {
  const Eigen::Index n = static_cast<Eigen::Index>(data.bands.size());
  PointTerms terms;  // one point per band, at its quoted frequency; observed and weight linearised
  terms.prefactor.resize(n);
  terms.h_nu_over_k.resize(n);
  terms.observed.resize(n);
  terms.weight.resize(n);
  Eigen::ArrayXd detected(n);
  for (Eigen::Index b = 0; b < n; ++b) {
    const BandMeasurement& m = data.bands[static_cast<std::size_t>(b)];
    const double nu = constants::kSpeedOfLight / m.quadrature.quoted_wavelength_m;
    terms.prefactor[b] = planck_prefactor(Convention::kEnergyPerFrequency, nu);
    terms.h_nu_over_k[b] = constants::kPlanckOverBoltzmann * nu;
    terms.observed[b] = m.to_quoted_f_nu(m.value);
    const double sigma = m.scale == MeasurementScale::kFluxDensity ? model.sigma()[b] * m.to_quoted_f_nu(1.0)
                                                                   : terms.observed[b] * model.sigma()[b] / kMagnitudesPerLnFlux;
    terms.weight[b] = 1.0 / sigma;
    detected[b] = m.upper_limit ? 0.0 : 1.0;
  }
  terms.min_h_nu_over_k = terms.h_nu_over_k.minCoeff();
  terms.max_h_nu_over_k = terms.h_nu_over_k.maxCoeff();
  const PlanckKernel kernel(terms);
  const Eigen::ArrayXd w2 = detected * terms.weight.square();
  const Eigen::ArrayXd w2y = w2 * terms.observed;
  const double yy = (w2y * terms.observed).sum();
  const auto profile = [&](double log_t) {
    kernel.evaluate(log_t, 0.0, 0, n, false);
    const auto f = kernel.model().head(n);
    const double yf = (w2y * f).sum(), ff = (w2 * f.square()).sum();
    if (!(ff > 0.0) || !std::isfinite(ff) || !(yf > 0.0)) return GridNode{log_t, -HUGE_VAL, HUGE_VAL};
    const double scale = yf / ff;
    double cost = std::max(yy - yf * scale, 0.0);
    for (Eigen::Index b = 0; b < n; ++b) {
      if (detected[b] != 0.0) continue;
      const double r = censored((terms.observed[b] - scale * f[b]) * terms.weight[b]).residual;
      cost += r * r;
    }
    return GridNode{log_t, std::log(scale), cost};
  };
  const auto [lo, hi] = start_range(terms.h_nu_over_k.minCoeff() / constants::kPlanckOverBoltzmann,
                                    terms.h_nu_over_k.maxCoeff() / constants::kPlanckOverBoltzmann, log_t_min, log_t_max);
  return search_log_temperature(lo, hi, profile);
}

}  // namespace

PhotometryFitResult fit_planck_photometry(const MeasuredPhotometry& data, const PlanckFitOptions& options) {
  if (options.loss != RobustLoss::kNone) {
    throw InputError("options.loss", "robust losses are for spectra with many points; with band measurements, "
                                     "use errors and options.systematic_error instead");
  }
  if (data.bands.size() < static_cast<std::size_t>(kParameters)) {
    throw InputError("photometry", "has fewer bands than the 2 free parameters (temperature, scale)");
  }
  validate_options(options);
  const double log_t_min = std::log(options.min_temperature_k), log_t_max = std::log(options.max_temperature_k);
  const PointTerms nodes = node_terms(data);
  const PhotometryModel model(data, nodes);

  PhotometryFitResult out;
  PlanckFitResult& result = out.fit;
  result.points_used = data.bands.size();
  GridNode start = start_estimate(data, model, log_t_min, log_t_max);
  if (!std::isfinite(start.log_scale)) start.log_scale = 0.0;
  result.start_temperature_k = std::exp(start.log_temperature);

  double parameters[kParameters] = {start.log_temperature, start.log_scale};
  SolveOutcome outcome = solve_small_dense(PhotometryTinyProblem{&model}, parameters, options);
  const bool inside = parameters[0] >= log_t_min && parameters[0] <= log_t_max;
  const bool general = !inside || !std::isfinite(parameters[0]) || !std::isfinite(parameters[1]);
  if (general) {
    parameters[0] = std::clamp(start.log_temperature, log_t_min, log_t_max);
    parameters[1] = start.log_scale;
    ceres::Problem problem;
    problem.AddResidualBlock(new PhotometryResiduals(&model), nullptr, parameters);
    problem.SetParameterLowerBound(parameters, 0, log_t_min);
    problem.SetParameterUpperBound(parameters, 0, log_t_max);
    outcome = solve_problem(problem, parameters, options);
  }

  const std::size_t n = data.bands.size();
  Eigen::ArrayXd residuals(static_cast<Eigen::Index>(n)), d_log_t(static_cast<Eigen::Index>(n)),
      d_log_s(static_cast<Eigen::Index>(n));
  model.evaluate(parameters[0], parameters[1]);
  model.residuals(residuals.data(), d_log_t.data(), d_log_s.data());
  if (!general) outcome.covariance_available = covariance_from_columns(d_log_t, d_log_s, outcome.covariance);
  const double residual_variance =
      summarise(outcome, parameters, log_t_min, log_t_max, residuals.square().sum(), n, data.has_errors, result);
  if (!data.has_errors) result.residual_scatter_si = std::sqrt(residual_variance);  // a fraction of the flux

  double min_nu = HUGE_VAL, max_nu = 0.0;
  for (std::size_t b = 0; b < n; ++b) {
    const BandMeasurement& m = data.bands[b];
    const double quoted_nu = constants::kSpeedOfLight / m.quadrature.quoted_wavelength_m;
    min_nu = std::min(min_nu, quoted_nu);
    max_nu = std::max(max_nu, quoted_nu);
    BandFit fit;
    fit.model = m.from_quoted_f_nu(std::max(model.flux()[static_cast<Eigen::Index>(b)], kSmallestFlux));
    fit.residual = residuals[static_cast<Eigen::Index>(b)];
    if (!data.has_errors && !m.upper_limit && residual_variance > 0.0) fit.residual /= std::sqrt(residual_variance);
    fit.model_monochromatic =
        m.from_quoted_f_nu(std::max(result.scale * planck_per_frequency(quoted_nu, result.temperature_k), kSmallestFlux));
    out.bands.push_back(fit);
  }
  add_warnings({Convention::kEnergyPerFrequency, min_nu, max_nu, "bands"}, options, result);
  return out;
}

}  // namespace planckton
