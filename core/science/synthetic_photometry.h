// Synthetic photometry: the flux density a band reports for a spectrum, as the band quotes it.
//
// Definitions (Bessell & Murphy 2012, PASP 124, 140, appendix A; Tokunaga & Vacca 2005, PASP 117,
// 421). With S the response and, in terms of wavelength, the detector weight
//   W(lambda) = S(lambda) / lambda     photon counting   (signal ~ int F_nu S dnu / (h nu))
//   W(lambda) = S(lambda) / lambda^2   energy integrating (signal ~ int F_nu S dnu)
// (dnu = c dlambda / lambda^2), the band-averaged flux density is
//   <F_nu> = int F_nu W dlambda / int W dlambda,   and   <F_lambda> = c / lambda_p^2 <F_nu>
// with lambda_p the pivot wavelength (passband.h); a band quoted monochromatically at lambda_0 for a
// reference spectrum r(nu) normalised to r(nu_0) = 1 reports
//   F_quoted = int F_nu W dlambda / int r W dlambda
// (the value whose reference spectrum gives the same signal; e.g. Reach et al. 2005, PASP 117, 978,
// eqs. 2-3 for nu F_nu constant). Both are linear in F_nu: F_quoted = sum_j w_j F_nu(nu_j).
//
// Quadrature (computed once per band and convention, never per solver iteration). The spectrum is
// smooth across a band while the response is not, so the response goes into the rule itself: on
// each panel of at most kPanelWidth in ln lambda, the Gaussian quadrature of kNodesPerPanel nodes for
// the measure W dlambda (the response, linear between its samples, times the detector weight),
// computed from its discretised moments (W. Gautschi, Orthogonal Polynomials: Computation and
// Approximation, 2004, section 2.2.3; G. H. Golub & J. H. Welsch, Math. Comp. 23, 221 (1969)). The
// weights are positive, so a positive spectrum always gives a positive band value, and a spectrum
// that is a polynomial of degree < 2 kNodesPerPanel in ln lambda over each panel is integrated
// exactly. For a Planck curve the rule agrees with brute-force integration to 2e-6 wherever
// x = h c / (lambda_pivot k T) <= 100 (tests/unit/photometry_test.cpp; python3-synphot in
// tests/reference), and stays positive, if less accurate, deeper in the Wien tail.
//
// Example:
//   const auto& band = *planckton::find_builtin_passband("johnson-v");
//   planckton::BandQuadrature q = planckton::make_band_quadrature(band, band.quoted);
//   double f_nu = q.apply([](double nu) { return 1e-26; });   // 1e-26 W m^-2 Hz^-1 = 1 Jy
#pragma once

#include <functional>
#include <vector>

#include "science/passband.h"

namespace planckton {

// AB magnitudes: m_AB = -2.5 log10(F_nu / 3631 Jy) (Oke & Gunn 1983, ApJ 266, 713).
inline constexpr double kAbZeroPointJy = 3631.0;
inline constexpr double kJansky = 1e-26;  // W m^-2 Hz^-1

inline constexpr int kNodesPerPanel = 8;
inline constexpr double kPanelWidth = 0.2;  // in ln lambda

struct BandQuadrature {
  std::vector<double> frequency_hz;  // nodes
  std::vector<double> weight;        // F_quoted = sum_j weight_j F_nu(nu_j)
  double pivot_wavelength_m = 0.0;
  // Where the quoted F_nu converts to F_lambda = c / lambda_q^2 F_nu: the pivot for band averages,
  // lambda_0 for monochromatic quotes.
  double quoted_wavelength_m = 0.0;

  double apply(const std::function<double(double)>& f_nu) const;
};

// Throws InputError (field "quoted") when a monochromatic quote lacks a positive reference
// wavelength or (for a black-body reference) temperature.
BandQuadrature make_band_quadrature(const Passband& band, const QuotedFlux& quoted);

// The same quoted value by brute force: trapezoid rule on the curve's samples, each interval cut
// into `subdivisions` pieces with the response interpolated linearly. Slow; for tests and checks.
double quoted_flux_by_trapezoid(const Passband& band, const QuotedFlux& quoted,
                                const std::function<double(double)>& f_nu, int subdivisions);

}  // namespace planckton
