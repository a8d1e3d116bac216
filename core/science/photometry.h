// Band measurements: what the caller sent (flux densities or magnitudes, detections or upper
// limits), and the same prepared for fitting.
//
// Units. Every energy flux density of units.h (per frequency or per wavelength, per steradian or
// not; photon units are refused: a band-averaged photon flux density has no single definition), and
// magnitudes:
//   ABmag    F_nu = 3631 Jy 10^(-0.4 m)            (Oke & Gunn 1983, ApJ 266, 713)
//   Vegamag  F_quoted = ZP 10^(-0.4 m)             ZP the band's zero point (passband.h) or the
//                                                  measurement's own zero_point_jy, which wins
// A flux per wavelength is compared with c / lambda_q^2 times the quoted F_nu (synthetic_photometry.h).
//
// Errors. Magnitudes are fitted as magnitudes: the residual is (m_model - m) / sigma_m, exact for
// Gaussian magnitude errors, with no linearisation (a choice: at 0.1 mag the linearised flux error
// would be off by 5 % and symmetric where the truth is not). Fluxes are fitted as fluxes. A
// systematic floor f (a fraction of the flux; per band, else the global one) is added in quadrature:
// sigma^2 + (f F)^2 for fluxes, sigma_m^2 + (2.5 / ln 10 f)^2 for magnitudes (the linearised
// equivalent; common practice for absolute calibration uncertainty). Without any errors every band
// gets the same fractional weight and the errors are estimated from the scatter, as for spectra.
//
// Upper limits. value = the limit, error = the 1-sigma noise (a 3-sigma limit has value = 3 error),
// in flux units. They enter the likelihood as censored data (Sawicki 2012, PASP 124, 1208, eq. 15):
// -2 ln L gains -2 ln Phi((F_lim - F_model) / sigma) per limit (Phi the standard normal
// distribution function; the constant terms are dropped), as the squared residual
// r = sqrt(-2 ln Phi(u)). A model far below the limit costs nothing; one above it costs about
// ((F_model - F_lim) / sigma)^2. The systematic floor does not apply to limits (they are noise).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "science/passband.h"
#include "science/synthetic_photometry.h"
#include "science/units.h"

namespace planckton {

struct BandMeasurementInput {
  const Passband* band = nullptr;  // a shipped band or the caller's (must outlive the fit)
  double value = 0.0;
  std::optional<double> error;
  std::string unit;
  bool upper_limit = false;
  std::optional<double> zero_point_jy;     // Vegamag; overrides the band's
  std::optional<QuotedFlux> quoted;        // overrides the band's convention
  std::optional<double> systematic_fraction;
};

struct PhotometryInput {
  std::vector<BandMeasurementInput> measurements;
  double systematic_fraction = 0.0;  // global floor, for bands without their own
};

enum class MeasurementScale { kFluxDensity, kAbMagnitude, kVegaMagnitude };

struct BandMeasurement {
  const Passband* band = nullptr;
  BandQuadrature quadrature;
  QuotedFlux quoted;
  MeasurementScale scale = MeasurementScale::kFluxDensity;
  std::string unit;              // as given
  double unit_to_si = 1.0;       // flux densities: value * unit_to_si is SI
  bool per_wavelength = false;   // flux per wavelength: compared with c / lambda_q^2 F_quoted
  double value = 0.0;            // SI flux density, or magnitude
  double error = 0.0;            // total one-sigma, same space as value; 0 when none was given
  bool upper_limit = false;
  double zero_point_si = 0.0;    // magnitudes: F_nu of m = 0, W m^-2 Hz^-1
  std::string zero_point_source;

  // The measurement-space value of a quoted F_nu (SI): flux, or magnitude.
  double from_quoted_f_nu(double f_nu) const;
  // The quoted F_nu (SI) of a measurement-space value.
  double to_quoted_f_nu(double value) const;
};

struct MeasuredPhotometry {
  std::vector<BandMeasurement> bands;
  bool per_steradian = false;  // every band is an intensity: the scale is an emissivity
  bool has_errors = false;
  std::size_t detections = 0;
  std::size_t upper_limits = 0;
  double min_frequency_hz = 0.0;  // over all quadrature nodes
  double max_frequency_hz = 0.0;
};

// Throws InputError (field "photometry.<member>", index = the measurement's index) for bad values,
// units, zero points, missing errors on limits, mixed per-steradian and per-source bands, or fewer
// than two measurements or no detection.
MeasuredPhotometry prepare_photometry(const PhotometryInput& input);

}  // namespace planckton
