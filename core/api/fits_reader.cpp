#include "api/fits_reader.h"

#include <fitsio.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>

#include "api/problem.h"
#include "science/air_wavelength.h"
#include "science/input_error.h"
#include "science/units.h"

namespace planckton::api {

namespace {

constexpr std::size_t kBlockBytes = 2880;  // FITS 4.0 sec. 3.1: a FITS file is a sequence of 2880-byte blocks
constexpr std::size_t kCardBytes = 80;     // sec. 4.1: a header is a sequence of 80-character keyword records
constexpr long long kMaxPoints = 10'000'000;
constexpr long long kMaxPhotometryRows = 100'000;
constexpr std::size_t kListedHdus = 12;
constexpr std::size_t kListedColumns = 16;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// ---- text ----------------------------------------------------------------------------------

std::string trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return std::string(s);
}

std::string lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string upper(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  return out;
}

bool iequals(std::string_view a, std::string_view b) { return lower(a) == lower(b); }

bool all_digits(std::string_view text) {
  return !text.empty() && std::all_of(text.begin(), text.end(), [](char c) { return std::isdigit(static_cast<unsigned char>(c)); });
}

// Quoted, at most `limit` characters, non-printable bytes shown as '?'.
std::string in_quotes(std::string_view text, std::size_t limit = 48) {
  std::string shown(text.substr(0, limit));
  for (char& c : shown) {
    if (!std::isprint(static_cast<unsigned char>(c))) c = '?';
  }
  return "'" + shown + (text.size() > limit ? "...'" : "'");
}

std::string number(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.10g", value);
  return text;
}

std::string count(long long n, const char* what) {
  return std::to_string(n) + " " + what + (n == 1 ? "" : "s");
}

std::string joined(const std::vector<std::string>& items, const char* separator = ", ") {
  std::string out;
  for (const std::string& item : items) out += (out.empty() ? "" : separator) + item;
  return out;
}

// ---- problems ------------------------------------------------------------------------------

[[noreturn]] void unreadable(std::string detail) { throw ProblemError(malformed_document(std::move(detail))); }

[[noreturn]] void unusable(std::string detail, std::vector<std::string> accepted = {}) {
  throw ProblemError(invalid_value(std::nullopt, std::move(detail), std::move(accepted)));
}

[[noreturn]] void bad_option(const std::string& parameter, std::string detail, std::vector<std::string> accepted = {}) {
  throw ProblemError(invalid_parameter(parameter, std::move(detail), std::move(accepted)));
}

[[noreturn]] void too_large(std::string detail) { throw ProblemError(payload_too_large(std::move(detail))); }

// cfitsio's short text for a status code (its message stack is never printed).
std::string cfitsio_says(int status) {
  char text[FLEN_STATUS + 1] = {};
  fits_get_errstatus(status, text);
  return "cfitsio: " + std::string(text);
}

// ---- bytes before cfitsio ------------------------------------------------------------------

bool starts_with(std::string_view bytes, std::string_view prefix) { return bytes.substr(0, prefix.size()) == prefix; }

// The kind of compression the bytes start with, if any (the formats' magic numbers: gzip RFC 1952,
// bzip2, Unix compress, zip, xz).
std::optional<std::string> compression_of(std::string_view bytes) {
  if (starts_with(bytes, "\x1f\x8b")) return "gzip";
  if (starts_with(bytes, "\x1f\x9d")) return "Unix compress (.Z)";
  if (starts_with(bytes, "BZh")) return "bzip2";
  if (starts_with(bytes, "PK\x03\x04")) return "zip";
  if (starts_with(bytes, std::string_view("\xfd" "7zXZ\0", 6))) return "xz";
  return std::nullopt;
}

// The offset just past the END record of the header that starts at `start`, if the bytes hold it
// (FITS 4.0 sec. 4.4.1: END, then spaces, closes every header).
std::optional<std::size_t> header_end(std::string_view bytes, std::size_t start) {
  for (std::size_t card = start; card + kCardBytes <= bytes.size(); card += kCardBytes) {
    const std::string_view record = bytes.substr(card, kCardBytes);
    if (record.substr(0, 3) == "END" && record.find_first_not_of(' ', 3) == std::string_view::npos) {
      return card + kCardBytes;
    }
  }
  return std::nullopt;
}

long long round_up_to_block(long long n) {
  const long long block = static_cast<long long>(kBlockBytes);
  return (n + block - 1) / block * block;
}

// a * b, or nullopt when it does not fit.
std::optional<long long> times(long long a, long long b) {
  long long product = 0;
  if (__builtin_mul_overflow(a, b, &product)) return std::nullopt;
  return product;
}

// ---- names the reader recognises -------------------------------------------------------------

enum class ErrorKind { kSigma, kVariance, kInverseVariance };

const char* describe(ErrorKind kind) {
  switch (kind) {
    case ErrorKind::kSigma: return "1-sigma errors";
    case ErrorKind::kVariance: return "variance, sigma = sqrt(var)";
    case ErrorKind::kInverseVariance: return "inverse variance, sigma = 1/sqrt(ivar)";
  }
  return "";
}

// EXTNAMEs of error arrays beside an image spectrum.
std::optional<ErrorKind> error_kind_of_extname(std::string_view extname) {
  const std::string name = upper(trim(extname));
  for (const char* sigma : {"ERR", "ERROR", "ERRORS", "SIGMA", "STAT", "STDDEV"}) {
    if (name == sigma) return ErrorKind::kSigma;
  }
  if (name.rfind("UNCERT", 0) == 0) return ErrorKind::kSigma;
  for (const char* ivar : {"IVAR", "INVVAR", "INV_VAR"}) {
    if (name == ivar) return ErrorKind::kInverseVariance;
  }
  if (name == "VAR" || name == "VARIANCE") return ErrorKind::kVariance;
  return std::nullopt;
}

// HDUCLAS3 of error arrays (the HDUCLASn classification used by ESO data products, from memory).
std::optional<ErrorKind> error_kind_of_hduclas3(std::string_view hduclas3) {
  const std::string name = upper(trim(hduclas3));
  if (name == "RMSE") return ErrorKind::kSigma;
  if (name == "MSE") return ErrorKind::kVariance;
  if (name == "INVMSE") return ErrorKind::kInverseVariance;
  return std::nullopt;
}

const std::vector<std::string>& spectral_column_names() {
  // Vacuum and log names before the air ones, so that a table with both gives the vacuum column.
  static const std::vector<std::string> kNames = {
      "wave", "wavelength", "lambda", "lam", "wave_vac", "wavelength_vac", "lambda_vac", "loglam", "freq",
      "frequency", "nu", "wavenumber", "awav", "wave_air", "wavelength_air", "lambda_air", "x"};
  return kNames;
}

const std::vector<std::string>& value_column_names() {
  static const std::vector<std::string> kNames = {"flux", "flux_density", "f_nu", "fnu", "f_lambda", "flam",
                                                  "flambda", "intensity", "radiance", "spec", "y"};
  return kNames;
}

const std::vector<std::string>& error_column_names() {
  static const std::vector<std::string> kNames = {
      "error", "err", "sigma", "flux_err", "flux_error", "err_flux", "error_flux", "uncertainty", "y_error",
      "ivar", "invvar", "inverse_variance", "var", "variance"};
  return kNames;
}

ErrorKind error_kind_of_column(std::string_view name) {
  const std::string n = lower(trim(name));
  if (n == "ivar" || n == "invvar" || n == "inv_var" || n == "inverse_variance") return ErrorKind::kInverseVariance;
  if (n == "var" || n == "variance") return ErrorKind::kVariance;
  return ErrorKind::kSigma;
}

// A column name that says air: the word "air" in it (wave_air, AIR_WAVELENGTH), or "awav".
bool is_air_column_name(std::string_view name) {
  const std::string n = lower(name);
  if (n == "awav") return true;
  std::size_t i = 0;
  while (i < n.size()) {
    while (i < n.size() && !std::isalnum(static_cast<unsigned char>(n[i]))) ++i;
    const std::size_t start = i;
    while (i < n.size() && std::isalnum(static_cast<unsigned char>(n[i]))) ++i;
    if (n.substr(start, i - start) == "air") return true;
  }
  return false;
}

// ---- units ---------------------------------------------------------------------------------

// A unit string split into a leading scale factor and the unit: "10**-17 erg/s/cm2/Angstrom",
// "10^(-17) ...", "10-17 ..." (FITS 4.0 sec. 4.3), or a plain number, "1E-17 erg/cm^2/s/Ang" (common
// practice). A unit that begins with a digit and no separator, such as "1/cm", has no factor.
struct ScaledUnit {
  double factor = 1.0;
  std::string factor_text;  // empty: no factor
  std::string unit;
};

ScaledUnit split_scale_factor(std::string_view text) {
  const std::string s = trim(text);
  ScaledUnit result{1.0, "", s};
  std::size_t pos = 0;
  double factor = 0.0;
  const auto parse_power_of_ten = [&](std::size_t start) -> bool {
    std::size_t p = start;
    const bool parenthesised = p < s.size() && s[p] == '(';
    if (parenthesised) ++p;
    const std::size_t digits_start = p;
    if (p < s.size() && (s[p] == '+' || s[p] == '-')) ++p;
    const std::size_t first_digit = p;
    while (p < s.size() && std::isdigit(static_cast<unsigned char>(s[p]))) ++p;
    if (p == first_digit) return false;
    int exponent = 0;
    const char* begin = s.data() + digits_start + (s[digits_start] == '+' ? 1 : 0);
    if (std::from_chars(begin, s.data() + p, exponent).ec != std::errc()) return false;
    if (parenthesised) {
      if (p >= s.size() || s[p] != ')') return false;
      ++p;
    }
    factor = std::pow(10.0, exponent);
    pos = p;
    return true;
  };
  bool found = false;
  if (s.rfind("10**", 0) == 0) {
    found = parse_power_of_ten(4);
  } else if (s.rfind("10^", 0) == 0) {
    found = parse_power_of_ten(3);
  } else if (s.size() > 3 && s.rfind("10", 0) == 0 && (s[2] == '+' || s[2] == '-')) {
    found = parse_power_of_ten(2);
  } else if (!s.empty() && (std::isdigit(static_cast<unsigned char>(s[0])) || s[0] == '.')) {
    const auto [end, error] = std::from_chars(s.data(), s.data() + s.size(), factor);
    if (error == std::errc()) {
      pos = static_cast<std::size_t>(end - s.data());
      found = true;
    }
  }
  if (!found || !std::isfinite(factor) || !(factor > 0.0) || pos >= s.size()) return result;
  // A separator must follow: space, '*', or the unit's first letter or parenthesis directly.
  std::size_t rest = pos;
  const unsigned char next = static_cast<unsigned char>(s[pos]);
  if (std::isspace(next) || next == '*') {
    ++rest;
  } else if (!(std::isalpha(next) || next == '(')) {
    return result;
  }
  std::string unit = trim(std::string_view(s).substr(rest));
  if (unit.size() >= 2 && unit.front() == '(' && unit.back() == ')' &&
      unit.find_first_of("()", 1) == unit.size() - 1) {
    unit = trim(std::string_view(unit).substr(1, unit.size() - 2));
  }
  if (unit.empty()) return result;
  return {factor, trim(std::string_view(s).substr(0, pos)), unit};
}

// Spellings in common use that planckton's parser does not take, each symbol by its own.
std::optional<std::string> respelled(const std::string& unit) {
  static const std::vector<std::pair<std::string, std::string>> kSpellings = {
      {"Ang", "Angstrom"}, {"Angs", "Angstrom"}, {"A", "Angstrom"}, {"Angstroms", "Angstrom"},
      {"angstroms", "Angstrom"}, {"ANGSTROM", "Angstrom"}, {"ANGSTROMS", "Angstrom"}, {"microns", "micron"},
      {"ergs", "erg"}, {"sec", "s"}, {"HZ", "Hz"}, {"Jansky", "Jy"}, {"jansky", "Jy"}};
  std::string out;
  bool changed = false;
  std::size_t i = 0;
  while (i < unit.size()) {
    if (!std::isalpha(static_cast<unsigned char>(unit[i]))) {
      out += unit[i++];
      continue;
    }
    const std::size_t start = i;
    while (i < unit.size() && std::isalpha(static_cast<unsigned char>(unit[i]))) ++i;
    const std::string word = unit.substr(start, i - start);
    const auto it = std::find_if(kSpellings.begin(), kSpellings.end(), [&](const auto& s) { return s.first == word; });
    if (it != kSpellings.end()) {
      out += it->second;
      changed = true;
    } else {
      out += word;
    }
  }
  // A parenthesised denominator of products: "erg/(s cm2 Angstrom)" -> "erg/s/cm2/Angstrom".
  const std::size_t open = out.find("/(");
  if (open != std::string::npos && out.back() == ')' && out.find_first_of("()/", open + 2) == out.size() - 1) {
    std::string inner = out.substr(open + 2, out.size() - open - 3);
    for (std::size_t k = 0; k < inner.size(); ++k) {
      const bool power = inner[k] == '*' && ((k + 1 < inner.size() && inner[k + 1] == '*') || (k > 0 && inner[k - 1] == '*'));
      if ((inner[k] == '*' && !power) || inner[k] == '.') inner[k] = ' ';
    }
    std::string flattened = out.substr(0, open);
    std::size_t j = 0;
    while (j < inner.size()) {
      while (j < inner.size() && std::isspace(static_cast<unsigned char>(inner[j]))) ++j;
      const std::size_t start = j;
      while (j < inner.size() && !std::isspace(static_cast<unsigned char>(inner[j]))) ++j;
      if (j > start) flattened += "/" + inner.substr(start, j - start);
    }
    out = flattened;
    changed = true;
  }
  if (!changed) return std::nullopt;
  return out;
}

// A unit as read: the scale factor, the spelling given to planckton's parser, the parsed unit.
template <class Parsed>
struct ReadUnit {
  double factor = 1.0;
  std::string text;
  Parsed parsed;
  std::string how;  // what was done to the text, for the notes ("" if nothing)
};

// Throws InputError (the parser's, for the spelling as written) when no reading works.
template <class Parsed, class Parse>
ReadUnit<Parsed> read_unit(std::string_view written, Parse parse) {
  const ScaledUnit scaled = split_scale_factor(written);
  ReadUnit<Parsed> result;
  result.factor = scaled.factor;
  std::vector<std::string> how;
  if (!scaled.factor_text.empty()) how.push_back("values multiplied by " + number(scaled.factor));
  try {
    result.parsed = parse(scaled.unit);
    result.text = scaled.unit;
    if (!scaled.factor_text.empty()) how.push_back("unit '" + scaled.unit + "'");
  } catch (const InputError&) {
    const auto respelling = respelled(scaled.unit);
    if (!respelling) throw;
    try {
      result.parsed = parse(*respelling);
    } catch (const InputError&) {
      parse(scaled.unit);  // throws the parser's message about the unit as written
      throw;
    }
    result.text = *respelling;
    how.push_back("read as '" + *respelling + "' (a spelling in common use)");
  }
  result.how = joined(how, ", ");
  return result;
}

ReadUnit<SpectralAxisUnit> read_axis_unit(std::string_view text) {
  return read_unit<SpectralAxisUnit>(text, [](std::string_view t) { return parse_spectral_axis_unit(t); });
}

ReadUnit<FluxDensityUnit> read_flux_unit(std::string_view text) {
  return read_unit<FluxDensityUnit>(text, [](std::string_view t) { return parse_flux_density_unit(t); });
}

const char* kind_name(SpectralAxisKind kind) {
  switch (kind) {
    case SpectralAxisKind::kWavelength: return "a wavelength";
    case SpectralAxisKind::kFrequency: return "a frequency";
    case SpectralAxisKind::kWavenumber: return "a wavenumber";
    case SpectralAxisKind::kPhotonEnergy: return "a photon energy";
  }
  return "";
}

// ---- the file ------------------------------------------------------------------------------

struct Hdu {
  int number = 0;  // 0-based, as the hdu option counts
  int type = IMAGE_HDU;
  std::string extname;
  std::string hduclas3;
  std::vector<long long> axes;  // images: NAXISn (of the uncompressed image)
  bool compressed = false;
  long long rows = 0;           // tables
  std::vector<std::string> columns;

  long long points() const {
    if (axes.empty()) return 0;
    long long n = 1;
    for (long long a : axes) {
      const auto product = times(n, a);
      n = product ? *product : std::numeric_limits<long long>::max();
    }
    return n;
  }
  bool is_image() const { return type == IMAGE_HDU; }
  bool is_table() const { return type == BINARY_TBL || type == ASCII_TBL; }
  bool has_data() const { return is_image() ? points() > 0 : (is_table() && rows > 0 && !columns.empty()); }

  std::string label() const {
    std::string text = "HDU " + std::to_string(number);
    if (!extname.empty()) text += " " + in_quotes(extname);
    else if (number == 0) text += " (primary)";
    return text;
  }

  std::string shape() const {
    std::string text;
    for (long long a : axes) text += (text.empty() ? "" : " x ") + std::to_string(a);
    return text;
  }

  std::string summary() const {
    std::string text = label() + ": ";
    if (is_image()) {
      if (points() == 0) return text + "image, no data";
      return text + (compressed ? "tile-compressed image " : "image ") + shape();
    }
    if (!is_table()) return text + "extension of a type planckton does not read";
    text += type == BINARY_TBL ? "binary table, " : "ASCII table, ";
    text += count(rows, "row") + "; columns ";
    std::vector<std::string> shown(columns.begin(), columns.begin() + std::min(columns.size(), kListedColumns));
    text += shown.empty() ? "none" : joined(shown);
    if (columns.size() > kListedColumns) text += ", ... (" + std::to_string(columns.size()) + " in all)";
    return text;
  }
};

// What scan_header() read from a header's bytes before cfitsio saw it.
struct HeaderFacts {
  std::size_t start = 0;       // of the header
  std::size_t data_start = 0;  // the END record's block end
  long long data_bytes = 0;    // as declared
  std::string xtension;        // "" for the primary header
  long long bitpix = 0;
  std::vector<long long> axes;
  long long pcount = 0, gcount = 1, tfields = -1;
  bool groups = false;
  bool zimage = false;                       // a tile-compressed image (FITS 4.0 sec. 10) ...
  std::optional<std::size_t> zimage_record;  // ... whose ZIMAGE = T record is here
  std::vector<long long> compressed_axes;    // ZNAXISn
};

// Keywords that say how the bytes are laid out (FITS 4.0 sec. 4.4.1, 7.2.1, 7.3.1, 10), and the
// scaling ones cfitsio applies: these must be proper value records.
bool is_structural_keyword(std::string_view keyword) {
  for (const char* exact : {"SIMPLE", "XTENSION", "BITPIX", "NAXIS", "PCOUNT", "GCOUNT", "TFIELDS", "THEAP", "GROUPS",
                            "EXTEND", "BSCALE", "BZERO", "BLANK", "ZIMAGE"}) {
    if (keyword == exact) return true;
  }
  for (const char* indexed : {"NAXIS", "TFORM", "TBCOL", "TDIM", "TSCAL", "TZERO", "TNULL", "ZNAXIS", "ZTILE"}) {
    const std::string_view prefix(indexed);
    if (keyword.size() > prefix.size() && keyword.substr(0, prefix.size()) == prefix &&
        all_digits(keyword.substr(prefix.size()))) {
      return true;
    }
  }
  return false;
}

// The value of a keyword record from column 11 on (FITS 4.0 sec. 4.2): a quoted string without its
// quotes (and trailing spaces), or the text before the comment's '/'.
std::string record_value(std::string_view field) {
  const std::size_t first = field.find_first_not_of(' ');
  if (first == std::string_view::npos) return "";
  field.remove_prefix(first);
  if (field.front() == '\'') {
    std::string value;
    for (std::size_t i = 1; i < field.size(); ++i) {
      if (field[i] == '\'') {
        if (i + 1 < field.size() && field[i + 1] == '\'') {
          value += '\'';
          ++i;
          continue;
        }
        break;
      }
      value += field[i];
    }
    while (!value.empty() && value.back() == ' ') value.pop_back();
    return value;
  }
  return trim(field.substr(0, field.find('/')));
}

struct Column {
  int number = 0;  // 1-based, as cfitsio and TTYPEn count
  std::string name;
  std::string unit;   // TUNITn, "" if none
  std::string ctype;  // TCTYPn, "" if none
  int typecode = 0;
  long long repeat = 1;
  long long width = 0;
};

bool is_numeric_type(int typecode) {
  switch (typecode) {
    case TBYTE: case TSBYTE: case TSHORT: case TUSHORT: case TINT: case TUINT: case TLONG: case TULONG:
    case TLONGLONG: case TULONGLONG: case TFLOAT: case TDOUBLE:
      return true;
    default:
      return false;
  }
}

// What a table spectrum's or image spectrum's values and errors become.
struct Points {
  std::vector<double> x, y, error;  // error empty when none
};

class Reader {
 public:
  Reader(std::string_view bytes, const FitsOptions& options) : bytes_(bytes), options_(options) {}
  Reader(const Reader&) = delete;
  Reader& operator=(const Reader&) = delete;
  ~Reader() {
    if (file_ != nullptr) {
      int status = 0;
      fits_close_file(file_, &status);
    }
    fits_clear_errmsg();
  }

  FitsContent read() {
    check_bytes();
    walk();
    const Hdu& hdu = chosen_hdu();
    if (hdu.is_image()) {
      read_image_spectrum(hdu);
    } else if (hdu.is_table() && column_index(hdu, "band")) {
      read_photometry(hdu);
    } else if (hdu.is_table()) {
      read_table_spectrum(hdu);
    } else {
      unusable(hdu.label() + " is an extension of a type planckton does not read (IMAGE, BINTABLE and TABLE are read); " +
               file_summary());
    }
    return std::move(content_);
  }

 private:
  // ---- bytes, opening, the HDU list ----

  void check_bytes() {
    if (bytes_.empty()) unreadable("the FITS body is empty");
    if (const auto kind = compression_of(bytes_)) {
      unreadable("the body is " + *kind + "-compressed; send the FITS file itself, uncompressed (planckton does not "
                 "expand compressed bodies)");
    }
    if (!looks_like_fits(bytes_)) {
      unreadable("the body is not a FITS file: a FITS file begins with the keyword \"SIMPLE  =\" (FITS 4.0 sec. "
                 "4.4.1.1); it begins with " + in_quotes(bytes_.substr(0, 20), 20));
    }
  }

  void open() {
    // cfitsio reads whole 2880-byte blocks; the copy it reads is padded to one, so that it never
    // reads past the buffer, and the declared sizes are checked against the bytes given (walk()).
    const long long padded = round_up_to_block(static_cast<long long>(bytes_.size()));
    buffer_.assign(static_cast<std::size_t>(padded), '\0');
    std::memcpy(buffer_.data(), bytes_.data(), bytes_.size());
    // A tile-compressed image is shown to cfitsio as the plain binary table it is stored as (ZIMAGE = F
    // in the copy): cfitsio's reading of compression keywords is not safe on damaged headers (a
    // division by zero in testing), and planckton does not expand such images anyway.
    for (const HeaderFacts& facts : facts_) {
      if (facts.zimage_record) buffer_[*facts.zimage_record + 29] = 'F';
    }
    // cfitsio keeps the addresses of the pointer and the size, so both are members that outlive file_.
    memory_ = buffer_.data();
    memory_size_ = buffer_.size();
    int status = 0;
    if (fits_open_memfile(&file_, "planckton.fits", READONLY, &memory_, &memory_size_, 0, nullptr, &status)) {
      if (file_ != nullptr) {
        int ignored = 0;
        fits_close_file(file_, &ignored);
        file_ = nullptr;
      }
      unreadable("the primary header cannot be read (" + cfitsio_says(status) +
                 "); its mandatory keywords are SIMPLE, BITPIX, NAXIS and NAXISn, in this order (FITS 4.0 sec. 4.4.1.1)");
    }
    if (bytes_.size() % kBlockBytes != 0) {
      content_.notes.push_back("the file is " + std::to_string(bytes_.size()) +
                               " bytes, not a multiple of 2880 (FITS 4.0 sec. 3.1); its last block was padded");
    }
  }

  // First every header is checked by scan_header(), from the bytes, so that cfitsio only ever sees
  // headers whose mandatory keywords are sane and whose declared data lie within the bytes; then
  // cfitsio reads them.
  void walk() {
    std::size_t start = 0;
    for (int number = 0;; ++number) {
      if (number > 0) {
        const HeaderFacts& previous = facts_.back();
        const long long next = round_up_to_block(static_cast<long long>(previous.data_start) + previous.data_bytes);
        if (next >= static_cast<long long>(bytes_.size())) break;
        start = static_cast<std::size_t>(next);
        const std::string_view rest = bytes_.substr(start);
        if (!starts_with(rest, "XTENSION=")) {
          content_.notes.push_back(std::to_string(rest.size()) + " bytes after the last HDU (HDU " + std::to_string(number - 1) +
                                   ") are not an extension and were ignored (FITS 4.0 sec. 3.5)");
          break;
        }
      }
      facts_.push_back(scan_header(start, number));
    }
    open();
    for (int number = 0; number < static_cast<int>(facts_.size()); ++number) {
      int type = IMAGE_HDU;
      int status = 0;
      if (number == 0) {
        fits_get_hdu_type(file_, &type, &status);
      } else if (fits_movabs_hdu(file_, number + 1, &type, &status)) {
        unreadable("the header of HDU " + std::to_string(number) + " (from byte " +
                   std::to_string(facts_[static_cast<std::size_t>(number)].start) + ") cannot be read (" +
                   cfitsio_says(status) + "); " + file_summary());
      }
      hdus_.push_back(describe_current(number, type, facts_[static_cast<std::size_t>(number)]));
    }
  }

  // The mandatory keywords of the header at `start` (FITS 4.0 sec. 4.4.1.1 for the primary header,
  // 4.4.1.2 and 7 for extensions), read from the bytes: BITPIX one of 8, 16, 32, 64, -32, -64; NAXIS
  // 0 to 999 with every NAXISn >= 0; PCOUNT >= 0, GCOUNT >= 0; TFIELDS 0 to 999 for tables. The data
  // are |BITPIX| GCOUNT (PCOUNT + NAXIS1 x ... x NAXISn) / 8 bytes (eq. 1 and 2; PCOUNT = 0, GCOUNT = 1
  // in the primary HDU unless it holds random groups, sec. 6, where NAXIS1 = 0 is left out), and must
  // lie within the bytes given.
  HeaderFacts scan_header(std::size_t start, int number) {
    const std::string where = number == 0 ? std::string("the primary header") : "the header of HDU " + std::to_string(number) +
                                                                                  " (from byte " + std::to_string(start) + ")";
    const auto end = header_end(bytes_, start);
    if (!end) {
      unreadable(where + " has no END record in the " + std::to_string(bytes_.size() - start) +
                 " bytes given (FITS 4.0 sec. 4.4.1): the file is cut inside it");
    }
    HeaderFacts facts;
    facts.start = start;
    facts.data_start = static_cast<std::size_t>(round_up_to_block(static_cast<long long>(*end)));
    std::vector<std::pair<std::string, std::string>> values;  // keyword, value text: the first of each
    for (std::size_t card = start; card + kCardBytes <= *end; card += kCardBytes) {
      const std::string_view record = bytes_.substr(card, kCardBytes);
      // FITS 4.0 sec. 4.1.1: header records hold the printable ASCII characters 0x20 to 0x7E only.
      const auto bad = std::find_if(record.begin(), record.end(), [](char c) { return c < 0x20 || c > 0x7E; });
      if (bad != record.end()) {
        char code[8];
        std::snprintf(code, sizeof code, "0x%02X", static_cast<unsigned>(static_cast<unsigned char>(*bad)));
        unreadable(where + " holds the byte " + code + " at byte " + std::to_string(card + static_cast<std::size_t>(bad - record.begin())) +
                   "; header records are printable ASCII, 0x20 to 0x7E (FITS 4.0 sec. 4.1.1)");
      }
      const std::string keyword = trim(record.substr(0, 8));
      if (record.substr(8, 2) != "= ") {
        // sec. 4.1.2.2: "= " in columns 9 and 10 marks a value; a structural keyword without it is
        // not read the same way by every reader (cfitsio allocated absurd sizes for such headers).
        if (is_structural_keyword(keyword)) {
          unreadable(where + ": the " + keyword + " record at byte " + std::to_string(card) +
                     " lacks the value indicator \"= \" in columns 9 and 10 (FITS 4.0 sec. 4.1.2.2)");
        }
        continue;
      }
      if (std::none_of(values.begin(), values.end(), [&](const auto& v) { return v.first == keyword; })) {
        values.emplace_back(keyword, record_value(record.substr(10)));
        if (keyword == "ZIMAGE" && upper(values.back().second) == "T" && record.substr(10, 19) == std::string(19, ' ') &&
            (record[29] == 'T' || record[29] == 't')) {
          facts.zimage_record = card;  // the fixed format (sec. 4.2.3): T in column 30
        }
      }
    }
    const auto value_of = [&](const std::string& keyword) -> std::optional<std::string> {
      for (const auto& v : values) {
        if (v.first == keyword) return v.second;
      }
      return std::nullopt;
    };
    const auto integer = [&](const std::string& keyword, std::optional<long long> fallback, long long lo,
                             long long hi) -> long long {
      const auto text = value_of(keyword);
      if (!text) {
        if (fallback) return *fallback;
        unreadable(where + " lacks the mandatory keyword " + keyword + " (FITS 4.0 sec. 4.4.1)");
      }
      long long value = 0;
      const char* begin = text->data() + (!text->empty() && text->front() == '+' ? 1 : 0);  // sec. 4.2.3: a sign may lead
      const auto [ptr, error] = std::from_chars(begin, text->data() + text->size(), value);
      if (error != std::errc() || ptr != text->data() + text->size()) {
        unreadable(where + ": " + keyword + " = " + in_quotes(*text) + " is not an integer (FITS 4.0 sec. 4.4.1)");
      }
      if (value < lo || value > hi) {
        unreadable(where + ": " + keyword + " = " + *text + " is outside " + std::to_string(lo) + " to " +
                   std::to_string(hi) + " (FITS 4.0 sec. 4.4.1)");
      }
      return value;
    };
    const long long kHuge = std::numeric_limits<long long>::max();
    facts.xtension = number == 0 ? "" : upper(value_of("XTENSION").value_or(""));
    facts.bitpix = integer("BITPIX", std::nullopt, -64, 64);
    if (facts.bitpix != 8 && facts.bitpix != 16 && facts.bitpix != 32 && facts.bitpix != 64 && facts.bitpix != -32 &&
        facts.bitpix != -64) {
      unreadable(where + ": BITPIX = " + std::to_string(facts.bitpix) + " is not 8, 16, 32, 64, -32 or -64 (FITS 4.0 sec. 4.4.1.1)");
    }
    const long long naxis = integer("NAXIS", std::nullopt, 0, 999);
    for (long long i = 1; i <= naxis; ++i) facts.axes.push_back(integer("NAXIS" + std::to_string(i), std::nullopt, 0, kHuge));
    facts.groups = number == 0 && upper(value_of("GROUPS").value_or("")) == "T" && !facts.axes.empty() && facts.axes[0] == 0;
    const bool counts = number > 0 || facts.groups;
    facts.pcount = counts ? integer("PCOUNT", 0, 0, kHuge) : 0;
    facts.gcount = counts ? integer("GCOUNT", 1, 0, kHuge) : 1;
    if (facts.xtension == "BINTABLE" || facts.xtension == "TABLE") facts.tfields = integer("TFIELDS", std::nullopt, 0, 999);
    facts.zimage = number > 0 && facts.xtension == "BINTABLE" && upper(value_of("ZIMAGE").value_or("")) == "T";
    if (facts.zimage && !facts.zimage_record) {
      unreadable(where + ": ZIMAGE = T is not in the fixed format (T in column 30, FITS 4.0 sec. 4.2.3)");
    }
    if (facts.zimage) {
      for (int i = 1; i <= 999; ++i) {
        const auto n = value_of("ZNAXIS" + std::to_string(i));
        if (!n) break;
        long long axis = 0;
        if (std::from_chars(n->data(), n->data() + n->size(), axis).ec != std::errc() || axis < 0) break;
        facts.compressed_axes.push_back(axis);
      }
    }

    std::optional<long long> elements = naxis > 0 ? std::optional<long long>(1) : std::optional<long long>(0);
    std::string axes_text;
    for (std::size_t i = 0; i < facts.axes.size(); ++i) {
      axes_text += (axes_text.empty() ? "" : " x ") + std::to_string(facts.axes[i]);
      if (facts.groups && i == 0) continue;
      if (elements) elements = times(*elements, facts.axes[i]);
    }
    std::optional<long long> bytes;
    if (elements) {
      long long sum = 0;
      if (!__builtin_add_overflow(*elements, facts.pcount, &sum) && (*elements > 0 || facts.pcount > 0)) {
        const auto groups = times(facts.gcount, sum);
        const auto bits = groups ? times(std::llabs(facts.bitpix), *groups) : std::nullopt;
        if (bits) bytes = *bits / 8;
      } else if (!(*elements > 0 || facts.pcount > 0)) {
        bytes = 0;
      }
    }
    const long long available = static_cast<long long>(bytes_.size()) - static_cast<long long>(facts.data_start);
    if (!bytes || *bytes > available) {
      const std::string label = number == 0 ? "HDU 0 (primary)" : "HDU " + std::to_string(number) +
                                (value_of("EXTNAME") ? " " + in_quotes(*value_of("EXTNAME")) : std::string());
      unreadable(label + " declares " + (bytes ? std::to_string(*bytes) : std::string("more than 2^63")) +
                 " bytes of data (BITPIX = " + std::to_string(facts.bitpix) + ", NAXISn = " +
                 (axes_text.empty() ? "none" : axes_text) +
                 (facts.pcount != 0 ? ", PCOUNT = " + std::to_string(facts.pcount) : std::string()) +
                 "; FITS 4.0 sec. 4.4.1.1) from byte " + std::to_string(facts.data_start) + ", but the file has " +
                 std::to_string(std::max(0LL, available)) + " bytes there: it is truncated; send the whole file");
    }
    facts.data_bytes = *bytes;
    if (facts.xtension == "BINTABLE" || facts.xtension == "TABLE") check_table_forms(facts, where, value_of);
    return facts;
  }

  // The columns of a table must fit its rows: for a binary table the widths of the TFORMn add up to
  // NAXIS1 (FITS 4.0 sec. 7.3.1, Table 18: L, B, A 1 byte, I 2, J 4, K 8, E 4, D 8, C 8, M 16, X
  // ceil(r / 8), P 8, Q 16, times the repeat count r); for an ASCII table every field, from TBCOLn
  // over the width of TFORMn, lies within NAXIS1 (sec. 7.2.1). Checked before cfitsio sees them.
  template <class ValueOf>
  void check_table_forms(const HeaderFacts& facts, const std::string& where, const ValueOf& value_of) const {
    if (facts.axes.size() != 2) unreadable(where + ": a table has NAXIS = 2 (FITS 4.0 sec. 7.2.1, 7.3.1)");
    const long long row_bytes = facts.axes[0];
    if (row_bytes > (1LL << 40)) {  // rows of a terabyte, possible only with NAXIS2 = 0; keeps the sums below in range
      unreadable(where + ": NAXIS1 = " + std::to_string(row_bytes) + " bytes per row is more than planckton reads");
    }
    long long sum = 0;
    for (long long n = 1; n <= facts.tfields; ++n) {
      const std::string keyword = "TFORM" + std::to_string(n);
      const auto form = value_of(keyword);
      if (!form) unreadable(where + " lacks " + keyword + " (FITS 4.0 sec. 7.2.1, 7.3.1)");
      const std::string f = upper(trim(*form));
      std::size_t i = 0;
      long long repeat = 1;
      if (facts.xtension == "BINTABLE") {
        while (i < f.size() && std::isdigit(static_cast<unsigned char>(f[i]))) ++i;
        if (i > 0 && (std::from_chars(f.data(), f.data() + i, repeat).ec != std::errc() || repeat > row_bytes * 8 + 8)) {
          unreadable(where + ": " + keyword + " = " + in_quotes(*form) + " has a repeat count beyond the row's " +
                     std::to_string(row_bytes) + " bytes (NAXIS1; FITS 4.0 sec. 7.3.1)");
        }
      } else {
        repeat = 1;
      }
      if (i >= f.size()) unreadable(where + ": " + keyword + " = " + in_quotes(*form) + " has no data type (FITS 4.0 sec. 7.3.1)");
      const char type = f[i];
      long long width = 0;
      if (facts.xtension == "BINTABLE") {
        switch (type) {
          case 'L': case 'B': case 'A': width = repeat; break;
          case 'I': width = 2 * repeat; break;
          case 'J': case 'E': case 'C': case 'P': width = (type == 'C' || type == 'P' ? 8 : 4) * repeat; break;
          case 'K': case 'D': width = 8 * repeat; break;
          case 'M': case 'Q': width = 16 * repeat; break;
          case 'X': width = (repeat + 7) / 8; break;
          default:
            unreadable(where + ": " + keyword + " = " + in_quotes(*form) + " is not a binary-table data type "
                       "(L, X, B, I, J, K, A, E, D, C, M, P, Q; FITS 4.0 sec. 7.3.1)");
        }
        sum += width;
        if (sum > row_bytes) break;
      } else {
        // ASCII: Aw, Iw, Fw.d, Ew.d, Dw.d, from column TBCOLn.
        std::size_t j = i + 1;
        while (j < f.size() && std::isdigit(static_cast<unsigned char>(f[j]))) ++j;
        const std::string tbcol_keyword = "TBCOL" + std::to_string(n);
        const auto tbcol = value_of(tbcol_keyword);
        long long column = 0;
        if (std::string("AIFED").find(type) == std::string::npos || j == i + 1 ||
            std::from_chars(f.data() + i + 1, f.data() + j, width).ec != std::errc() || width < 1 || !tbcol ||
            std::from_chars(tbcol->data(), tbcol->data() + tbcol->size(), column).ec != std::errc() || column < 1 ||
            column > row_bytes || width > row_bytes - column + 1) {
          unreadable(where + ": " + keyword + " = " + in_quotes(*form) + " at " + tbcol_keyword + " = " +
                     in_quotes(tbcol.value_or("")) + " is not a field within the row's " + std::to_string(row_bytes) +
                     " characters (FITS 4.0 sec. 7.2.1)");
        }
      }
    }
    if (facts.xtension == "BINTABLE" && sum != row_bytes) {
      unreadable(where + ": the widths of its columns (TFORMn) add up to " + (sum > row_bytes ? "more than " : "") +
                 std::to_string(sum) + " bytes, but NAXIS1 = " + std::to_string(row_bytes) + " (FITS 4.0 sec. 7.3.1)");
    }
  }

  Hdu describe_current(int number, int type, const HeaderFacts& facts) {
    Hdu hdu;
    hdu.number = number;
    hdu.type = type;
    hdu.extname = key_text("EXTNAME").value_or("");
    hdu.hduclas3 = key_text("HDUCLAS3").value_or("");
    int status = 0;
    LONGLONG start = 0, data = 0, end = 0;
    fits_get_hduaddrll(file_, &start, &data, &end, &status);
    if (status == 0 && data != static_cast<LONGLONG>(facts.data_start)) {
      unreadable(hdu.label() + "'s header cannot be read consistently (its data start at byte " +
                 std::to_string(facts.data_start) + " by its END record, at " + std::to_string(data) + " for cfitsio)");
    }
    if (facts.zimage) {
      // Shown to cfitsio as a binary table (open()); listed here as the image it holds, never read.
      hdu.type = IMAGE_HDU;
      hdu.compressed = true;
      hdu.axes = facts.compressed_axes;
    } else if (type == IMAGE_HDU) {
      int naxis = 0;
      fits_get_img_dim(file_, &naxis, &status);
      if (status == 0 && naxis > 0) {
        std::vector<LONGLONG> axes(static_cast<std::size_t>(naxis));
        int bitpix = 0;
        fits_get_img_paramll(file_, naxis, &bitpix, &naxis, axes.data(), &status);
        hdu.axes.assign(axes.begin(), axes.end());
      }
    } else if (type == BINARY_TBL || type == ASCII_TBL) {
      LONGLONG rows = 0;
      int columns = 0;
      fits_get_num_rowsll(file_, &rows, &status);
      fits_get_num_cols(file_, &columns, &status);
      hdu.rows = rows;
      for (int c = 1; c <= columns; ++c) hdu.columns.push_back(key_text(("TTYPE" + std::to_string(c)).c_str()).value_or(""));
    }
    if (status != 0) {
      unreadable(hdu.label() + "'s header cannot be read (" + cfitsio_says(status) + ")");
    }
    return hdu;
  }

  std::string file_summary() const {
    std::vector<std::string> listed;
    for (std::size_t i = 0; i < hdus_.size() && i < kListedHdus; ++i) listed.push_back(hdus_[i].summary());
    std::string text = "the file holds " + count(static_cast<long long>(hdus_.size()), "HDU") + ": " + joined(listed, "; ");
    if (hdus_.size() > kListedHdus) text += "; ...";
    return text;
  }

  std::vector<std::string> hdu_names() const {
    std::vector<std::string> names;
    for (const Hdu& hdu : hdus_) names.push_back(hdu.extname.empty() ? std::to_string(hdu.number) : hdu.extname);
    return names;
  }

  void move_to(const Hdu& hdu) {
    int type = 0, status = 0;
    if (fits_movabs_hdu(file_, hdu.number + 1, &type, &status)) {
      unreadable(hdu.label() + " cannot be read (" + cfitsio_says(status) + ")");
    }
  }

  // An HDU by EXTNAME (ignoring case) or 0-based number; `parameter` names the option.
  const Hdu& find_hdu(const std::string& wanted, const std::string& parameter) const {
    const std::string name = trim(wanted);
    if (all_digits(name)) {
      const std::size_t number = std::stoul(name.size() > 6 ? std::string("999999") : name);
      if (number >= hdus_.size()) {
        bad_option(parameter, "HDU " + name + " does not exist (HDUs are counted from 0); " + file_summary(), hdu_names());
      }
      return hdus_[number];
    }
    for (const Hdu& hdu : hdus_) {
      if (!hdu.extname.empty() && iequals(trim(hdu.extname), name)) return hdu;
    }
    bad_option(parameter, "no HDU has EXTNAME " + in_quotes(name) + "; " + file_summary(), hdu_names());
  }

  const Hdu& chosen_hdu() {
    if (!trim(options_.hdu).empty()) {
      const Hdu& hdu = find_hdu(options_.hdu, "hdu");
      if (!hdu.has_data()) bad_option("hdu", hdu.label() + " has no data; " + file_summary(), hdu_names());
      return hdu;
    }
    for (const Hdu& hdu : hdus_) {
      if (!hdu.has_data()) continue;
      if (hdu.is_image() && (error_kind_of_extname(hdu.extname) || error_kind_of_hduclas3(hdu.hduclas3))) continue;
      return hdu;
    }
    unusable("no HDU holds data planckton can read (a 1-D image, a binary or ASCII table); " + file_summary());
  }

  // ---- keywords of the current HDU ----

  std::optional<std::string> key_text(const char* name) {
    char value[FLEN_VALUE + 1] = {};
    int status = 0;
    if (fits_read_key(file_, TSTRING, name, value, nullptr, &status)) return std::nullopt;
    return trim(value);
  }

  std::optional<double> key_number(const Hdu& hdu, const char* name) {
    const auto text = key_text(name);
    if (!text || text->empty()) return std::nullopt;
    double value = 0.0;
    int status = 0;
    if (fits_read_key(file_, TDOUBLE, name, &value, nullptr, &status) || !std::isfinite(value)) {
      unusable(hdu.label() + ": keyword " + name + " = " + in_quotes(*text) + " is not a number");
    }
    return value;
  }

  // ---- units, with the options first ----

  // The spectral axis' unit: the x_unit option, else the file's (keyword names it), else the default.
  ReadUnit<SpectralAxisUnit> axis_unit(const Hdu& hdu, const std::optional<std::string>& file_unit, const std::string& keyword,
                                       const std::string& default_unit, const std::string& default_why) {
    const std::string given = trim(options_.x_unit);
    if (!given.empty()) {
      ReadUnit<SpectralAxisUnit> unit;
      try {
        unit = read_axis_unit(given);
      } catch (const InputError& e) {
        bad_option("x_unit", e.what(), documented_spectral_axis_units());
      }
      if (file_unit && !file_unit->empty()) {
        content_.notes.push_back("x_unit " + in_quotes(given) + " given: it replaces " + keyword + " = " + in_quotes(*file_unit) +
                                 " of " + hdu.label());
      }
      if (!unit.how.empty()) content_.notes.push_back("x_unit " + in_quotes(given) + ": " + unit.how);
      return unit;
    }
    if (file_unit && !file_unit->empty()) {
      try {
        ReadUnit<SpectralAxisUnit> unit = read_axis_unit(*file_unit);
        if (!unit.how.empty()) content_.notes.push_back(keyword + " = " + in_quotes(*file_unit) + ": " + unit.how);
        return unit;
      } catch (const InputError& e) {
        unusable(hdu.label() + ": " + keyword + " = " + in_quotes(*file_unit) + " is not a spectral unit planckton reads (" +
                     e.what() + "); give x_unit to say what the axis is",
                 documented_spectral_axis_units());
      }
    }
    if (!default_unit.empty()) {
      content_.notes.push_back(keyword + " absent: " + default_why);
      return read_axis_unit(default_unit);
    }
    unusable(hdu.label() + " gives no unit for its spectral axis (no " + keyword + "); add " + keyword +
                 " to the header or give x_unit",
             documented_spectral_axis_units());
  }

  ReadUnit<FluxDensityUnit> flux_unit(const Hdu& hdu, const std::optional<std::string>& file_unit, const std::string& keyword) {
    const std::string given = trim(options_.y_unit);
    if (!given.empty()) {
      ReadUnit<FluxDensityUnit> unit;
      try {
        unit = read_flux_unit(given);
      } catch (const InputError& e) {
        bad_option("y_unit", e.what(), documented_flux_density_units());
      }
      if (file_unit && !file_unit->empty()) {
        content_.notes.push_back("y_unit " + in_quotes(given) + " given: it replaces " + keyword + " = " + in_quotes(*file_unit) +
                                 " of " + hdu.label());
      }
      if (!unit.how.empty()) content_.notes.push_back("y_unit " + in_quotes(given) + ": " + unit.how);
      return unit;
    }
    if (file_unit && !file_unit->empty()) {
      try {
        ReadUnit<FluxDensityUnit> unit = read_flux_unit(*file_unit);
        if (!unit.how.empty()) content_.notes.push_back(keyword + " = " + in_quotes(*file_unit) + ": " + unit.how);
        return unit;
      } catch (const InputError& e) {
        unusable(hdu.label() + ": " + keyword + " = " + in_quotes(*file_unit) +
                     " is not a flux density or intensity unit planckton reads (" + e.what() +
                     "); give y_unit to say what the values are",
                 documented_flux_density_units());
      }
    }
    unusable(hdu.label() + " gives no unit for its values (no " + keyword + "); add " + keyword +
                 " to the header or give y_unit",
             documented_flux_density_units());
  }

  // The factor that turns error values (after sqrt or 1/sqrt) into the values' unit: the values' scale
  // factor, or the error array's own unit when it is a flux density of the same kind (1-sigma only).
  double error_factor(const ReadUnit<FluxDensityUnit>& values, const std::optional<std::string>& own_unit, ErrorKind kind,
                      const std::string& where) {
    if (!own_unit || own_unit->empty() || kind != ErrorKind::kSigma || !trim(options_.y_unit).empty()) return values.factor;
    try {
      const ReadUnit<FluxDensityUnit> unit = read_flux_unit(*own_unit);
      if (unit.parsed.convention == values.parsed.convention && unit.parsed.per_steradian == values.parsed.per_steradian &&
          unit.parsed.relative == values.parsed.relative) {
        return unit.factor * unit.parsed.to_si / values.parsed.to_si;
      }
    } catch (const InputError&) {
    }
    content_.notes.push_back(where + ": its unit " + in_quotes(*own_unit) + " is not used; the errors are taken in the values' unit");
    return values.factor;
  }

  // ---- spectra ----

  void check_points(long long n, const std::string& what) const {
    if (n > kMaxPoints) {
      too_large(what + " has " + std::to_string(n) + " points; planckton reads at most 10000000 (1e7) from a FITS file");
    }
  }

  // Drops blank values and non-positive errors, counting each, and sets the spectrum.
  void keep_points(Points points, const std::string& where, const ReadUnit<SpectralAxisUnit>& x_unit,
                   const ReadUnit<FluxDensityUnit>& y_unit, bool air, bool drop_nonpositive_x) {
    const std::size_t n = points.x.size();
    const bool errors = !points.error.empty();
    if (points.y.size() != n || (errors && points.error.size() != n)) {
      unusable(where + ": the spectral axis, the values and the errors differ in length (" + std::to_string(n) + ", " +
               std::to_string(points.y.size()) + ", " + std::to_string(points.error.size()) + ")");
    }
    long long blank_x = 0, bad_x = 0, blank_y = 0, bad_error = 0;
    Points kept;
    for (std::size_t i = 0; i < n; ++i) {
      if (!std::isfinite(points.x[i])) {
        ++blank_x;
        continue;
      }
      if (!(points.x[i] > 0.0)) {
        if (!drop_nonpositive_x) {
          unusable(where + ": the spectral coordinate of point " + std::to_string(i + 1) + " is " + number(points.x[i]) +
                   "; spectral coordinates must be positive (check CRVAL1, CDELT1 or CD1_1 and CRPIX1)");
        }
        ++bad_x;
        continue;
      }
      if (!std::isfinite(points.y[i])) {
        ++blank_y;
        continue;
      }
      if (errors && !(std::isfinite(points.error[i]) && points.error[i] > 0.0)) {
        ++bad_error;
        continue;
      }
      kept.x.push_back(points.x[i]);
      kept.y.push_back(points.y[i]);
      if (errors) kept.error.push_back(points.error[i]);
    }
    if (blank_x > 0) content_.notes.push_back(count(blank_x, "point") + " with a blank (NaN or null) spectral coordinate dropped");
    if (bad_x > 0) content_.notes.push_back(count(bad_x, "point") + " with a spectral coordinate of zero or less dropped");
    if (blank_y > 0) content_.notes.push_back(count(blank_y, "point") + " with a blank (NaN or BLANK/TNULL) value dropped");
    if (bad_error > 0) {
      content_.notes.push_back(count(bad_error, "point") +
                               " whose error is not positive and finite dropped (an inverse variance of 0 marks a masked pixel)");
    }
    if (kept.x.empty()) {
      unusable(where + ": none of its " + std::to_string(n) + " points is usable (blank values, blank coordinates or errors " +
               "that are not positive)");
    }
    if (air) {
      if (x_unit.parsed.kind != SpectralAxisKind::kWavelength) {
        unusable(where + ": air wavelengths need a wavelength unit, not " + in_quotes(x_unit.text) + " (" +
                 kind_name(x_unit.parsed.kind) + ")");
      }
      for (std::size_t i = 0; i < kept.x.size(); ++i) {
        const double air_m = kept.x[i] * x_unit.parsed.to_si;
        try {
          kept.x[i] = air_to_vacuum_wavelength(air_m) / x_unit.parsed.to_si;
        } catch (const InputError& e) {
          unusable(where + ": " + e.what() + " (point " + std::to_string(i + 1) + ")");
        }
      }
    }
    SpectrumInput spectrum;
    spectrum.x = std::move(kept.x);
    spectrum.x_unit = x_unit.text;
    spectrum.y = std::move(kept.y);
    spectrum.y_unit = y_unit.text;
    spectrum.y_error = std::move(kept.error);
    content_.spectrum = std::move(spectrum);
  }

  static void to_sigma(std::vector<double>& values, ErrorKind kind, double factor) {
    for (double& v : values) {
      if (kind == ErrorKind::kVariance) v = v > 0.0 ? std::sqrt(v) : kNaN;
      if (kind == ErrorKind::kInverseVariance) v = v > 0.0 ? 1.0 / std::sqrt(v) : kNaN;
      v *= factor;
    }
  }

  std::vector<double> read_pixels(const Hdu& hdu, long long n) {
    move_to(hdu);
    std::vector<double> values(static_cast<std::size_t>(n));
    double null_value = kNaN;
    int any_null = 0, status = 0;
    if (fits_read_img(file_, TDOUBLE, 1, n, &null_value, values.data(), &any_null, &status)) {
      unreadable(hdu.label() + ": its data cannot be read (" + cfitsio_says(status) + ")");
    }
    return values;
  }

  // The 1-D length of an image spectrum, or a problem saying what the image is.
  long long spectrum_length(const Hdu& hdu, const char* parameter) const {
    const bool one_d = !hdu.axes.empty() && hdu.axes.size() <= 3 &&
                       std::all_of(hdu.axes.begin() + 1, hdu.axes.end(), [](long long a) { return a == 1; });
    if (!one_d) {
      const std::string detail = hdu.label() + " is a " + std::to_string(hdu.axes.size()) + "-D image (" + hdu.shape() +
                                 "); planckton reads 1-D spectra: NAXIS = 1, or NAXIS = 2 or 3 with NAXIS2 (and NAXIS3) = 1. "
                                 "Extract the spectrum first, or choose another HDU with hdu; " + file_summary();
      if (parameter != nullptr) bad_option(parameter, detail, hdu_names());
      unusable(detail);
    }
    check_points(hdu.points(), hdu.label());
    return hdu.axes.front();
  }

  // cfitsio's tile decompression is not safe on damaged input (it crashed on randomly damaged files in
  // testing), so compressed images are listed but not expanded.
  void refuse_compressed(const Hdu& hdu) const {
    if (!hdu.compressed) return;
    unusable(hdu.label() + " is a tile-compressed image (ZIMAGE = T, FITS 4.0 sec. 10), which planckton does not expand; "
             "send it uncompressed (e.g. with funpack)");
  }

  void read_image_spectrum(const Hdu& hdu) {
    refuse_compressed(hdu);
    const long long n = spectrum_length(hdu, trim(options_.hdu).empty() ? nullptr : "hdu");
    move_to(hdu);
    const std::vector<double> x = spectral_axis(hdu, n);
    // spectral_axis() left the axis' unit and air flag in axis_.
    const auto bunit = key_text("BUNIT");
    const ReadUnit<FluxDensityUnit> y_unit = flux_unit(hdu, bunit, "BUNIT");
    const auto bscale = key_number(hdu, "BSCALE");
    const auto bzero = key_number(hdu, "BZERO");
    std::vector<double> y = read_pixels(hdu, n);
    for (double& v : y) v *= y_unit.factor;
    std::string note = hdu.label() + ": " + std::to_string(n) + "-point " + (hdu.compressed ? "tile-compressed " : "") +
                       "image, " + axis_note_;
    if ((bscale && *bscale != 1.0) || (bzero && *bzero != 0.0)) {
      note += ", BSCALE = " + number(bscale.value_or(1.0)) + " and BZERO = " + number(bzero.value_or(0.0)) + " applied";
    }
    note += ", values in " + in_quotes(y_unit.text);
    content_.notes.push_back(note);

    Points points{x, std::move(y), {}};
    if (const auto errors = error_hdu(hdu, n)) {
      const Hdu& error = *errors->first;
      const ErrorKind kind = errors->second;
      refuse_compressed(error);
      move_to(error);
      const auto own_unit = key_text("BUNIT");
      const double factor = error_factor(y_unit, own_unit, kind, error.label());
      points.error = read_pixels(error, n);
      to_sigma(points.error, kind, factor);
      content_.notes.push_back("errors from " + error.label() + " (" + describe(kind) + ")");
    }
    keep_points(std::move(points), hdu.label(), axis_, y_unit, air_, false);
  }

  // The HDU of the errors and their kind, or nullopt.
  std::optional<std::pair<const Hdu*, ErrorKind>> error_hdu(const Hdu& spectrum, long long n) {
    const std::string wanted = trim(options_.error_hdu);
    if (lower(wanted) == "none") return std::nullopt;
    const auto kind_of = [](const Hdu& hdu) {
      if (const auto kind = error_kind_of_hduclas3(hdu.hduclas3)) return kind;
      return error_kind_of_extname(hdu.extname);
    };
    if (!wanted.empty()) {
      const Hdu& hdu = find_hdu(wanted, "error_hdu");
      if (hdu.number == spectrum.number) bad_option("error_hdu", "is the spectrum's own HDU (" + hdu.label() + ")", hdu_names());
      if (!hdu.is_image() || hdu.points() != n || hdu.axes.front() != n) {
        bad_option("error_hdu", hdu.label() + " is not an image of the spectrum's length " + std::to_string(n) + " (it is: " +
                                    hdu.summary() + ")", hdu_names());
      }
      const auto kind = kind_of(hdu);
      if (!kind) {
        content_.notes.push_back(hdu.label() + " (error_hdu) has no EXTNAME or HDUCLAS3 that says what it holds; read as 1-sigma errors");
      }
      return std::make_pair(&hdu, kind.value_or(ErrorKind::kSigma));
    }
    for (const Hdu& hdu : hdus_) {
      if (hdu.number == spectrum.number || !hdu.is_image()) continue;
      const auto kind = kind_of(hdu);
      if (!kind) continue;
      if (hdu.points() != n || hdu.axes.front() != n) {
        unusable(hdu.label() + " holds errors (" + describe(*kind) + ") of another length (" + hdu.shape() + ") than " +
                 spectrum.label() + " (" + std::to_string(n) + "); give error_hdu=none to fit without them, or "
                 "error_hdu to choose another HDU; " + file_summary());
      }
      return std::make_pair(&hdu, *kind);
    }
    return std::nullopt;
  }

  // Greisen & Calabretta 2002 (A&A 395, 1061) and Greisen et al. 2006 (A&A 446, 747), FITS 4.0 sec. 8:
  // the pixel coordinate p (1-based) of axis 1 to its world coordinate. Sets axis_, air_ and axis_note_.
  std::vector<double> spectral_axis(const Hdu& hdu, long long n) {
    const std::string ctype = upper(key_text("CTYPE1").value_or(""));
    const auto crval = key_number(hdu, "CRVAL1");
    const auto cdelt = key_number(hdu, "CDELT1");
    const auto cd = key_number(hdu, "CD1_1");
    const auto pc = key_number(hdu, "PC1_1");
    const auto crpix = key_number(hdu, "CRPIX1");
    const auto dc_flag = key_number(hdu, "DC-FLAG");
    const std::string found = "CTYPE1 = " + in_quotes(ctype) + (crval ? ", CRVAL1 = " + number(*crval) : "") +
                              (cdelt ? ", CDELT1 = " + number(*cdelt) : "") + (cd ? ", CD1_1 = " + number(*cd) : "") +
                              (crpix ? ", CRPIX1 = " + number(*crpix) : "");
    if (!crval) {
      unusable(hdu.label() + " has no spectral axis: CRVAL1 is missing (found " + found + "); a spectrum image needs CTYPE1 "
               "(WAVE, AWAV, FREQ, WAVE-LOG ...), CRVAL1, CDELT1 or CD1_1, CRPIX1 and CUNIT1 (FITS 4.0 sec. 8; Greisen et al. 2006)");
    }
    // The type (first four characters) and the algorithm code (after the hyphens), e.g. WAVE-LOG.
    const std::string type = ctype.substr(0, std::min<std::size_t>(4, ctype.size()));
    std::string algorithm = ctype.size() > 4 ? ctype.substr(4) : "";
    algorithm.erase(0, algorithm.find_first_not_of('-'));
    // 'LINEAR' (IRAF), and 'LAMBDA' or 'WAVELENGTH' (older writers): a linear axis whose unit tells its kind.
    const bool untyped = ctype.empty() || ctype == "LINEAR" || ctype == "LAMBDA" || ctype == "WAVELENGTH";
    const bool standard_form = ctype.size() <= 4 || ctype[4] == '-';  // "TYPE" or "TYPE-ALG" (Greisen et al. 2006 sec. 3)
    std::string default_unit, default_why;
    SpectralAxisKind expected = SpectralAxisKind::kWavelength;
    air_ = false;
    if (untyped) {
      algorithm.clear();
    } else if (!standard_form) {
      unusable(hdu.label() + ": CTYPE1 = " + in_quotes(ctype) + " is not a spectral axis planckton reads; accepted are WAVE, "
                   "AWAV, FREQ, WAVN and ENER, linear or with -LOG (Greisen et al. 2006, A&A 446, 747), and 'LINEAR' or no "
                   "CTYPE1 with CUNIT1 or x_unit",
               {"WAVE", "AWAV", "FREQ", "WAVN", "ENER", "WAVE-LOG", "AWAV-LOG", "FREQ-LOG", "LINEAR"});
    } else if (type == "WAVE" || type == "AWAV") {
      default_unit = "m";
      air_ = type == "AWAV";
    } else if (type == "FREQ") {
      default_unit = "Hz";
      expected = SpectralAxisKind::kFrequency;
    } else if (type == "WAVN") {
      default_unit = "m-1";
      expected = SpectralAxisKind::kWavenumber;
    } else if (type == "ENER") {
      default_unit = "J";
      expected = SpectralAxisKind::kPhotonEnergy;
    } else {
      const bool velocity = type == "VRAD" || type == "VOPT" || type == "ZOPT" || type == "VELO" || type == "BETA";
      unusable(hdu.label() + ": CTYPE1 = " + in_quotes(ctype) + " is " +
                   (velocity ? "a velocity or redshift axis" : "not a spectral axis planckton reads") +
                   "; accepted are WAVE, AWAV, FREQ, WAVN and ENER, linear or with -LOG (Greisen et al. 2006, A&A 446, 747), "
                   "and 'LINEAR' or no CTYPE1 with CUNIT1 or x_unit",
               {"WAVE", "AWAV", "FREQ", "WAVN", "ENER", "WAVE-LOG", "AWAV-LOG", "FREQ-LOG", "LINEAR"});
    }
    if (!algorithm.empty() && algorithm != "LOG") {
      unusable(hdu.label() + ": CTYPE1 = " + in_quotes(ctype) + " uses the algorithm " + in_quotes(algorithm) +
                   ", which planckton does not compute; accepted are linear axes and -LOG (Greisen et al. 2006, sec. 3.2)",
               {"WAVE", "AWAV", "FREQ", "WAVN", "ENER", "WAVE-LOG", "AWAV-LOG", "FREQ-LOG"});
    }
    if (!default_unit.empty()) default_why = "the FITS default for " + type + ", '" + default_unit + "' (Greisen et al. 2006, Table 1)";
    const auto cunit = key_text("CUNIT1");
    axis_ = axis_unit(hdu, cunit, "CUNIT1", default_unit, default_why);
    if (!untyped && axis_.parsed.kind != expected) {
      const std::string detail = hdu.label() + ": CTYPE1 = " + in_quotes(ctype) + " needs " + kind_name(expected) + " unit; " +
                                 in_quotes(axis_.text) + " is " + kind_name(axis_.parsed.kind);
      if (!trim(options_.x_unit).empty()) bad_option("x_unit", detail, documented_spectral_axis_units());
      unusable(detail, documented_spectral_axis_units());
    }
    // Off-diagonal terms of axes 2 and 3 at their only pixel, p = 1.
    double step = 1.0;
    double offset = 0.0;
    std::vector<std::string> defaults;
    if (cd) {
      step = *cd;
      for (int j = 2; j <= static_cast<int>(hdu.axes.size()); ++j) {
        const auto cd1j = key_number(hdu, ("CD1_" + std::to_string(j)).c_str());
        const auto crpixj = key_number(hdu, ("CRPIX" + std::to_string(j)).c_str());
        if (cd1j) offset += *cd1j * (1.0 - crpixj.value_or(0.0));
      }
    } else {
      if (!cdelt) defaults.push_back("CDELT1 = 1");
      step = cdelt.value_or(1.0) * pc.value_or(1.0);
      for (int j = 2; j <= static_cast<int>(hdu.axes.size()); ++j) {
        const auto pc1j = key_number(hdu, ("PC1_" + std::to_string(j)).c_str());
        const auto crpixj = key_number(hdu, ("CRPIX" + std::to_string(j)).c_str());
        if (pc1j) offset += cdelt.value_or(1.0) * *pc1j * (1.0 - crpixj.value_or(0.0));
      }
    }
    if (!crpix) defaults.push_back("CRPIX1 = 0");
    const double reference_pixel = crpix.value_or(0.0);
    const bool logarithmic = algorithm == "LOG";
    const bool iraf_log = untyped && dc_flag && *dc_flag == 1.0;
    if (logarithmic && !(*crval > 0.0)) {
      unusable(hdu.label() + ": CTYPE1 = " + in_quotes(ctype) + " needs a positive CRVAL1 (Greisen et al. 2006, eq. 5); found " + found);
    }
    std::vector<double> x(static_cast<std::size_t>(n));
    for (long long p = 1; p <= n; ++p) {
      const double w = step * (static_cast<double>(p) - reference_pixel) + offset;
      double value = 0.0;
      if (logarithmic) {
        value = *crval * std::exp(w / *crval);  // Greisen et al. 2006, eq. 5
      } else if (iraf_log) {
        value = std::pow(10.0, *crval + w);  // IRAF's DC-FLAG = 1: log10 of the coordinate
      } else {
        value = *crval + w;
      }
      x[static_cast<std::size_t>(p - 1)] = value * axis_.factor;
    }
    axis_note_ = "CTYPE1 = " + in_quotes(ctype);
    if (logarithmic) axis_note_ += " (logarithmic, Greisen et al. 2006 eq. 5)";
    if (iraf_log) axis_note_ += " with DC-FLAG = 1 (log10 of the coordinate, the IRAF convention)";
    if (untyped) axis_note_ += " (a linear axis, " + std::string(kind_name(axis_.parsed.kind)) + " by its unit)";
    axis_note_ += " in " + in_quotes(axis_.text);
    if (air_) axis_note_ += ", converted to vacuum (Morton 2000, ApJS 130, 403)";
    if (!defaults.empty()) axis_note_ += ", with the FITS defaults " + joined(defaults, " and ") + " (FITS 4.0 sec. 8.2)";
    if (!cunit && trim(options_.x_unit).empty() && expected == SpectralAxisKind::kWavelength && !untyped && n > 0 &&
        std::abs(x.front()) > 1e-3) {
      axis_note_ += "; these are wavelengths of " + number(x.front()) + " m and more: if they are in Angstrom or nm, add "
                    "CUNIT1 or give x_unit";
    }
    if (cd && cdelt) axis_note_ += " (CD1_1 used, CDELT1 ignored)";
    return x;
  }

  // ---- tables ----

  std::optional<std::size_t> column_index(const Hdu& hdu, std::string_view name) const {
    for (std::size_t c = 0; c < hdu.columns.size(); ++c) {
      if (iequals(trim(hdu.columns[c]), name)) return c;
    }
    return std::nullopt;
  }

  Column column(const Hdu& hdu, std::size_t index) {
    Column c;
    c.number = static_cast<int>(index) + 1;
    c.name = hdu.columns[index];
    const std::string n = std::to_string(c.number);
    c.unit = key_text(("TUNIT" + n).c_str()).value_or("");
    c.ctype = key_text(("TCTYP" + n).c_str()).value_or("");
    int status = 0;
    LONGLONG repeat = 0, width = 0;
    if (fits_get_eqcoltypell(file_, c.number, &c.typecode, &repeat, &width, &status)) {
      unreadable(hdu.label() + ": column " + n + " cannot be read (" + cfitsio_says(status) + ")");
    }
    c.repeat = repeat;
    c.width = width;
    return c;
  }

  std::string column_label(const Column& c) const {
    return "column " + std::to_string(c.number) + (c.name.empty() ? std::string() : " " + in_quotes(c.name));
  }

  // A column chosen by the option (name ignoring case, or 1-based number), else by the common names.
  std::optional<std::size_t> find_column(const Hdu& hdu, const std::string& option, const std::string& parameter,
                                         const std::vector<std::string>& names) const {
    const std::string wanted = trim(option);
    if (!wanted.empty()) {
      if (all_digits(wanted)) {
        const std::size_t number = std::stoul(wanted.size() > 6 ? std::string("999999") : wanted);
        if (number < 1 || number > hdu.columns.size()) {
          bad_option(parameter, "column " + wanted + " does not exist; " + hdu.summary(), hdu.columns);
        }
        return number - 1;
      }
      const auto index = column_index(hdu, wanted);
      if (!index) bad_option(parameter, "no column is named " + in_quotes(wanted) + "; " + hdu.summary(), hdu.columns);
      return index;
    }
    for (const std::string& name : names) {
      if (const auto index = column_index(hdu, name)) return index;
    }
    return std::nullopt;
  }

  std::vector<double> read_numbers(const Hdu& hdu, const Column& c, long long rows) {
    const long long n = rows * c.repeat;
    std::vector<double> values(static_cast<std::size_t>(n));
    double null_value = kNaN;
    int any_null = 0, status = 0;
    if (n > 0 && fits_read_col(file_, TDOUBLE, c.number, 1, 1, n, &null_value, values.data(), &any_null, &status)) {
      unreadable(hdu.label() + ": " + column_label(c) + " cannot be read (" + cfitsio_says(status) + ")");
    }
    return values;
  }

  std::vector<std::string> read_strings(const Hdu& hdu, const Column& c, long long rows) {
    const std::size_t width = static_cast<std::size_t>(std::max<long long>(c.width, 1)) + 1;
    std::vector<char> storage(static_cast<std::size_t>(rows) * width, '\0');
    std::vector<char*> pointers(static_cast<std::size_t>(rows));
    for (std::size_t r = 0; r < pointers.size(); ++r) pointers[r] = storage.data() + r * width;
    char null_value[] = "";
    int any_null = 0, status = 0;
    if (rows > 0 && fits_read_col(file_, TSTRING, c.number, 1, 1, rows, null_value, pointers.data(), &any_null, &status)) {
      unreadable(hdu.label() + ": " + column_label(c) + " cannot be read (" + cfitsio_says(status) + ")");
    }
    std::vector<std::string> values;
    values.reserve(pointers.size());
    for (char* p : pointers) values.push_back(trim(std::string_view(p, strnlen(p, width))));
    return values;
  }

  // `option` is the option's value and `parameter` its name: the problem names it when it chose the column.
  void require_numeric(const Hdu& hdu, const Column& c, const char* role, const std::string& option, const char* parameter) {
    std::string why;
    if (c.typecode < 0) why = "is a variable-length array (TFORMn P or Q), which planckton does not read";
    else if (!is_numeric_type(c.typecode)) why = "is not a numeric column (text, logical, bit or complex)";
    else if (c.repeat < 1) why = "holds no elements (a TFORMn repeat count of 0)";
    if (why.empty()) return;
    const std::string detail = hdu.label() + ": " + column_label(c) + " (the " + role + ") " + why + "; " + hdu.summary();
    if (!trim(option).empty()) bad_option(parameter, detail, hdu.columns);
    unusable(detail, hdu.columns);
  }

  void read_table_spectrum(const Hdu& hdu) {
    move_to(hdu);
    const auto x_index = find_column(hdu, options_.x_column, "x_column", spectral_column_names());
    if (!x_index) {
      unusable(hdu.label() + " has no spectral column (named " + joined(spectral_column_names()) +
                   ", ignoring case); give x_column; " + hdu.summary(),
               hdu.columns);
    }
    const auto y_index = find_column(hdu, options_.y_column, "y_column", value_column_names());
    if (!y_index) {
      unusable(hdu.label() + " has no column of values (named " + joined(value_column_names()) +
                   ", ignoring case); give y_column; " + hdu.summary(),
               hdu.columns);
    }
    std::optional<std::size_t> error_index;
    if (lower(trim(options_.error_column)) != "none") {
      error_index = find_column(hdu, options_.error_column, "error_column", error_column_names());
    }
    const Column x = column(hdu, *x_index);
    const Column y = column(hdu, *y_index);
    require_numeric(hdu, x, "spectral axis", options_.x_column, "x_column");
    require_numeric(hdu, y, "values", options_.y_column, "y_column");
    std::optional<Column> error;
    if (error_index) {
      error = column(hdu, *error_index);
      require_numeric(hdu, *error, "errors", options_.error_column, "error_column");
    }
    // One row per point, or one row of arrays (TFORMn repeat counts).
    const bool arrays = x.repeat > 1 || y.repeat > 1;
    long long rows = hdu.rows;
    if (arrays) {
      if (hdu.rows != 1) {
        unusable(hdu.label() + ": " + column_label(x) + " or " + column_label(y) + " holds arrays in " +
                 count(hdu.rows, "row") + "; planckton reads a table with one row per point, or a single row of arrays");
      }
      for (const Column* c : {&y, error ? static_cast<const Column*>(&*error) : nullptr}) {
        if (c != nullptr && c->repeat != x.repeat) {
          unusable(hdu.label() + ": the arrays differ in length: " + column_label(x) + " has " + std::to_string(x.repeat) +
                   " elements, " + column_label(*c) + " " + std::to_string(c->repeat) + " (TFORMn)");
        }
      }
    } else if (error && error->repeat != 1) {
      unusable(hdu.label() + ": " + column_label(*error) + " holds arrays of " + std::to_string(error->repeat) +
               " elements in a table of one point per row");
    }
    const long long n = arrays ? x.repeat : rows;
    check_points(n, hdu.label());

    // The spectral column: log10 for loglam or a log(unit) / dex(unit) TUNITn; air by name or TCTYPn.
    std::string x_unit_text = x.unit;
    bool log10_axis = iequals(trim(x.name), "loglam");
    const std::string unit_lower = lower(x.unit);
    if ((unit_lower.rfind("log(", 0) == 0 || unit_lower.rfind("dex(", 0) == 0) && x.unit.back() == ')') {
      log10_axis = true;
      x_unit_text = trim(std::string_view(x.unit).substr(4, x.unit.size() - 5));
    }
    const std::string keyword = "TUNIT" + std::to_string(x.number);
    ReadUnit<SpectralAxisUnit> x_unit;
    if (log10_axis) {
      x_unit = axis_unit(hdu, x_unit_text.empty() ? std::nullopt : std::optional(x_unit_text), keyword, "Angstrom",
                         column_label(x) + " is log10 of the wavelength in Angstrom (the SDSS convention)");
    } else {
      x_unit = axis_unit(hdu, x.unit.empty() ? std::nullopt : std::optional(x.unit), keyword, "", "");
    }
    const bool air = is_air_column_name(x.name) || upper(x.ctype).rfind("AWAV", 0) == 0;
    const ReadUnit<FluxDensityUnit> y_unit =
        flux_unit(hdu, y.unit.empty() ? std::nullopt : std::optional(y.unit), "TUNIT" + std::to_string(y.number));

    Points points;
    points.x = read_numbers(hdu, x, rows);
    for (double& v : points.x) v = (log10_axis ? std::pow(10.0, v) : v) * x_unit.factor;
    points.y = read_numbers(hdu, y, rows);
    for (double& v : points.y) v *= y_unit.factor;
    std::string note = hdu.label() + ": " + std::string(arrays ? "one row of arrays, " : "one point per row, ") +
                       std::to_string(n) + " points; spectral axis " + column_label(x) +
                       (log10_axis ? " (log10)" : "") + " in " + in_quotes(x_unit.text) +
                       (air ? ", air wavelengths converted to vacuum (Morton 2000, ApJS 130, 403)" : "") + ", values " +
                       column_label(y) + " in " + in_quotes(y_unit.text);
    if (error) {
      const ErrorKind kind = error_kind_of_column(error->name);
      const double factor = error_factor(y_unit, error->unit.empty() ? std::nullopt : std::optional(error->unit), kind,
                                         column_label(*error));
      points.error = read_numbers(hdu, *error, rows);
      to_sigma(points.error, kind, factor);
      note += ", errors " + column_label(*error) + " (" + describe(kind) + ")";
    }
    content_.notes.push_back(note);
    keep_points(std::move(points), hdu.label(), x_unit, y_unit, air, true);
  }

  // ---- photometry ----

  void read_photometry(const Hdu& hdu) {
    move_to(hdu);
    static const std::vector<std::string> kColumns = {"band", "value", "error", "unit", "upper_limit", "zero_point",
                                                      "systematic_error"};
    if (hdu.rows > kMaxPhotometryRows) {
      too_large(hdu.label() + " has " + std::to_string(hdu.rows) + " rows of band measurements; planckton reads at most " +
                std::to_string(kMaxPhotometryRows));
    }
    const auto value_index = column_index(hdu, "value");
    if (!value_index) {
      unusable(hdu.label() + " has a BAND column but no VALUE column; a table of band measurements has the columns " +
                   "BAND, VALUE and optionally ERROR, UNIT, UPPER_LIMIT, ZERO_POINT, SYSTEMATIC_ERROR (any case); " + hdu.summary(),
               kColumns);
    }
    const long long rows = hdu.rows;
    std::vector<std::string> ignored;
    for (const std::string& name : hdu.columns) {
      if (std::find(kColumns.begin(), kColumns.end(), lower(trim(name))) == kColumns.end()) ignored.push_back(name);
    }
    const Column band = column(hdu, *column_index(hdu, "band"));
    if (band.typecode != TSTRING || (hdu.type == BINARY_TBL && band.repeat != band.width)) {
      unusable(hdu.label() + ": " + column_label(band) + " must be text (TFORMn rA), the band identifiers of GET /v1/passbands");
    }
    const Column value = column(hdu, *value_index);
    require_photometry_number(hdu, value);
    const std::vector<std::string> bands = read_strings(hdu, band, rows);
    const std::vector<double> values = read_numbers(hdu, value, rows);
    const auto optional_numbers = [&](const char* name) -> std::optional<std::pair<Column, std::vector<double>>> {
      const auto index = column_index(hdu, name);
      if (!index) return std::nullopt;
      const Column c = column(hdu, *index);
      require_photometry_number(hdu, c);
      return std::make_pair(c, read_numbers(hdu, c, rows));
    };
    const auto errors = optional_numbers("error");
    const auto zero_points = optional_numbers("zero_point");
    const auto systematic = optional_numbers("systematic_error");
    std::optional<std::vector<std::string>> units;
    if (const auto index = column_index(hdu, "unit")) {
      const Column c = column(hdu, *index);
      if (c.typecode != TSTRING) unusable(hdu.label() + ": " + column_label(c) + " must be text (TFORMn rA)");
      units = read_strings(hdu, c, rows);
    }
    std::optional<std::vector<bool>> upper_limits;
    if (const auto index = column_index(hdu, "upper_limit")) upper_limits = read_flags(hdu, column(hdu, *index), rows);

    const std::string given_unit = trim(options_.y_unit);
    const std::string value_unit = trim(value.unit);
    if (!given_unit.empty()) {
      content_.notes.push_back("y_unit " + in_quotes(given_unit) + " given: it is the unit of every band" +
                               (units || !value_unit.empty() ? ", in place of the file's" : ""));
    }
    nlohmann::json measurements = nlohmann::json::array();
    long long dropped = 0;
    for (long long r = 0; r < rows; ++r) {
      const std::size_t i = static_cast<std::size_t>(r);
      if (bands[i].empty() || !std::isfinite(values[i])) {
        ++dropped;
        continue;
      }
      std::string unit = given_unit;
      if (unit.empty() && units) unit = (*units)[i];
      if (unit.empty()) unit = value_unit;
      if (unit.empty()) {
        unusable(hdu.label() + ": row " + std::to_string(r + 1) + " (band " + in_quotes(bands[i]) +
                     ") has no unit: add a UNIT column or TUNIT" + std::to_string(value.number) + " for VALUE, or give y_unit",
                 {"ABmag", "Vegamag", "Jy", "mJy", "erg/s/cm2/Angstrom"});
      }
      nlohmann::json m = {{"band", bands[i]}, {"value", values[i]}, {"unit", unit}};
      if (errors && std::isfinite(errors->second[i])) m["error"] = errors->second[i];
      if (upper_limits && (*upper_limits)[i]) m["upper_limit"] = true;
      if (zero_points && std::isfinite(zero_points->second[i])) {
        const std::string zp_unit = trim(zero_points->first.unit);
        if (zp_unit.empty()) m["zero_point"] = zero_points->second[i];
        else m["zero_point"] = {{"value", zero_points->second[i]}, {"unit", zp_unit}};
      }
      if (systematic && std::isfinite(systematic->second[i])) m["systematic_error"] = systematic->second[i];
      measurements.push_back(std::move(m));
    }
    std::string note = hdu.label() + ": " + count(static_cast<long long>(measurements.size()), "band measurement");
    if (dropped > 0) note += "; " + count(dropped, "row") + " with a blank BAND or VALUE dropped";
    if (!ignored.empty()) note += "; columns not used: " + joined(ignored);
    content_.notes.push_back(note);
    if (measurements.empty()) unusable(hdu.label() + " has no band measurement with a BAND and a VALUE; " + hdu.summary());
    content_.photometry = std::move(measurements);
  }

  void require_photometry_number(const Hdu& hdu, const Column& c) {
    if (c.typecode > 0 && is_numeric_type(c.typecode) && c.repeat == 1) return;
    unusable(hdu.label() + ": " + column_label(c) + " must hold one number per row (a band measurement per row)");
  }

  // UPPER_LIMIT: logical, a number (non-zero = true) or text (true/yes/t/1).
  std::vector<bool> read_flags(const Hdu& hdu, const Column& c, long long rows) {
    std::vector<bool> flags(static_cast<std::size_t>(rows), false);
    if (c.typecode == TLOGICAL && c.repeat == 1) {
      std::vector<char> values(static_cast<std::size_t>(rows), 0);
      char null_value = 0;
      int any_null = 0, status = 0;
      if (rows > 0 && fits_read_col(file_, TLOGICAL, c.number, 1, 1, rows, &null_value, values.data(), &any_null, &status)) {
        unreadable(hdu.label() + ": " + column_label(c) + " cannot be read (" + cfitsio_says(status) + ")");
      }
      for (std::size_t r = 0; r < flags.size(); ++r) flags[r] = values[r] == 1;
    } else if (c.typecode == TSTRING) {
      const std::vector<std::string> texts = read_strings(hdu, c, rows);
      for (std::size_t r = 0; r < flags.size(); ++r) {
        const std::string t = lower(texts[r]);
        if (t == "true" || t == "yes" || t == "t" || t == "1" || t == "y") {
          flags[r] = true;
        } else if (!(t.empty() || t == "false" || t == "no" || t == "f" || t == "0" || t == "n")) {
          unusable(hdu.label() + ": " + column_label(c) + " row " + std::to_string(r + 1) + " is " + in_quotes(texts[r]) +
                   "; an upper-limit flag is true/false, yes/no, T/F or 1/0");
        }
      }
    } else if (is_numeric_type(c.typecode) && c.repeat == 1) {
      const std::vector<double> values = read_numbers(hdu, c, rows);
      for (std::size_t r = 0; r < flags.size(); ++r) flags[r] = std::isfinite(values[r]) && values[r] != 0.0;
    } else {
      unusable(hdu.label() + ": " + column_label(c) + " must be logical (TFORMn L), a number or text, one per row");
    }
    return flags;
  }

  std::string_view bytes_;
  const FitsOptions& options_;
  std::vector<char> buffer_;  // the copy cfitsio reads; it, memory_ and memory_size_ outlive file_
  void* memory_ = nullptr;
  std::size_t memory_size_ = 0;
  fitsfile* file_ = nullptr;
  std::vector<Hdu> hdus_;
  std::vector<HeaderFacts> facts_;  // of hdus_, and of the header being read
  FitsContent content_;
  ReadUnit<SpectralAxisUnit> axis_;  // of the image spectrum being read
  bool air_ = false;
  std::string axis_note_;
};

}  // namespace

bool looks_like_fits(std::string_view bytes) { return starts_with(bytes, "SIMPLE  ="); }

FitsContent read_fits(std::string_view bytes, const FitsOptions& options) {
  Reader reader(bytes, options);
  return reader.read();
}

}  // namespace planckton::api
