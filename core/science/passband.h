// Passbands: the response curves of photometric bands, the 39 published curves planckton ships, and
// curves a caller brings.
//
// A passband is a response S(lambda) sampled on increasing wavelengths, linear between samples and
// zero outside them, with the kind of detector behind it: photon-counting detectors (CCDs, infrared
// arrays) weight the spectrum by photons, bolometers by energy (Bessell & Murphy 2012, PASP 124, 140,
// appendix A). The shipped curves come from core/data/passbands (copied from the published sources
// named in each file; values as published, peak normalised to 1) and are embedded in the library.
//
// Each band also says how fluxes in it are quoted (see QuotedFlux) and, where its survey published
// one, its Vega zero point. Where these come from the file's own notes the source says so; where
// they come from memory of the mission's documentation the source says "from memory".
//
// Example:
//   const planckton::Passband& j = planckton::builtin_passband("2mass-j");
//   double pivot = planckton::pivot_wavelength(j);   // 1.2393e-6 m
#pragma once

#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace planckton {

enum class DetectorKind { kPhotonCounting, kEnergyIntegrating };

// How a band's flux density is quoted.
//  - kBandAverage: the band-averaged flux density <F_nu> (or <F_lambda>, related through the pivot
//    wavelength), Bessell & Murphy 2012 eqs. A11-A12 (photons) and A20-A21 (energy).
//  - kMonochromatic: F_nu at a reference wavelength lambda_0 for a reference spectrum: the value a
//    source with F_nu proportional to the reference shape would need to give the same detector
//    signal. Infrared missions quote fluxes this way (a power law nu^alpha, e.g. nu F_nu constant,
//    alpha = -1, or a black body of a given temperature); the colour correction of any other
//    spectrum is then part of the model (see synthetic_photometry.h).
struct QuotedFlux {
  enum class Kind { kBandAverage, kMonochromatic };
  enum class Reference { kPowerLaw, kBlackBody };
  Kind kind = Kind::kBandAverage;
  double reference_wavelength_m = 0.0;  // kMonochromatic
  Reference reference = Reference::kPowerLaw;
  double power_law_index = -1.0;        // alpha of F_nu ~ nu^alpha
  double reference_temperature_k = 0.0; // kBlackBody
  std::string source;                   // who defines it for this band
};

// The flux density of a zero-magnitude source, as the band's quoted flux (QuotedFlux) in Jy.
struct ZeroPoint {
  double flux_density_jy = 0.0;
  std::string source;
};

struct Passband {
  std::string id;
  std::string source;              // published source of the curve
  std::string published_at;        // where the source published it
  std::string description;         // the curve as published
  std::vector<std::string> notes;  // notes published with the curve
  DetectorKind detector = DetectorKind::kPhotonCounting;
  std::vector<double> wavelength_m;  // increasing
  std::vector<double> response;      // >= 0, peak 1 for the shipped curves
  std::optional<double> reference_wavelength_m;  // as given with the curve
  QuotedFlux quoted;
  std::optional<ZeroPoint> vega_zero_point;
};

// The shipped bands, parsed once from the embedded files (thread-safe), in the order of INDEX.csv.
const std::vector<Passband>& builtin_passbands();
// nullptr when there is no such band (ids are lower case, e.g. "2mass-ks").
const Passband* find_builtin_passband(std::string_view id);

// A curve the caller brings. Wavelengths are in any spectral-axis unit (nm, um, Angstrom, Hz,
// cm-1 ...; see units.h). Curves in decreasing order (as a frequency axis gives them) are reversed;
// anything else out of order, repeated coordinates, negative or non-finite responses, non-positive
// coordinates, fewer than 3 samples or fewer than 2 with a positive response throw InputError with
// the field (prefix + ".wavelength" or prefix + ".response") and the index of the first bad sample.
struct PassbandInput {
  std::string id;
  std::vector<double> wavelength;
  std::string wavelength_unit;
  std::vector<double> response;
  DetectorKind detector = DetectorKind::kPhotonCounting;
};
Passband make_passband(const PassbandInput& input, const std::string& field_prefix);

// Pivot wavelength (Tokunaga & Vacca 2005, PASP 117, 421, eq. A11; Bessell & Murphy 2012 eq. A16):
// the wavelength at which <F_nu> = lambda_p^2 / c <F_lambda> holds exactly:
//   photons: lambda_p^2 = int S lambda dlambda / int S / lambda dlambda
//   energy:  lambda_p^2 = int S dlambda / int S / lambda^2 dlambda
double pivot_wavelength(const Passband& band);
// Effective width int S dlambda / max S (m): the width of a rectangle of the same area (common practice).
double effective_width(const Passband& band);
// The wavelength range where the response is positive (m).
std::pair<double, double> response_support(const Passband& band);

const char* detector_name(DetectorKind kind);  // "photon_counting" | "energy_integrating"

}  // namespace planckton
