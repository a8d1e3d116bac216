#include "science/units.h"

#include <array>
#include <cctype>
#include <charconv>
#include <cmath>
#include <optional>

#include "science/constants.h"
#include "science/input_error.h"

namespace planckton {

namespace {

// Exponents of mass, length, time, photon count and solid angle.
struct Dimension {
  int mass = 0, length = 0, time = 0, photons = 0, steradians = 0;
  bool operator==(const Dimension&) const = default;
};

Dimension scaled(Dimension d, int power) {
  return {d.mass * power, d.length * power, d.time * power, d.photons * power, d.steradians * power};
}

Dimension plus(Dimension a, Dimension b) {
  return {a.mass + b.mass, a.length + b.length, a.time + b.time, a.photons + b.photons,
          a.steradians + b.steradians};
}

struct Symbol {
  std::string_view name;
  Dimension dimension;
  double to_si;
  bool takes_prefix;
  bool relative = false;
};

constexpr Dimension kLength{0, 1, 0, 0, 0};
constexpr Dimension kEnergy{1, 2, -2, 0, 0};
constexpr Dimension kPower{1, 2, -3, 0, 0};

// Symbols follow the SI Brochure (BIPM, 9th edition 2019) and VOUnit; the jansky is
// 1e-26 W m^-2 Hz^-1 (IAU), the erg 1e-7 J, the angstrom 1e-10 m, the electronvolt e J (CODATA 2018).
const std::array<Symbol, 22> kSymbols = {{
    {"m", kLength, 1.0, true},
    {"s", {0, 0, 1, 0, 0}, 1.0, true},
    {"g", {1, 0, 0, 0, 0}, 1e-3, true},
    {"Hz", {0, 0, -1, 0, 0}, 1.0, true},
    {"J", kEnergy, 1.0, true},
    {"W", kPower, 1.0, true},
    {"erg", kEnergy, 1e-7, false},
    {"eV", kEnergy, constants::kElementaryCharge, true},
    {"Jy", {1, 0, -2, 0, 0}, 1e-26, true},
    {"sr", {0, 0, 0, 0, 1}, 1.0, false},
    {"Angstrom", kLength, 1e-10, false},
    {"angstrom", kLength, 1e-10, false},
    {"AA", kLength, 1e-10, false},
    {"\xC3\x85", kLength, 1e-10, false},      // U+00C5
    {"\xE2\x84\xAB", kLength, 1e-10, false},  // U+212B ANGSTROM SIGN
    {"micron", kLength, 1e-6, false},
    {"photon", {0, 0, 0, 1, 0}, 1.0, false},
    {"ph", {0, 0, 0, 1, 0}, 1.0, false},
    {"pc", kLength, constants::kParsec, true},
    {"au", kLength, constants::kAstronomicalUnit, false},
    {"ly", kLength, constants::kLightYear, false},
    // An arbitrary energy flux: "relative/nm" is a relative spectral distribution per wavelength.
    {"relative", {1, 0, -3, 0, 0}, 1.0, false, true},
}};

struct Prefix {
  std::string_view text;
  double factor;
};

// SI prefixes (SI Brochure, 9th edition); "u" and both Unicode micro signs for micro.
const std::array<Prefix, 20> kPrefixes = {{
    {"da", 1e1}, {"\xC2\xB5", 1e-6}, {"\xCE\xBC", 1e-6}, {"Y", 1e24}, {"Z", 1e21}, {"E", 1e18},
    {"P", 1e15}, {"T", 1e12}, {"G", 1e9}, {"M", 1e6}, {"k", 1e3}, {"h", 1e2}, {"d", 1e-1},
    {"c", 1e-2}, {"m", 1e-3}, {"u", 1e-6}, {"n", 1e-9}, {"p", 1e-12}, {"f", 1e-15}, {"a", 1e-18},
}};

struct ParsedUnit {
  Dimension dimension;
  double to_si = 1.0;
  bool relative = false;
};

std::optional<std::pair<const Symbol*, double>> resolve_symbol(std::string_view name) {
  for (const Symbol& symbol : kSymbols) {
    if (symbol.name == name) return std::make_pair(&symbol, 1.0);
  }
  for (const Prefix& prefix : kPrefixes) {
    if (name.size() <= prefix.text.size() || name.substr(0, prefix.text.size()) != prefix.text) continue;
    const std::string_view rest = name.substr(prefix.text.size());
    for (const Symbol& symbol : kSymbols) {
      if (symbol.takes_prefix && symbol.name == rest) return std::make_pair(&symbol, prefix.factor);
    }
  }
  return std::nullopt;
}

std::string joined(const std::vector<std::string>& items) {
  std::string out;
  for (const auto& item : items) out += (out.empty() ? "" : ", ") + item;
  return out;
}

bool is_symbol_char(unsigned char c) { return std::isalpha(c) || c >= 0x80; }

class UnitParser {
 public:
  UnitParser(std::string_view text, std::string field, const std::vector<std::string>& accepted)
      : text_(text), field_(std::move(field)), accepted_(accepted) {}

  ParsedUnit parse() {
    skip_spaces();
    if (at_end()) fail("is empty");
    bool divide = false;
    while (true) {
      parse_factor(divide);
      const bool had_space = skip_spaces();
      if (at_end()) break;
      divide = false;
      const char c = text_[pos_];
      if (c == '/') {
        divide = true;
        ++pos_;
      } else if (c == '.' || (c == '*' && !next_is("**"))) {
        ++pos_;
      } else if (!had_space) {
        fail("has an unexpected character '" + std::string(1, c) + "'");
      }
      skip_spaces();
      if (at_end()) fail("ends with an operator");
    }
    return result_;
  }

 private:
  void parse_factor(bool divide) {
    const std::size_t start = pos_;
    while (!at_end() && is_symbol_char(static_cast<unsigned char>(text_[pos_]))) ++pos_;
    const std::string_view name = text_.substr(start, pos_ - start);
    if (name.empty()) {
      // A bare "1" is allowed as a numerator, as in "1/cm".
      if (!at_end() && text_[pos_] == '1' && !divide) {
        ++pos_;
        return;
      }
      fail("expects a unit symbol at position " + std::to_string(pos_ + 1));
    }
    const auto resolved = resolve_symbol(name);
    if (!resolved) fail("has an unknown symbol '" + std::string(name) + "'");
    int power = parse_power();
    if (divide) power = -power;
    const Symbol& symbol = *resolved->first;
    result_.dimension = plus(result_.dimension, scaled(symbol.dimension, power));
    result_.to_si *= std::pow(resolved->second * symbol.to_si, power);
    result_.relative = result_.relative || symbol.relative;
  }

  int parse_power() {
    if (next_is("**")) {
      pos_ += 2;
    } else if (!at_end() && text_[pos_] == '^') {
      ++pos_;
    }
    const bool parenthesised = !at_end() && text_[pos_] == '(';
    if (parenthesised) ++pos_;
    int sign = 1;
    if (!at_end() && (text_[pos_] == '-' || text_[pos_] == '+')) {
      sign = text_[pos_] == '-' ? -1 : 1;
      ++pos_;
    }
    int power = 1;
    const std::size_t start = pos_;
    while (!at_end() && std::isdigit(static_cast<unsigned char>(text_[pos_]))) ++pos_;
    if (pos_ > start) {
      const auto [end, error] = std::from_chars(text_.data() + start, text_.data() + pos_, power);
      if (error != std::errc() || end != text_.data() + pos_ || power == 0 || power > 9) {
        fail("has an unsupported power (1 to 9 are accepted)");
      }
    } else if (sign == -1 || parenthesised) {
      fail("has a sign or parenthesis without a power");
    }
    if (parenthesised) {
      if (at_end() || text_[pos_] != ')') fail("has an unclosed parenthesis");
      ++pos_;
    }
    return sign * power;
  }

  bool skip_spaces() {
    const std::size_t start = pos_;
    while (!at_end() && std::isspace(static_cast<unsigned char>(text_[pos_]))) ++pos_;
    return pos_ > start;
  }
  bool at_end() const { return pos_ >= text_.size(); }
  bool next_is(std::string_view s) const { return text_.substr(pos_, s.size()) == s; }

  [[noreturn]] void fail(const std::string& why) const {
    throw InputError(field_, "unit '" + std::string(text_) + "' " + why + "; accepted are, for example: " +
                                 joined(accepted_) + " (slash or IVOA VOUnit style, any SI prefix)");
  }

  std::string_view text_;
  std::string field_;
  const std::vector<std::string>& accepted_;
  std::size_t pos_ = 0;
  ParsedUnit result_;
};

[[noreturn]] void reject_kind(const std::string& field, std::string_view text, std::string_view what,
                              const std::vector<std::string>& accepted) {
  throw InputError(field, "unit '" + std::string(text) + "' is not " + std::string(what) +
                              "; accepted are, for example: " + joined(accepted) +
                              " (slash or IVOA VOUnit style, any SI prefix)");
}

struct ConventionDimension {
  Convention convention;
  Dimension dimension;  // without the photon count and solid angle
};

// Flux density per unit of the spectral variable, W m^-2 per (Hz, m, m^-1 or J), and photon
// counts s^-1 m^-2 per the same.
const std::array<ConventionDimension, 8> kConventionDimensions = {{
    {Convention::kEnergyPerFrequency, {1, 0, -2, 0, 0}},
    {Convention::kEnergyPerWavelength, {1, -1, -3, 0, 0}},
    {Convention::kEnergyPerWavenumber, {1, 1, -3, 0, 0}},
    {Convention::kEnergyPerPhotonEnergy, {0, -2, -1, 0, 0}},
    {Convention::kPhotonsPerFrequency, {0, -2, 0, 1, 0}},
    {Convention::kPhotonsPerWavelength, {0, -3, -1, 1, 0}},
    {Convention::kPhotonsPerWavenumber, {0, -1, -1, 1, 0}},
    {Convention::kPhotonsPerPhotonEnergy, {-1, -4, 1, 1, 0}},
}};

void require_positive_finite(double value, const char* what) {
  if (!(value > 0.0) || !std::isfinite(value)) {
    throw std::domain_error(std::string(what) + " must be positive and finite");
  }
}

}  // namespace

SpectralAxisUnit parse_spectral_axis_unit(std::string_view text) {
  const ParsedUnit parsed = UnitParser(text, "x_unit", documented_spectral_axis_units()).parse();
  SpectralAxisUnit unit{std::string(text), SpectralAxisKind::kWavelength, parsed.to_si};
  if (parsed.relative) reject_kind("x_unit", text, "a spectral coordinate", documented_spectral_axis_units());
  if (parsed.dimension == Dimension{0, 1, 0, 0, 0}) {
    unit.kind = SpectralAxisKind::kWavelength;
  } else if (parsed.dimension == Dimension{0, 0, -1, 0, 0}) {
    unit.kind = SpectralAxisKind::kFrequency;
  } else if (parsed.dimension == Dimension{0, -1, 0, 0, 0}) {
    unit.kind = SpectralAxisKind::kWavenumber;
  } else if (parsed.dimension == kEnergy) {
    unit.kind = SpectralAxisKind::kPhotonEnergy;
  } else {
    reject_kind("x_unit", text, "a wavelength, frequency, wavenumber or photon energy",
                documented_spectral_axis_units());
  }
  return unit;
}

FluxDensityUnit parse_flux_density_unit(std::string_view text) {
  const ParsedUnit parsed = UnitParser(text, "y_unit", documented_flux_density_units()).parse();
  const int photons = parsed.dimension.photons;
  const int steradians = parsed.dimension.steradians;
  Dimension rest = parsed.dimension;
  rest.steradians = 0;
  if ((photons != 0 && photons != 1) || (steradians != 0 && steradians != -1) ||
      (parsed.relative && photons != 0)) {
    reject_kind("y_unit", text, "a spectral flux density or intensity", documented_flux_density_units());
  }
  for (const ConventionDimension& candidate : kConventionDimensions) {
    if (candidate.dimension == rest) {
      return FluxDensityUnit{std::string(text), candidate.convention, steradians == -1, parsed.relative,
                             parsed.to_si};
    }
  }
  reject_kind("y_unit", text, "a spectral flux density or intensity", documented_flux_density_units());
}

double parse_length_unit(std::string_view text) {
  const ParsedUnit parsed = UnitParser(text, "distance.unit", documented_length_units()).parse();
  if (parsed.relative || !(parsed.dimension == kLength)) {
    reject_kind("distance.unit", text, "a length", documented_length_units());
  }
  return parsed.to_si;
}

double to_frequency(const SpectralAxisUnit& unit, double value) {
  require_positive_finite(value, "a spectral coordinate");
  const double si = value * unit.to_si;
  switch (unit.kind) {
    case SpectralAxisKind::kWavelength: return constants::kSpeedOfLight / si;
    case SpectralAxisKind::kFrequency: return si;
    case SpectralAxisKind::kWavenumber: return constants::kSpeedOfLight * si;
    case SpectralAxisKind::kPhotonEnergy: return si / constants::kPlanck;
  }
  return si;
}

double from_frequency(const SpectralAxisUnit& unit, double frequency_hz) {
  require_positive_finite(frequency_hz, "a frequency");
  switch (unit.kind) {
    case SpectralAxisKind::kWavelength: return constants::kSpeedOfLight / frequency_hz / unit.to_si;
    case SpectralAxisKind::kFrequency: return frequency_hz / unit.to_si;
    case SpectralAxisKind::kWavenumber: return frequency_hz / constants::kSpeedOfLight / unit.to_si;
    case SpectralAxisKind::kPhotonEnergy: return frequency_hz * constants::kPlanck / unit.to_si;
  }
  return frequency_hz;
}

bool axis_is_wavelength_like(const SpectralAxisUnit& unit) {
  return unit.kind == SpectralAxisKind::kWavelength;
}

const std::vector<std::string>& documented_spectral_axis_units() {
  static const std::vector<std::string> kUnits = {"Angstrom", "nm", "um", "mm", "m", "Hz", "kHz", "MHz",
                                                  "GHz", "THz", "cm-1", "eV", "keV"};
  return kUnits;
}

const std::vector<std::string>& documented_flux_density_units() {
  static const std::vector<std::string> kUnits = {
      "erg/s/cm2/Angstrom", "erg/s/cm2/nm", "W/m2/nm", "W/m2/um", "W/m2/Hz", "erg/s/cm2/Hz", "Jy",
      "mJy", "uJy", "photon/s/cm2/Angstrom", "W/m2/sr/nm", "W/m2/sr/um", "W/m2/sr/Hz", "MJy/sr",
      "Jy/sr", "relative/nm", "relative/Hz"};
  return kUnits;
}

const std::vector<std::string>& documented_length_units() {
  static const std::vector<std::string> kUnits = {"pc", "kpc", "Mpc", "au", "ly", "m", "km"};
  return kUnits;
}

}  // namespace planckton
