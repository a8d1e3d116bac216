#include "api/fit_csv_out.h"

#include <charconv>
#include <cmath>
#include <optional>
#include <string>

#include "science/planck_fit.h"
#include "science/units.h"

namespace planckton::api {

namespace {

using json = nlohmann::ordered_json;

// The shortest decimal that reads back as the same double; empty for a non-finite value.
std::string csv_number(double value) {
  if (!std::isfinite(value)) return "";
  char buffer[64];
  const auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value);
  return error == std::errc() ? std::string(buffer, end) : std::string();
}

std::string csv_value(const json& value) {
  if (value.is_number()) return csv_number(value.get<double>());
  if (value.is_boolean()) return value.get<bool>() ? "1" : "0";
  if (value.is_string()) return value.get<std::string>();
  return "";
}

// RFC 4180 section 2, rules 6 and 7: a field with a comma, quote or line break is quoted, quotes doubled.
std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

// A comment line: no line breaks inside.
std::string comment(std::string text) {
  for (char& c : text) {
    if (c == '\n' || c == '\r') c = ' ';
  }
  return "# " + text + "\n";
}

std::string number_text(const json& document, const char* pointer) {
  const json::json_pointer p(pointer);
  return document.contains(p) && document.at(p).is_number() ? csv_number(document.at(p).get<double>()) : std::string("-");
}

std::string common_header(const FitOutcome& outcome) {
  const json& r = outcome.response;
  std::string out = comment("planckton fit, model " + r.value("model", std::string("planck")) + ", status " +
                            r.value("status", std::string("?")) + ", version " +
                            r.value(json::json_pointer("/provenance/version"), std::string("?")) + ", constants " +
                            r.value(json::json_pointer("/provenance/constants"), std::string("?")));
  // One line per parameter, in the response's order (temperature and scale for a Planck fit).
  if (r.contains("parameters") && r["parameters"].is_object()) {
    for (const auto& [name, p] : r["parameters"].items()) {
      const std::string at = "/parameters/" + name;
      const std::string unit = p.value("unit", std::string());
      std::string line = name + ": " + number_text(r, (at + "/value").c_str()) + " " + unit;
      if (p.contains("fixed") && p["fixed"] == true) {
        line += " (fixed)";
      } else {
        line += ", error " + number_text(r, (at + "/error").c_str()) + " " + unit + ", 68 % interval [" +
                number_text(r, (at + "/interval_68/0").c_str()) + ", " + number_text(r, (at + "/interval_68/1").c_str()) +
                "] " + unit;
      }
      if (p.contains("meaning") && p["meaning"].is_string()) line += " (" + p["meaning"].get<std::string>() + ")";
      out += comment(line);
    }
  }
  return out;
}

std::string spectrum_csv(const FitOutcome& outcome) {
  const SpectrumInput& input = outcome.request.spectrum;
  const FluxDensityUnit& unit = outcome.unit;
  const bool has_errors = !input.y_error.empty();
  std::string out = common_header(outcome);
  out += comment("units: x in " + input.x_unit + "; y, y_error and model in " + input.y_unit + " (" +
                 std::string(convention_name(unit.convention)) + (unit.per_steradian ? ", per steradian" : "") + ")");
  out += comment(std::string("model: the fitted ") +
                 (outcome.model_fit ? "model (the JSON response's parameters, extinction included)"
                                    : "curve scale * B(T) (the JSON response's temperature and scale)") +
                 " in the data's convention at each x");
  out += comment(has_errors ? "residual: (y - model) / y_error"
                            : "residual: y - model, in " + input.y_unit + " (no y_error was given; y_error is empty)");
  out += comment("excluded: 1 for points inside the request's exclude ranges (not fitted), else 0");
  out += comment("lines end with LF (\\n), not CRLF; numbers are the shortest decimals that read back exactly");
  out += "x,y,y_error,model,residual,excluded\n";
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    const double x = input.x[i], y = input.y[i];
    const double model = outcome_curve(outcome, unit.convention, to_frequency(outcome.spectrum->x_unit, x)).value / unit.to_si;
    const double residual = has_errors ? (y - model) / input.y_error[i] : y - model;
    bool excluded = false;
    for (const auto& range : input.exclude) excluded = excluded || (x >= range[0] && x <= range[1]);
    out += csv_number(x) + "," + csv_number(y) + "," + (has_errors ? csv_number(input.y_error[i]) : std::string()) + "," +
           csv_number(model) + "," + csv_number(residual) + "," + (excluded ? "1" : "0") + "\n";
  }
  return out;
}

std::string photometry_csv(const FitOutcome& outcome) {
  std::string out = common_header(outcome);
  out += comment("one row per band, from the JSON response's bands: value, error and model in the band's unit "
                 "(flux density or magnitude), pivot wavelength in nm");
  out += comment(std::string("model: the fitted ") + (outcome.model_fit ? "model" : "curve scale * B_nu(T)") +
                 " integrated through the band's response, quoted as the band quotes fluxes");
  out += comment("residual: (value - model) / sigma (sigma_used of the response); for an upper limit "
                 "sqrt(-2 ln Phi((limit - model) / sigma)), positive below the limit");
  out += comment("upper_limit: 1 for a non-detection (value is the limit), else 0; error empty when none was given");
  out += comment("lines end with LF (\\n), not CRLF; numbers are the shortest decimals that read back exactly");
  out += "band,pivot_wavelength_nm,unit,value,error,upper_limit,model,residual\n";
  const json& bands = outcome.response.contains("bands") ? outcome.response["bands"] : json::array();
  for (const json& band : bands) {
    std::string row;
    for (const char* member : {"band", "pivot_wavelength_nm", "unit", "value", "error", "upper_limit", "model", "residual"}) {
      if (!row.empty()) row += ',';
      row += csv_field(band.contains(member) ? csv_value(band[member]) : std::string());
    }
    out += row + "\n";
  }
  return out;
}

}  // namespace

std::string fit_csv(const FitOutcome& outcome) {
  return outcome.photometry ? photometry_csv(outcome) : spectrum_csv(outcome);
}

}  // namespace planckton::api
