// Radiometric temperatures of hot bodies: radiance (brightness) temperature, ratio (two-colour)
// temperature, and grey-body fits with a constant or linear emissivity.
//
// Method.
//  - Radiance temperature: the black body with the same spectral radiance L at the wavelength
//    lambda. Planck's law per unit wavelength (M. Planck, Ann. Phys. 4, 553 (1901); see planck.h),
//    L = c1L / lambda^5 / (exp(c2 / (lambda T)) - 1) with c1L = 2 h c^2 and c2 = h c / k
//    (CODATA 2018, constants.h), inverts exactly to
//        T = c2 / (lambda ln(1 + c1L / (lambda^5 L))),
//    evaluated with log1p, so the Rayleigh-Jeans side (c1L / (lambda^5 L) << 1) keeps full
//    precision, and in logarithms where c1L / (lambda^5 L) would overflow (far Wien side). A grey
//    body's radiance temperature lies below its true temperature (common practice in pyrometry).
//  - Ratio temperature: the T at which B(l1, T) / B(l2, T) = L1 / L2, so that any emissivity equal
//    at both wavelengths cancels (a grey body). The root of
//        ln(B(l1, T) / B(l2, T)) - ln(L1 / L2),
//    monotonic in T for l1 != l2, is found on ln T in [1 K, 1e7 K] by Alefeld, Potra and Shi's
//    bracketing method (ACM TOMS 748, 1995; Boost.Math's toms748_solve), with exact Planck
//    radiances (not the Wien approximation) and ln(e^x - 1) evaluated without overflow.
//  - Grey-body fits of a spectrum of radiance per steradian, y = epsilon(lambda) B(nu; T) in the
//    spectrum's own convention:
//      constant: epsilon in (0, 1], the Planck fit of planck_fit.h with the scale (the emissivity)
//        bounded above by 1 (PlanckFitOptions::max_scale);
//      linear:   epsilon(lambda) = e0 + s (lambda - lambda_c), lambda_c the middle of the data's
//        wavelength range, a form in common practice in multi-wavelength pyrometry. Levenberg-
//        Marquardt (K. Levenberg 1944; D. W. Marquardt, SIAM J. Appl. Math. 11, 431 (1963)) in a
//        ceres::Problem over (ln T, e0, s) with an analytic Jacobian, ln T within the temperature
//        bounds and e0 in (0, 1], started from the constant fit (when e0 ends on 1, temperature and
//        slope are solved again with e0 held there, so that the bounded optimum is reached); the
//        covariance of (ln T, e0, s) from ceres_settings::covariance. (Internally the slope is carried as s times the band's half-width,
//        a dimensionless number of the size of e0, so that the covariance is well conditioned.)
//    Without y_error the covariance is scaled by chi^2 / dof as in planck_fit.h (dof = n - 3 for
//    the linear form). Over a narrow band temperature and emissivity are nearly degenerate (a
//    hotter, darker body looks almost the same): a warning says so when |corr(ln T, e0)| > 0.95.
//
// Example:
//   // A grey body of emissivity 0.35 at 1500 K, in W m^-2 sr^-1 m^-1 at 650 nm and 900 nm:
//   double t_b = planckton::radiance_temperature(650e-9, 1.40e8);                       // ~1400 K
//   std::optional<double> t_r = planckton::ratio_temperature(650e-9, 1.40e8, 900e-9, 1.66e9);  // ~1500 K
//   planckton::GreyBodyFitOptions options;
//   options.linear_emissivity = true;
//   planckton::GreyBodyFitResult fit = planckton::fit_grey_body(spectrum, options);  // W/m2/sr/nm data
//   std::printf("T = %.1f K, emissivity %.3f at %.0f nm\n", fit.planck.temperature_k, fit.emissivity,
//               fit.reference_wavelength_m * 1e9);
//
// Options in: GreyBodyFitOptions (the Planck fit's options, and the emissivity form). Result out:
// GreyBodyFitResult (the fit's statistics and how it went in planck, the emissivity with its
// errors and covariance, whether it hit a bound, and warnings).
#pragma once

#include <array>
#include <optional>
#include <vector>

#include "science/planck_fit.h"
#include "science/spectrum.h"

namespace planckton {

// The black-body temperature (K) with spectral radiance L (W m^-2 sr^-1 m^-1) at the wavelength
// (m). Throws InputError (field "radiance_temperature_at") for a non-positive or non-finite
// wavelength or radiance, or a radiance beyond any representable temperature.
double radiance_temperature(double wavelength_m, double spectral_radiance_w_m2_sr_m);

// The ratio (two-colour) temperature of the radiances L1 at l1_m and L2 at l2_m (any common unit
// of radiance per unit wavelength): the T at which B(l1, T) / B(l2, T) = L1 / L2. nullopt when no
// temperature in [1 K, 1e7 K] gives that ratio. Throws InputError (field "ratio_pair") for
// non-positive or non-finite values, or l1_m == l2_m.
std::optional<double> ratio_temperature(double l1_m, double L1, double l2_m, double L2);

struct GreyBodyFitOptions {
  PlanckFitOptions fit;  // its max_scale is replaced by 1 (an emissivity)
  bool linear_emissivity = false;
};

struct GreyBodyFitResult {
  // The fit reported: for the constant form, fit_planck's result (scale = emissivity); for the
  // linear form, the same fields for the three-parameter fit (scale = e0, log_covariance the
  // marginal (ln T, ln e0) block, degrees_of_freedom n - 3, warnings of this fit, start_temperature_k
  // the constant fit's temperature).
  PlanckFitResult planck;
  bool linear = false;
  double reference_wavelength_m = 0.0;  // lambda_c: the middle of the band (for the linear form)
  double emissivity = 0.0;              // epsilon at lambda_c
  double emissivity_error = 0.0;        // 0 when the covariance is unavailable
  double slope_per_m = 0.0;             // d epsilon / d lambda (linear form only)
  double slope_error = 0.0;
  // Row-major 3x3 in (ln T, epsilon, slope per m) for the linear form; for the constant form the
  // 2x2 of (ln T, epsilon) in the top-left and zeros elsewhere. All zeros when unavailable.
  std::array<double, 9> covariance{};
  // epsilon hit 1, or the linear form exceeds 1 or drops below 0 inside the band.
  bool emissivity_at_bound = false;
  double temperature_emissivity_correlation = 0.0;  // corr(ln T, epsilon at lambda_c); 0 if unavailable
  // All warnings: planck.warnings, then "emissivity_at_bound" and "emissivity_temperature_degenerate"
  // (|corr| > 0.95) when they apply.
  std::vector<FitWarning> warnings;
};

// Throws InputError: field "y_unit" when the spectrum is not a radiance per steradian (a flux
// density, or a relative spectrum: an emissivity needs an absolute radiance); "x" when it has
// fewer points than free parameters (or, for the linear form, a single wavelength); and as
// fit_planck for the options.
GreyBodyFitResult fit_grey_body(const MeasuredSpectrum& spectrum, const GreyBodyFitOptions& options);

}  // namespace planckton
