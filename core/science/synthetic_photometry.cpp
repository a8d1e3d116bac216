#include "science/synthetic_photometry.h"

#include <algorithm>
#include <array>
#include <boost/math/quadrature/gauss.hpp>
#include <cmath>

#include <Eigen/Dense>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/planck.h"

namespace planckton {

namespace {

// Gauss-Legendre nodes and weights on [-1, 1] (Boost.Math stores the non-negative half).
template <int N>
struct GaussLegendre {
  std::array<double, N> node{};
  std::array<double, N> weight{};
  GaussLegendre() {
    using Rule = boost::math::quadrature::gauss<double, N>;
    const auto& x = Rule::abscissa();
    const auto& w = Rule::weights();
    int k = 0;
    for (int i = static_cast<int>(x.size()) - 1; i >= 0; --i) {
      if (x[i] == 0.0) continue;
      node[k] = -x[i];
      weight[k++] = w[i];
    }
    for (std::size_t i = 0; i < x.size(); ++i) {
      node[k] = x[i];
      weight[k++] = w[i];
    }
  }
};

// Power p of the detector weight W = S lambda^-p (see the header).
int weight_power(DetectorKind kind) { return kind == DetectorKind::kPhotonCounting ? 1 : 2; }

// The reference spectrum r(nu), normalised to 1 at the reference frequency (1 for band averages).
double reference_spectrum(const QuotedFlux& quoted, double frequency_hz) {
  if (quoted.kind == QuotedFlux::Kind::kBandAverage) return 1.0;
  const double nu0 = constants::kSpeedOfLight / quoted.reference_wavelength_m;
  if (quoted.reference == QuotedFlux::Reference::kPowerLaw) return std::pow(frequency_hz / nu0, quoted.power_law_index);
  return planck_per_frequency(frequency_hz, quoted.reference_temperature_k) /
         planck_per_frequency(nu0, quoted.reference_temperature_k);
}

void validate_quoted(const QuotedFlux& quoted) {
  if (quoted.kind == QuotedFlux::Kind::kBandAverage) return;
  if (!(quoted.reference_wavelength_m > 0.0) || !std::isfinite(quoted.reference_wavelength_m)) {
    throw InputError("quoted.wavelength", "a monochromatic quote needs a positive reference wavelength");
  }
  if (quoted.reference == QuotedFlux::Reference::kBlackBody &&
      (!(quoted.reference_temperature_k > 0.0) || !std::isfinite(quoted.reference_temperature_k))) {
    throw InputError("quoted.temperature", "a black-body reference needs a positive temperature");
  }
  if (!std::isfinite(quoted.power_law_index)) throw InputError("quoted.power_law_index", "must be finite");
}

// Gaussian quadrature for a discrete positive measure {(u_q, m_q)} on [-1, 1]: the recurrence
// coefficients of its orthogonal polynomials by the discretised Stieltjes procedure (W. Gautschi,
// Orthogonal Polynomials: Computation and Approximation, 2004, section 2.2.3.1), then nodes and
// weights from the eigen-decomposition of the Jacobi matrix (G. H. Golub & J. H. Welsch, Math. Comp.
// 23, 221 (1969)). The weights are positive and the rule integrates polynomials of degree 2n - 1
// against the measure exactly.
void gauss_rule_for_measure(const std::vector<double>& u, const std::vector<double>& m, int n,
                            std::vector<double>& nodes, std::vector<double>& weights) {
  const std::size_t size = u.size();
  std::vector<double> p_previous(size, 0.0), p(size, 1.0), p_next(size);
  Eigen::VectorXd alpha(n), beta(n);
  int computed = 0;
  for (int k = 0; k < n; ++k) {
    double norm = 0.0, first = 0.0;
    for (std::size_t q = 0; q < size; ++q) {
      norm += m[q] * p[q] * p[q];
      first += m[q] * u[q] * p[q] * p[q];
    }
    // A measure with fewer points of positive mass than n supports fewer orthogonal polynomials: the
    // norm (relative to the previous one, after the rescaling below) then vanishes to rounding.
    if (!(norm > (k == 0 ? 0.0 : 1e-26))) break;
    alpha[k] = first / norm;
    beta[k] = norm;  // beta_0 is the measure's total mass; later ones are relative, see below
    ++computed;
    for (std::size_t q = 0; q < size; ++q) p_next[q] = (u[q] - alpha[k]) * p[q] - (k == 0 ? 0.0 : beta[k] * p_previous[q]);
    // Rescale both polynomials so that p_k has unit norm: the next norm is then the ratio
    // beta_(k+1) = |p_(k+1)|^2 / |p_k|^2 itself, and the recurrence coefficients are unaffected.
    const double scale = 1.0 / std::sqrt(norm);
    for (std::size_t q = 0; q < size; ++q) {
      p_previous[q] = p[q] * scale;
      p[q] = p_next[q] * scale;
    }
  }
  if (computed == 0) return;  // no mass in this panel: no nodes
  Eigen::MatrixXd jacobi = Eigen::MatrixXd::Zero(computed, computed);
  for (int k = 0; k < computed; ++k) {
    jacobi(k, k) = alpha[k];
    if (k + 1 < computed) jacobi(k, k + 1) = jacobi(k + 1, k) = std::sqrt(beta[k + 1]);
  }
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(jacobi);
  for (int k = 0; k < computed; ++k) {
    nodes.push_back(eigen.eigenvalues()[k]);
    const double v = eigen.eigenvectors()(0, k);
    weights.push_back(beta[0] * v * v);
  }
}

}  // namespace

double BandQuadrature::apply(const std::function<double(double)>& f_nu) const {
  double total = 0.0;
  for (std::size_t j = 0; j < frequency_hz.size(); ++j) total += weight[j] * f_nu(frequency_hz[j]);
  return total;
}

BandQuadrature make_band_quadrature(const Passband& band, const QuotedFlux& quoted) {
  validate_quoted(quoted);
  static const GaussLegendre<10> inner;
  const int p = weight_power(band.detector);
  const auto [lo, hi] = response_support(band);
  const double t_lo = std::log(lo), t_hi = std::log(hi);
  const int panels = std::max(1, static_cast<int>(std::ceil((t_hi - t_lo) / kPanelWidth)));
  const double width = (t_hi - t_lo) / panels;

  // The measure W dlambda = S lambda^(1-p) dt (t = ln lambda) discretised per panel: S is linear in
  // lambda between samples, so each (sample interval x panel) piece gets its own inner rule, in the
  // panel's coordinate u in [-1, 1].
  std::vector<std::vector<double>> panel_u(static_cast<std::size_t>(panels)), panel_mass(static_cast<std::size_t>(panels));
  const auto& w = band.wavelength_m;
  const auto& s = band.response;
  for (std::size_t i = 0; i + 1 < w.size(); ++i) {
    if (s[i] == 0.0 && s[i + 1] == 0.0) continue;
    const double a = std::max(std::log(w[i]), t_lo), b = std::min(std::log(w[i + 1]), t_hi);
    if (!(b > a)) continue;
    int panel = std::clamp(static_cast<int>((a - t_lo) / width), 0, panels - 1);
    for (double start = a; start < b; ++panel) {
      const double panel_end = panel + 1 >= panels ? t_hi : t_lo + (panel + 1) * width;
      const double end = std::min(b, panel_end);
      const double panel_mid = t_lo + (panel + 0.5) * width;
      for (int q = 0; q < 10; ++q) {
        const double t = 0.5 * (start + end) + 0.5 * (end - start) * inner.node[q];
        const double lambda = std::exp(t);
        const double response = s[i] + (s[i + 1] - s[i]) * (lambda - w[i]) / (w[i + 1] - w[i]);
        const double mass = 0.5 * (end - start) * inner.weight[q] * response * std::pow(lambda, 1 - p);
        if (mass > 0.0) {
          panel_u[static_cast<std::size_t>(panel)].push_back((t - panel_mid) / (0.5 * width));
          panel_mass[static_cast<std::size_t>(panel)].push_back(mass);
        }
      }
      start = end;
      if (panel + 1 >= panels) break;
    }
  }

  BandQuadrature quadrature;
  std::vector<double> raw_weight;
  for (int panel = 0; panel < panels; ++panel) {
    std::vector<double> nodes;
    gauss_rule_for_measure(panel_u[static_cast<std::size_t>(panel)], panel_mass[static_cast<std::size_t>(panel)],
                           kNodesPerPanel, nodes, raw_weight);
    for (std::size_t k = 0; k < nodes.size(); ++k) {
      const double t = t_lo + (panel + 0.5) * width + 0.5 * width * nodes[k];
      quadrature.frequency_hz.push_back(constants::kSpeedOfLight / std::exp(t));
    }
  }
  double normalisation = 0.0;
  for (std::size_t j = 0; j < raw_weight.size(); ++j) {
    normalisation += raw_weight[j] * reference_spectrum(quoted, quadrature.frequency_hz[j]);
  }
  quadrature.weight.resize(raw_weight.size());
  for (std::size_t j = 0; j < raw_weight.size(); ++j) quadrature.weight[j] = raw_weight[j] / normalisation;
  quadrature.pivot_wavelength_m = pivot_wavelength(band);
  quadrature.quoted_wavelength_m =
      quoted.kind == QuotedFlux::Kind::kBandAverage ? quadrature.pivot_wavelength_m : quoted.reference_wavelength_m;
  return quadrature;
}

double quoted_flux_by_trapezoid(const Passband& band, const QuotedFlux& quoted,
                                const std::function<double(double)>& f_nu, int subdivisions) {
  validate_quoted(quoted);
  const int p = weight_power(band.detector);
  const auto& w = band.wavelength_m;
  const auto& s = band.response;
  double numerator = 0.0, denominator = 0.0;
  for (std::size_t i = 0; i + 1 < w.size(); ++i) {
    if (s[i] == 0.0 && s[i + 1] == 0.0) continue;
    const double step = (w[i + 1] - w[i]) / subdivisions;
    for (int m = 0; m <= subdivisions; ++m) {
      const double lambda = w[i] + m * step;
      const double response = s[i] + (s[i + 1] - s[i]) * m / subdivisions;
      const double weight = (m == 0 || m == subdivisions ? 0.5 : 1.0) * step * response * std::pow(lambda, -p);
      const double nu = constants::kSpeedOfLight / lambda;
      numerator += weight * f_nu(nu);
      denominator += weight * reference_spectrum(quoted, nu);
    }
  }
  return numerator / denominator;
}

}  // namespace planckton
