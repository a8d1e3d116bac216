// Fitting any model of the family (model.h) to a spectrum or to band measurements, with control
// over every parameter: fixed values, bounds, Gaussian priors, initial values.
//
// Data. A spectrum point or a band is an item compared with the model: a point is the model at its
// frequency; a band is the quadrature sum over its response (synthetic_photometry.h), then converted
// to the measurement's space (flux density, magnitude, or a censored upper limit; photometry.h).
//
// Method.
//  1. Start (no initial values needed): for one-temperature models a coarse grid over ln T (ratio 2
//     between nodes, spanning x = h nu / k T from 1e-3 to 300 over the data) with the scale in
//     closed form and golden-section refinement (two_parameter_fit.h), repeated over a few values
//     of each other free parameter (beta in {1, 1.5, 2}, E(B-V) in {0, 0.5, 1.5}, the
//     turnover across the data); for two temperatures a grid over pairs T_1 < T_2 at least a factor
//     2 apart, both scales in closed form (2 x 2 linear least squares), so the search cannot
//     collapse the components onto one. An initial value replaces the search for its parameter.
//  2. Local solve: Levenberg-Marquardt (Levenberg 1944; Marquardt 1963) in Ceres Solver, one
//     parameter block per parameter (held constant when fixed, bounded when bounds apply), an
//     analytic Jacobian, and each prior (p - mean) / sigma as one more residual.
//  3. Covariance: (J^T J)^-1 (ceres_settings::covariance) over the free parameters in the solver's space (ln
//     of positive quantities), scaled by chi^2 / dof when the errors were estimated; the correlation
//     matrix follows.
//  4. Statistics: chi^2 of the data (priors reported apart), dof = items - free parameters,
//     p-value; warnings for degeneracy (|correlation| > 0.95), parameters at bounds, components
//     that contribute nothing, and features the data do not cover.
//
// Example:
//   planckton::ModelSpec spec;
//   spec.kind = planckton::ModelKind::kModifiedBlackBody;
//   planckton::ModelFitOptions options;
//   options.controls["beta"].fixed = 2.0;
//   planckton::ModelFitResult fit = planckton::fit_model(planckton::model_data(photometry), spec, options);
//   std::printf("T = %.1f K\n", fit.parameter("temperature").value);
#pragma once

#include <array>
#include <cstddef>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "science/model.h"
#include "science/photometry.h"
#include "science/planck_fit.h"
#include "science/spectrum.h"

namespace planckton {

// What the model is compared with (built by model_data from a spectrum or from photometry).
struct ModelData {
  enum class Space { kLinear, kMagnitude, kUpperLimit };
  struct Node {
    double frequency_hz;
    double weight;  // quadrature weight (1 for a spectrum point)
  };
  struct Item {
    Space space = Space::kLinear;
    double observed = 0.0;     // SI in the data's convention, or a magnitude
    double sigma = 0.0;        // one sigma in the same space (equal weights without errors)
    double to_measured = 1.0;  // linear items: measured = to_measured * model
    double zero_point_si = 0.0;  // magnitudes: F of magnitude 0
    std::size_t first_node = 0;
    std::size_t node_count = 1;
    double start_observed = 0.0;  // linearised in model units, for the start search
    double start_sigma = 0.0;
  };
  Convention convention = Convention::kEnergyPerFrequency;  // of the nodes' model values
  std::vector<Node> nodes;
  std::vector<Item> items;
  bool has_errors = false;
  bool bands = false;              // items are bands (else spectrum points)
  double min_frequency_hz = 0.0;   // what the items cover (quoted wavelengths for bands)
  double max_frequency_hz = 0.0;
  double min_node_frequency_hz = 0.0;  // what the model is evaluated at
  double max_node_frequency_hz = 0.0;
};

ModelData model_data(const MeasuredSpectrum& spectrum);
ModelData model_data(const MeasuredPhotometry& photometry);

struct GaussianPrior {
  double mean = 0.0;
  double sigma = 1.0;
};

struct ParameterControl {
  std::optional<double> fixed;
  std::optional<std::array<double, 2>> bounds;
  std::optional<GaussianPrior> prior;
  std::optional<double> initial;
};

struct ModelFitOptions {
  // Temperature bounds (default for every temperature), loss, budgets, max_scale (single-scale models).
  PlanckFitOptions solver;
  std::map<std::string, ParameterControl> controls;  // by parameter name (model_parameters)
};

struct FittedParameter {
  ParameterInfo info;
  double value = 0.0;     // natural units
  double internal = 0.0;  // the solver's u
  std::optional<double> internal_sigma;
  bool fixed = false;
  bool at_bound = false;
  std::optional<GaussianPrior> prior;
  double lower = 0.0, upper = 0.0;  // bounds used, natural units
};

struct ItemFit {
  double model = 0.0;     // in the item's space (SI in the data's convention, or a magnitude)
  double residual = 0.0;  // (measured - model) / sigma; upper limits sqrt(-2 ln Phi), + when below
};

struct ModelFitResult {
  ModelSpec spec;
  bool converged = false;
  std::string termination;
  std::string solver_message;
  int iterations = 0;

  std::vector<FittedParameter> parameters;  // all, in model_parameters order
  std::vector<std::size_t> free;            // indices of the free ones
  std::vector<double> covariance;           // free x free, row-major, solver space; empty when unavailable
  bool covariance_available = false;

  std::size_t points_used = 0;
  int degrees_of_freedom = 0;
  std::optional<double> chi_square;  // of the data, without the priors
  std::optional<double> p_value;
  double prior_chi_square = 0.0;
  double chi_square_unscaled = 0.0;  // sum of squared residuals with the sigmas used (also without errors)
  bool errors_estimated = false;
  double residual_scatter = 0.0;  // estimated one sigma (spectra: SI; bands: fraction of flux)
  double robust_cost = 0.0;
  std::vector<ItemFit> items;
  std::vector<FitWarning> warnings;

  const FittedParameter& parameter(const std::string& name) const;  // throws std::out_of_range
  std::vector<double> internal_values() const;
  double covariance_at(std::size_t a, std::size_t b) const { return covariance[a * free.size() + b]; }
  double correlation_at(std::size_t a, std::size_t b) const;  // of free parameters a and b
};

// The model at an observed frequency, in a convention (SI; per steradian for intensities), at the
// parameters' internal values (e.g. result.internal_values()). With extinction, throws InputError
// outside the law's range. Set `with_extinction` false for the intrinsic curve.
double model_value(const ModelSpec& spec, const std::vector<ParameterInfo>& parameters,
                   const std::vector<double>& internal, Convention convention, double frequency_hz,
                   bool with_extinction = true, int only_component = -1);

// Throws InputError: unknown controlled parameter ("model.parameters"), inconsistent controls
// ("model.parameters.<name>"), fewer items than free parameters, extinction outside the law's range
// ("model.extinction"), and what fit_planck throws for the options.
ModelFitResult fit_model(const ModelData& data, const ModelSpec& spec, const ModelFitOptions& options);

// The posterior a fit's data give its free parameters, in the solver's space (ln of positive
// parameters; beta and E(B-V) as they are), for samplers and profiles:
//   ln p(u) = -1/2 sum_j rho(r_j(u)^2) - 1/2 sum_priors ((p - mean) / sigma)^2,   u inside the bounds,
// and -inf outside them; rho is the fit's loss (identity for least squares), r_j the residuals with
// the sigmas the fit used, scaled by the fitted scatter when the errors were estimated (so that the
// intervals follow the residual scatter). Otherwise flat in u: flat in ln T (ln S, ln nu_t), flat in
// beta and E(B-V); log_probability_jeffreys has Jeffreys' prior instead. Not thread-safe (scratch
// space); one per request.
class ModelPosterior {
 public:
  ModelPosterior(const ModelData& data, const ModelFitResult& fit, const ModelFitOptions& options);
  ~ModelPosterior();
  ModelPosterior(const ModelPosterior&) = delete;
  ModelPosterior& operator=(const ModelPosterior&) = delete;

  std::size_t dimension() const;            // the number of free parameters
  std::vector<double> at_fit() const;       // their internal values at the fit
  std::array<double, 2> bounds(std::size_t i) const;  // internal bounds of free parameter i (may be infinite)
  double log_probability(const double* free_internal) const;
  double chi_square(const double* free_internal) const;  // of the data alone (sum of r^2)
  // ln p with Jeffreys' prior (Jeffreys 1946, Proc. R. Soc. A 186, 453) in place of the flat one:
  // + ln sqrt(det I(u)), I = J^T J the Fisher information of the residuals in the free parameters.
  // Invariant under reparametrisation; it vanishes where the data stop telling the parameters apart
  // (the temperature of Rayleigh-Jeans data, T -> inf, as 1/T) or stop seeing the source (S -> 0),
  // so the posterior stays proper where the flat one runs to the bounds.
  double log_probability_jeffreys(const double* free_internal) const;
  std::vector<double> all_internal(const double* free_internal) const;  // with the fixed ones

  // -2 ln p minimised over the free parameters other than `fixed` (an index into them), which is
  // held at `value` (internal): the profile (Levenberg-Marquardt from x, with the model's analytic
  // Jacobian; bounds by projection; a robust loss by its IRLS weights). x (dimension() long) is the
  // start and receives the minimiser; returns +inf where the model is not finite.
  double profile(std::size_t fixed, double value, std::vector<double>& x) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace planckton
