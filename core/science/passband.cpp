#include "science/passband.h"

#include <algorithm>
#include <boost/math/quadrature/gauss.hpp>
#include <charconv>
#include <cmath>
#include <mutex>
#include <stdexcept>
#include <unordered_map>

#include "science/constants.h"
#include "science/embedded_file.h"
#include "science/input_error.h"
#include "science/units.h"

namespace planckton {

namespace {

constexpr double kMicrometre = 1e-6;

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t' || s.front() == '\r')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t' || s.back() == '\r')) s.remove_suffix(1);
  return s;
}

double to_double(std::string_view text) {
  text = trim(text);
  double value = 0.0;
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (error != std::errc() || end != text.data() + text.size()) {
    throw std::logic_error("embedded passband data: not a number: " + std::string(text));
  }
  return value;
}

std::vector<std::string_view> lines_of(std::string_view text) {
  std::vector<std::string_view> lines;
  while (!text.empty()) {
    const auto end = text.find('\n');
    lines.push_back(trim(text.substr(0, end)));
    if (end == std::string_view::npos) break;
    text.remove_prefix(end + 1);
  }
  return lines;
}

// "23.675 micron", "5479.0 Angstrom", "642.0 nm" -> m.
double reference_wavelength(std::string_view text) {
  const auto space = text.find(' ');
  const double value = to_double(text.substr(0, space));
  const std::string_view unit = trim(text.substr(space + 1));
  return constants::kSpeedOfLight / to_frequency(parse_spectral_axis_unit(unit == "micron" ? "um" : unit), value);
}

// One shipped curve file: "# key: value" comments, the header wavelength_um,response, the samples.
Passband parse_curve_file(std::string_view text) {
  Passband band;
  bool header_seen = false;
  for (const std::string_view line : lines_of(text)) {
    if (line.empty()) continue;
    if (line.front() == '#') {
      const std::string_view comment = trim(line.substr(1));
      const auto colon = comment.find(": ");
      if (colon == std::string_view::npos) continue;
      const std::string_view key = comment.substr(0, colon);
      const std::string value(trim(comment.substr(colon + 2)));
      if (key == "band") band.id = value;
      else if (key == "published source") band.source = value;
      else if (key == "where the source published it") band.published_at = value;
      else if (key == "curve as published") band.description = value;
      else if (key == "note") band.notes.push_back(value);
      else if (key == "reference wavelength given with the curve") band.reference_wavelength_m = reference_wavelength(value);
      else if (key == "detector kind") {
        band.detector = value.rfind("energy", 0) == 0 ? DetectorKind::kEnergyIntegrating : DetectorKind::kPhotonCounting;
      }
      continue;
    }
    if (!header_seen) {
      if (line != "wavelength_um,response") throw std::logic_error("embedded passband data: unexpected header");
      header_seen = true;
      continue;
    }
    const auto comma = line.find(',');
    band.wavelength_m.push_back(to_double(line.substr(0, comma)) * kMicrometre);
    band.response.push_back(to_double(line.substr(comma + 1)));
  }
  return band;
}

// A number quoted in a curve's note, e.g. "Cohen (2003) inband flux: 5.082e-10 W / m2".
std::optional<double> note_value(const Passband& band, std::string_view prefix) {
  for (const std::string& note : band.notes) {
    if (note.rfind(prefix, 0) != 0) continue;
    const std::string_view rest = trim(std::string_view(note).substr(prefix.size()));
    return to_double(rest.substr(0, rest.find(' ')));
  }
  return std::nullopt;
}

QuotedFlux monochromatic_power_law(double reference_m, double alpha, std::string source) {
  QuotedFlux q;
  q.kind = QuotedFlux::Kind::kMonochromatic;
  q.reference_wavelength_m = reference_m;
  q.reference = QuotedFlux::Reference::kPowerLaw;
  q.power_law_index = alpha;
  q.source = std::move(source);
  return q;
}

QuotedFlux monochromatic_black_body(double reference_m, double temperature_k, std::string source) {
  QuotedFlux q = monochromatic_power_law(reference_m, 0.0, std::move(source));
  q.reference = QuotedFlux::Reference::kBlackBody;
  q.reference_temperature_k = temperature_k;
  return q;
}

// How each mission quotes its fluxes, and Vega zero points. Values marked "from memory" are the
// missions' documented numbers as remembered, not read from a file here; check them against the
// mission's documentation before relying on them at the per-cent level.
void add_band_conventions(Passband& band) {
  const std::string& id = band.id;
  const double reference = band.reference_wavelength_m.value_or(0.0);
  band.quoted.source = "band-averaged flux density (Bessell & Murphy 2012, PASP 124, 140)";
  if (id.rfind("irac-", 0) == 0) {
    band.quoted = monochromatic_power_law(reference, -1.0,
        "nu F_nu constant at the reference wavelength (Reach et al. 2005, PASP 117, 978; from memory)");
    static const std::unordered_map<std::string, double> kIrac = {
        {"irac-i1", 280.9}, {"irac-i2", 179.7}, {"irac-i3", 115.0}, {"irac-i4", 64.9}};
    band.vega_zero_point = ZeroPoint{kIrac.at(id), "Reach et al. 2005, PASP 117, 978, table 3 (from memory)"};
  } else if (id.rfind("mips-", 0) == 0) {
    band.quoted = monochromatic_black_body(reference, 1e4,
        "10,000 K black body at the reference wavelength (MIPS Data Handbook v3.3; the curve's notes)");
    static const std::unordered_map<std::string, std::pair<double, const char*>> kMips = {
        {"mips-24", {7.17, "Engelbracht et al. 2007, PASP 119, 994 (from memory)"}},
        {"mips-70", {0.778, "Gordon et al. 2007, PASP 119, 1019 (from memory)"}},
        {"mips-160", {0.159, "Stansberry et al. 2007, PASP 119, 1038 (from memory)"}}};
    const auto& [flux, source] = kMips.at(id);
    band.vega_zero_point = ZeroPoint{flux, source};
  } else if (id.rfind("pacs-", 0) == 0) {
    band.quoted = monochromatic_power_law(reference, -1.0,
        "nu F_nu constant at the reference wavelength (PACS Observer's Manual; from memory)");
  } else if (id.rfind("spire-", 0) == 0) {
    band.quoted = monochromatic_power_law(reference, -1.0,
        "nu F_nu constant at the reference wavelength (SPIRE Observers' Manual; from memory)");
  } else if (id.rfind("wise-", 0) == 0) {
    band.quoted = monochromatic_power_law(reference, -2.0,
        "F_nu ~ nu^-2 at the reference wavelength (Wright et al. 2010, AJ 140, 1868; Jarrett et al. 2011, "
        "ApJ 735, 112; from memory)");
    static const std::unordered_map<std::string, double> kWise = {
        {"wise-w1", 309.540}, {"wise-w2", 171.787}, {"wise-w3", 31.674}, {"wise-w4", 8.363}};
    band.vega_zero_point = ZeroPoint{kWise.at(id), "Jarrett et al. 2011, ApJ 735, 112, table 1 (from memory)"};
  } else if (id.rfind("2mass-", 0) == 0) {
    // Cohen et al. 2003 (AJ 126, 1090): Vega's in-band flux over the bandwidth is its band-averaged
    // F_lambda; both numbers are in the curve's notes. As F_nu through the pivot wavelength.
    const auto in_band = note_value(band, "Cohen (2003) inband flux:");
    const auto width = note_value(band, "Cohen (2003) bandwidth:");
    if (in_band && width) {
      const double f_lambda = *in_band / (*width * kMicrometre);  // W m^-2 m^-1
      const double pivot = pivot_wavelength(band);
      band.vega_zero_point = ZeroPoint{f_lambda * pivot * pivot / constants::kSpeedOfLight / 1e-26,
                                       "Cohen et al. 2003, AJ 126, 1090: in-band flux / bandwidth from the curve's "
                                       "notes, as <F_lambda>, converted at the pivot wavelength"};
    }
  } else if (id == "johnson-u" || id == "johnson-b" || id == "johnson-v" || id == "cousins-r" || id == "cousins-i") {
    static const std::unordered_map<std::string, double> kJohnsonCousins = {
        {"johnson-u", 1790.0}, {"johnson-b", 4063.0}, {"johnson-v", 3636.0}, {"cousins-r", 3064.0}, {"cousins-i", 2416.0}};
    band.vega_zero_point = ZeroPoint{kJohnsonCousins.at(id),
                                     "Bessell, Castelli & Plez 1998, A&A 333, 231, table A2 (from memory)"};
  }
}

std::vector<Passband> load_builtin_passbands() {
  std::unordered_map<std::string_view, std::string_view> files;
  for (std::size_t i = 0; i < data::kPassbandFilesCount; ++i) files[data::kPassbandFiles[i].name] = data::kPassbandFiles[i].bytes;
  std::vector<Passband> bands;
  bool header = true;
  for (const std::string_view line : lines_of(files.at("INDEX.csv"))) {
    if (line.empty() || header) {
      header = false;
      continue;
    }
    const std::string id(line.substr(0, line.find(',')));
    Passband band = parse_curve_file(files.at(id + ".csv"));
    if (band.id != id) throw std::logic_error("embedded passband data: " + id + ".csv names band " + band.id);
    add_band_conventions(band);
    bands.push_back(std::move(band));
  }
  return bands;
}

// Integral of S(lambda) lambda^power dlambda with S linear between samples: Gauss-Legendre on each
// sample interval (exact for the polynomial powers, and to rounding for the negative ones).
double response_moment(const Passband& band, int power) {
  using Rule = boost::math::quadrature::gauss<double, 10>;
  double total = 0.0;
  for (std::size_t i = 0; i + 1 < band.wavelength_m.size(); ++i) {
    const double a = band.wavelength_m[i], b = band.wavelength_m[i + 1];
    const double sa = band.response[i], sb = band.response[i + 1];
    if (sa == 0.0 && sb == 0.0) continue;
    total += Rule::integrate([&](double lambda) { return (sa + (sb - sa) * (lambda - a) / (b - a)) * std::pow(lambda, power); },
                             a, b);
  }
  return total;
}

}  // namespace

const std::vector<Passband>& builtin_passbands() {
  static const std::vector<Passband> bands = load_builtin_passbands();
  return bands;
}

const Passband* find_builtin_passband(std::string_view id) {
  for (const Passband& band : builtin_passbands()) {
    if (band.id == id) return &band;
  }
  return nullptr;
}

double pivot_wavelength(const Passband& band) {
  const bool photons = band.detector == DetectorKind::kPhotonCounting;
  return std::sqrt(photons ? response_moment(band, 1) / response_moment(band, -1)
                           : response_moment(band, 0) / response_moment(band, -2));
}

double effective_width(const Passband& band) {
  return response_moment(band, 0) / *std::max_element(band.response.begin(), band.response.end());
}

std::pair<double, double> response_support(const Passband& band) {
  std::size_t first = 0, last = band.response.size() - 1;
  while (first < last && band.response[first] == 0.0 && band.response[first + 1] == 0.0) ++first;
  while (last > first && band.response[last] == 0.0 && band.response[last - 1] == 0.0) --last;
  return {band.wavelength_m[first], band.wavelength_m[last]};
}

const char* detector_name(DetectorKind kind) {
  return kind == DetectorKind::kPhotonCounting ? "photon_counting" : "energy_integrating";
}

Passband make_passband(const PassbandInput& input, const std::string& field_prefix) {
  const std::string wavelength_field = field_prefix + ".wavelength";
  const std::string response_field = field_prefix + ".response";
  const SpectralAxisUnit unit = parse_spectral_axis_unit(input.wavelength_unit);
  const std::size_t n = input.wavelength.size();
  if (input.response.size() != n) {
    throw InputError(response_field, "has " + std::to_string(input.response.size()) + " values for " +
                                         std::to_string(n) + " wavelengths");
  }
  if (n < 3) throw InputError(wavelength_field, "a curve needs at least 3 samples, has " + std::to_string(n));
  Passband band;
  band.id = input.id;
  band.source = "given with the request";
  band.detector = input.detector;
  band.quoted.source = "band-averaged flux density (Bessell & Murphy 2012, PASP 124, 140)";
  band.wavelength_m.resize(n);
  band.response = input.response;
  std::size_t positive = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const double x = input.wavelength[i];
    if (!std::isfinite(x) || !(x > 0.0)) throw InputError(wavelength_field, "must be positive and finite", i);
    band.wavelength_m[i] = constants::kSpeedOfLight / to_frequency(unit, x);
    // A positive coordinate can still convert to no wavelength (2e-320 GHz is 1e316 m: infinity),
    // which the band quadrature cannot take (found by tests/fuzz/fuzz_inline_passband).
    if (!std::isfinite(band.wavelength_m[i]) || !(band.wavelength_m[i] > 0.0)) {
      throw InputError(wavelength_field, "is outside the representable range", i);
    }
    const double s = input.response[i];
    if (!std::isfinite(s) || s < 0.0) throw InputError(response_field, "must be finite and not negative", i);
    if (s > 0.0) ++positive;
  }
  if (positive < 2) throw InputError(response_field, "needs at least 2 positive values");
  // A decreasing curve (in wavelength) is repaired by reversing it; any other disorder is not.
  const auto& w = band.wavelength_m;
  const bool decreasing = w[1] < w[0];
  for (std::size_t i = 1; i < n; ++i) {
    if (decreasing ? !(w[i] < w[i - 1]) : !(w[i] > w[i - 1])) {
      throw InputError(wavelength_field, "must be strictly increasing or strictly decreasing; this sample breaks "
                                         "the order or repeats a value", i);
    }
  }
  if (decreasing) {
    std::reverse(band.wavelength_m.begin(), band.wavelength_m.end());
    std::reverse(band.response.begin(), band.response.end());
  }
  return band;
}

}  // namespace planckton
