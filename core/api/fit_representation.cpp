#include "api/fit_representation.h"

#include <algorithm>
#include <array>
#include <cctype>
#include <charconv>
#include <cmath>
#include <vector>

#include "api/fit_csv_out.h"
#include "api/fit_plot.h"
#include "api/fit_request.h"
#include "api/problem.h"
#include "api/table_reader.h"
#include "science/input_error.h"

namespace planckton::api {

namespace {

const std::vector<std::string>& format_names() {
  static const std::vector<std::string> kNames = {"json", "svg", "csv"};
  return kNames;
}

std::string lower(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

std::string_view trimmed(std::string_view text) {
  const auto first = text.find_first_not_of(" \t");
  if (first == std::string_view::npos) return {};
  const auto last = text.find_last_not_of(" \t");
  return text.substr(first, last - first + 1);
}

// Splits on the separator outside quoted strings (RFC 9110 section 5.6.4).
std::vector<std::string_view> split_outside_quotes(std::string_view text, char separator) {
  std::vector<std::string_view> parts;
  bool quoted = false;
  std::size_t start = 0;
  for (std::size_t i = 0; i < text.size(); ++i) {
    if (quoted && text[i] == '\\') {
      ++i;
    } else if (text[i] == '"') {
      quoted = !quoted;
    } else if (!quoted && text[i] == separator) {
      parts.push_back(text.substr(start, i - start));
      start = i + 1;
    }
  }
  parts.push_back(text.substr(start));
  return parts;
}

bool is_token(std::string_view text) {
  // RFC 9110 section 5.6.2: tchar = "!" / "#" / "$" / "%" / "&" / "'" / "*" / "+" / "-" / "." / "^" /
  // "_" / "`" / "|" / "~" / DIGIT / ALPHA
  return !text.empty() && std::all_of(text.begin(), text.end(), [](unsigned char c) {
    return std::isalnum(c) || std::string_view("!#$%&'*+-.^_`|~").find(static_cast<char>(c)) != std::string_view::npos;
  });
}

// RFC 9110 section 12.4.2: qvalue = ( "0" [ "." 0*3DIGIT ] ) / ( "1" [ "." 0*3("0") ] )
std::optional<double> qvalue(std::string_view text) {
  if (text.empty() || text.size() > 5 || (text[0] != '0' && text[0] != '1')) return std::nullopt;
  if (text.size() > 1 && (text[1] != '.' || text.size() == 2)) return std::nullopt;
  for (std::size_t i = 2; i < text.size(); ++i) {
    if (!std::isdigit(static_cast<unsigned char>(text[i])) || (text[0] == '1' && text[i] != '0')) return std::nullopt;
  }
  double value = 0.0;
  std::from_chars(text.data(), text.data() + text.size(), value);
  return value;
}

struct MediaRange {
  std::string type, subtype;  // lower case; "*" for a wildcard
  double q = 1.0;
};

std::optional<MediaRange> media_range(std::string_view element) {
  const std::vector<std::string_view> parts = split_outside_quotes(element, ';');
  const std::string_view range = trimmed(parts[0]);
  const auto slash = range.find('/');
  if (slash == std::string_view::npos) return std::nullopt;
  MediaRange out{lower(range.substr(0, slash)), lower(range.substr(slash + 1))};
  if (!is_token(out.type) || !is_token(out.subtype) || (out.type == "*" && out.subtype != "*")) return std::nullopt;
  for (std::size_t i = 1; i < parts.size(); ++i) {
    const std::string_view parameter = trimmed(parts[i]);
    const auto equals = parameter.find('=');
    if (equals == std::string_view::npos) return std::nullopt;
    if (lower(trimmed(parameter.substr(0, equals))) != "q") continue;  // other parameters do not narrow the match here
    const std::optional<double> q = qvalue(trimmed(parameter.substr(equals + 1)));
    if (!q) return std::nullopt;
    out.q = *q;
    break;  // what follows q are accept extensions
  }
  return out;
}

struct Offer {
  FitRepresentation representation;
  const char* type;
  const char* subtype;
};
constexpr std::array<Offer, 3> kOffers = {{
    {FitRepresentation::kJson, "application", "json"},
    {FitRepresentation::kSvg, "image", "svg+xml"},
    {FitRepresentation::kCsv, "text", "csv"},
}};

}  // namespace

const char* media_type_of(FitRepresentation representation) {
  switch (representation) {
    case FitRepresentation::kSvg: return "image/svg+xml";
    case FitRepresentation::kCsv: return "text/csv; charset=utf-8";
    case FitRepresentation::kJson: break;
  }
  return "application/json";
}

FitRepresentation representation_of_format(std::string_view format) {
  if (format == "json") return FitRepresentation::kJson;
  if (format == "svg") return FitRepresentation::kSvg;
  if (format == "csv") return FitRepresentation::kCsv;
  throw ProblemError(invalid_parameter("format", "'" + std::string(format) + "' is not a representation of a fit", format_names()));
}

std::optional<FitRepresentation> representation_of_accept(std::string_view accept) {
  std::vector<MediaRange> ranges;
  for (const std::string_view element : split_outside_quotes(accept, ',')) {
    if (trimmed(element).empty()) continue;
    if (auto range = media_range(element)) ranges.push_back(std::move(*range));
  }
  if (ranges.empty()) return FitRepresentation::kJson;  // absent, empty or unreadable: as if not sent
  std::optional<FitRepresentation> best;
  double best_q = 0.0;
  for (const Offer& offer : kOffers) {
    int specificity = 0;
    double q = 0.0;
    for (const MediaRange& range : ranges) {
      const int s = range.type == offer.type && range.subtype == offer.subtype ? 3
                    : range.type == offer.type && range.subtype == "*"         ? 2
                    : range.type == "*"                                        ? 1
                                                                               : 0;
      if (s > specificity) {
        specificity = s;
        q = range.q;
      }
    }
    if (q > best_q) {  // ties keep the earlier offer
      best = offer.representation;
      best_q = q;
    }
  }
  return best;
}

FitRepresentation choose_fit_representation(const std::optional<std::string>& format, std::string_view accept) {
  if (format) return representation_of_format(*format);
  if (const auto chosen = representation_of_accept(accept)) return *chosen;
  throw ProblemError(not_acceptable("POST /v1/fit answers application/json, image/svg+xml or text/csv (or ?format=json|svg|csv); "
                                    "the Accept header '" + std::string(accept) + "' allows none of them",
                                    {"application/json", "image/svg+xml", "text/csv"}));
}

std::string represent(const FitOutcome& outcome, FitRepresentation representation) {
  switch (representation) {
    case FitRepresentation::kSvg: return fit_svg(outcome);
    case FitRepresentation::kCsv: return fit_csv(outcome);
    case FitRepresentation::kJson: break;
  }
  return outcome.response.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

FitOutcome fit_json_outcome(std::string_view text, const ServiceLimits& limits) {
  return fit_outcome(parse_fit_request(text), limits);
}

}  // namespace planckton::api
