#include "science/synthetic_photometry.h"

#include <algorithm>
#include <array>
#include <boost/math/quadrature/gauss.hpp>
#include <cmath>

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

// Lagrange basis polynomials of the panel's nodes at t, by the barycentric formula (J.-P. Berrut &
// L. N. Trefethen, SIAM Review 46, 501 (2004)).
void lagrange_basis(const std::array<double, kNodesPerPanel>& nodes, const std::array<double, kNodesPerPanel>& barycentric,
                    double t, std::array<double, kNodesPerPanel>& out) {
  double sum = 0.0;
  for (int k = 0; k < kNodesPerPanel; ++k) {
    const double d = t - nodes[k];
    if (d == 0.0) {
      out.fill(0.0);
      out[k] = 1.0;
      return;
    }
    out[k] = barycentric[k] / d;
    sum += out[k];
  }
  for (double& v : out) v /= sum;
}

}  // namespace

double BandQuadrature::apply(const std::function<double(double)>& f_nu) const {
  double total = 0.0;
  for (std::size_t j = 0; j < frequency_hz.size(); ++j) total += weight[j] * f_nu(frequency_hz[j]);
  return total;
}

BandQuadrature make_band_quadrature(const Passband& band, const QuotedFlux& quoted) {
  validate_quoted(quoted);
  static const GaussLegendre<kNodesPerPanel> outer;
  static const GaussLegendre<10> inner;
  const int p = weight_power(band.detector);
  const auto [lo, hi] = response_support(band);
  const double t_lo = std::log(lo), t_hi = std::log(hi);
  const int panels = std::max(1, static_cast<int>(std::ceil((t_hi - t_lo) / kPanelWidth)));
  const double width = (t_hi - t_lo) / panels;

  std::vector<double> node_t(static_cast<std::size_t>(panels * kNodesPerPanel));
  std::vector<double> raw_weight(node_t.size(), 0.0);
  std::array<double, kNodesPerPanel> barycentric{};
  std::array<double, kNodesPerPanel> panel_nodes{};
  std::array<double, kNodesPerPanel> basis{};
  for (int k = 0; k < kNodesPerPanel; ++k) {
    panel_nodes[k] = outer.node[k];
    double product = 1.0;
    for (int m = 0; m < kNodesPerPanel; ++m) {
      if (m != k) product *= outer.node[k] - outer.node[m];
    }
    barycentric[k] = 1.0 / product;
  }

  // W = S lambda^-p dlambda = S lambda^(1-p) dt with t = ln lambda; S is linear in lambda between
  // samples, so each (sample interval x panel) piece gets its own inner rule.
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
        const double integrand = 0.5 * (end - start) * inner.weight[q] * response * std::pow(lambda, 1 - p);
        // Basis in the panel's own coordinate u in [-1, 1].
        lagrange_basis(panel_nodes, barycentric, (t - panel_mid) / (0.5 * width), basis);
        for (int k = 0; k < kNodesPerPanel; ++k) raw_weight[panel * kNodesPerPanel + k] += integrand * basis[k];
      }
      start = end;
      if (panel + 1 >= panels) break;
    }
  }

  BandQuadrature quadrature;
  quadrature.frequency_hz.resize(node_t.size());
  double normalisation = 0.0;
  for (int panel = 0; panel < panels; ++panel) {
    for (int k = 0; k < kNodesPerPanel; ++k) {
      const std::size_t j = static_cast<std::size_t>(panel * kNodesPerPanel + k);
      const double t = t_lo + (panel + 0.5) * width + 0.5 * width * outer.node[k];
      quadrature.frequency_hz[j] = constants::kSpeedOfLight / std::exp(t);
      normalisation += raw_weight[j] * reference_spectrum(quoted, quadrature.frequency_hz[j]);
    }
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
