#include "api/fit_service.h"

#include <nlohmann/json.hpp>

#include "api/fit_request.h"
#include "api/fit_response.h"
#include "api/problem.h"
#include "science/input_error.h"
#include "science/units.h"

namespace planckton::api {

namespace {

std::vector<std::string> accepted_for_field(const std::string& field) {
  if (field == "x_unit") return documented_spectral_axis_units();
  if (field == "y_unit") return documented_flux_density_units();
  if (field == "distance.unit") return documented_length_units();
  return {};
}

// The nesting limit keeps a hostile document from exhausting the stack of the recursive parser.
constexpr int kMaxNestingDepth = 64;

bool nesting_within_limit(std::string_view text) {
  int depth = 0;
  bool in_string = false;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (in_string) {
      if (c == '\\') ++i;
      else if (c == '"') in_string = false;
    } else if (c == '"') {
      in_string = true;
    } else if (c == '[' || c == '{') {
      if (++depth > kMaxNestingDepth) return false;
    } else if (c == ']' || c == '}') {
      --depth;
    }
  }
  return true;
}

// "/spectrum/{x,y,y_error}/<row>" -> the table line of that row; other pointers have no line.
std::optional<std::size_t> table_line_of(const std::string& pointer, const Table& table) {
  for (const char* column : {"/spectrum/x/", "/spectrum/y/", "/spectrum/y_error/"}) {
    const std::string prefix = column;
    if (pointer.rfind(prefix, 0) != 0) continue;
    const std::string row = pointer.substr(prefix.size());
    if (row.empty() || row.find_first_not_of("0123456789") != std::string::npos || row.size() > 18) return std::nullopt;
    const std::size_t index = std::stoul(row);
    return index < table.line_of_row.size() ? std::optional(table.line_of_row[index]) : std::nullopt;
  }
  return std::nullopt;
}

}  // namespace

nlohmann::ordered_json fit_document(const nlohmann::json& document) {
  const FitRequest request = parse_fit_request(document);
  try {
    const MeasuredSpectrum spectrum = prepare_spectrum(request.spectrum);
    const PlanckFitResult fit = fit_planck(spectrum, request.fit_options);
    std::optional<Distance> distance;
    if (request.distance) {
      distance = Distance{request.distance->value * parse_length_unit(request.distance->unit),
                          request.distance->error / request.distance->value};
    }
    const DerivedQuantities derived = derive_quantities(fit, spectrum.y_unit, distance);
    return make_fit_response(request, spectrum, fit, derived);
  } catch (const InputError& e) {
    throw ProblemError(invalid_value(pointer_for_field(e.field(), e.index()), e.what(), accepted_for_field(e.field())));
  }
}

nlohmann::ordered_json fit_json_text(std::string_view text) {
  if (!nesting_within_limit(text)) {
    throw ProblemError(malformed_document("the JSON nests deeper than " + std::to_string(kMaxNestingDepth) + " levels"));
  }
  nlohmann::json document;
  try {
    document = nlohmann::json::parse(text.begin(), text.end());
  } catch (const nlohmann::json::out_of_range& e) {
    // nlohmann reports a number beyond the range of a double (e.g. 1e999) this way.
    throw ProblemError(malformed_document(std::string("the body holds a number a double cannot represent: ") + e.what()));
  } catch (const nlohmann::json::exception& e) {
    throw ProblemError(malformed_document(std::string("the body is not valid JSON: ") + e.what()));
  }
  return fit_document(document);
}

nlohmann::ordered_json fit_table_text(std::string_view text, const TableRequestOptions& options,
                              const nlohmann::json& extra_request_members) {
  const Table table = read_table(text);
  nlohmann::json request = table_to_request(table, options);
  for (const auto& [key, value] : extra_request_members.items()) {
    if (key == "spectrum" && value.is_object()) {
      for (const auto& [member, content] : value.items()) request["spectrum"][member] = content;
    } else {
      request[key] = value;
    }
  }
  try {
    return fit_document(request);
  } catch (ProblemError& e) {
    Problem& problem = e.problem();
    if (problem.pointer) problem.line = table_line_of(*problem.pointer, table);
    throw;
  }
}

}  // namespace planckton::api
