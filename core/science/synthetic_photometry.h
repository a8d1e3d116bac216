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
// smooth across a band while the response is not, so the nodes are chosen for the spectrum and the
// response goes into the weights (product integration; P. J. Davis & P. Rabinowitz, Methods of
// Numerical Integration, 2nd ed., 1984, section 2.5): composite Gauss-Legendre nodes, kNodesPerPanel
// per panel of at most kPanelWidth in ln lambda, over the range where the response is positive; the
// weight of a node is the integral of W times the node's Lagrange basis polynomial over its panel,
// integrated exactly enough for the response (linear between its samples) by Gauss-Legendre rules on
// each sample interval. A spectrum that is a polynomial of degree < kNodesPerPanel in ln lambda
// over each panel is integrated exactly; a Planck curve with up to ~40 e-folds across an optical band
// to a relative 1e-6 or better (tests/unit/synthetic_photometry_test.cpp).
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
inline constexpr double kPanelWidth = 0.08;  // in ln lambda

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
