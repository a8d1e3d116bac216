// planckton: the command-line front end. It only carries requests: it reads a JSON request or a
// table, hands it to the api layer, and prints the response document (the same document that
// POST /v1/fit answers) or the problem on stderr.
//
// Exit codes: 0 success, 2 bad input (a problem document), 3 an unexpected internal error.
#include <CLI/CLI.hpp>

#include <cstdio>
#include <fstream>
#include <iostream>
#include <iterator>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "api/fit_service.h"
#include "api/problem.h"

namespace {

constexpr int kExitBadInput = 2;
constexpr int kExitInternal = 3;

struct FitArguments {
  std::string file;
  planckton::api::TableRequestOptions table;
  std::string format = "auto";
  std::string model = "planck";
  std::vector<std::string> exclude;
  std::string loss;
  double loss_scale = 1.0;
  std::string distance;
  bool compact = false;
};

std::string read_input(const std::string& file) {
  if (file == "-") {
    return std::string(std::istreambuf_iterator<char>(std::cin), std::istreambuf_iterator<char>());
  }
  std::ifstream in(file, std::ios::binary);
  if (!in) throw planckton::api::ProblemError(planckton::api::malformed_document("cannot open '" + file + "'"));
  std::ostringstream content;
  content << in.rdbuf();
  return content.str();
}

bool looks_like_json(const std::string& text, const std::string& format) {
  if (format != "auto") return format == "json";
  const auto first = text.find_first_not_of(" \t\r\n");
  return first != std::string::npos && text[first] == '{';
}

double parse_cli_number(const std::string& text, const std::string& what) {
  try {
    std::size_t used = 0;
    const double value = std::stod(text, &used);
    if (used == text.size()) return value;
  } catch (const std::exception&) {
  }
  throw planckton::api::ProblemError(planckton::api::invalid_argument(what + ": '" + text + "' is not a number"));
}

// The table's options, in the same members a JSON request carries.
nlohmann::json table_request_members(const FitArguments& args) {
  nlohmann::json extra = nlohmann::json::object();
  extra["model"] = {{"kind", args.model}};
  nlohmann::json options = nlohmann::json::object();
  if (!args.loss.empty()) options["loss"] = {{"kind", args.loss}, {"scale", args.loss_scale}};
  if (!args.distance.empty()) {
    std::istringstream words(args.distance);
    std::string value, unit;
    words >> value >> unit;
    options["distance"] = {{"value", parse_cli_number(value, "--distance")}, {"unit", unit.empty() ? "pc" : unit}};
  }
  if (!args.exclude.empty()) {
    nlohmann::json ranges = nlohmann::json::array();
    for (const std::string& range : args.exclude) {
      const auto colon = range.find(':');
      if (colon == std::string::npos) {
        throw planckton::api::ProblemError(planckton::api::invalid_argument("--exclude takes LO:HI, got '" + range + "'"));
      }
      ranges.push_back({parse_cli_number(range.substr(0, colon), "--exclude"),
                        parse_cli_number(range.substr(colon + 1), "--exclude")});
    }
    extra["spectrum"] = {{"exclude", ranges}};
  }
  if (!options.empty()) extra["options"] = options;
  return extra;
}

int run_fit(const FitArguments& args) {
  const std::string text = read_input(args.file);
  nlohmann::ordered_json response;
  if (looks_like_json(text, args.format)) {
    response = planckton::api::fit_json_text(text);
  } else {
    if (args.table.x_unit.empty() || args.table.y_unit.empty()) {
      throw planckton::api::ProblemError(planckton::api::invalid_argument(
          "a table needs its units: give --x-unit and --y-unit (e.g. --x-unit nm --y-unit W/m2/nm)"));
    }
    response = planckton::api::fit_table_text(text, args.table, table_request_members(args));
  }
  std::cout << (args.compact ? response.dump() : response.dump(2)) << '\n';
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"planckton: fit black-body (Planck) curves to spectra and report a defensible temperature"};
  app.require_subcommand(1);
  FitArguments args;
  CLI::App* fit = app.add_subcommand("fit", "Fit a spectrum given as a JSON request or a CSV/TSV/whitespace table");
  fit->add_option("file", args.file, "JSON request or table file ('-' reads standard input)")->required();
  fit->add_option("--x-unit", args.table.x_unit, "unit of the table's spectral axis (nm, um, Angstrom, Hz, THz, cm-1, eV ...)");
  fit->add_option("--y-unit", args.table.y_unit, "unit of the table's values (W/m2/nm, erg/s/cm2/Angstrom, Jy, W/m2/sr/nm ...)");
  fit->add_option("--x-column", args.table.x_column, "table column of x: header name or 1-based index");
  fit->add_option("--y-column", args.table.y_column, "table column of y: header name or 1-based index");
  fit->add_option("--error-column", args.table.error_column, "table column of y_error: name, index, or 'none'");
  fit->add_option("--format", args.format, "input format")->check(CLI::IsMember({"auto", "json", "table"}));
  fit->add_option("--model", args.model, "model kind for a table (planck)");
  fit->add_option("--exclude", args.exclude, "for a table: mask the x range LO:HI (in --x-unit); repeatable");
  fit->add_option("--loss", args.loss, "for a table: robust loss (none, huber, cauchy)");
  fit->add_option("--loss-scale", args.loss_scale, "for a table: robust loss scale, in sigma");
  fit->add_option("--distance", args.distance, "for a table: distance as 'VALUE UNIT', e.g. '120 pc'");
  fit->add_flag("--compact", args.compact, "print the response on one line");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? 0 : kExitBadInput;
  }
  try {
    return run_fit(args);
  } catch (const planckton::api::ProblemError& e) {
    std::cerr << "planckton: " << e.problem().one_line() << '\n';
    return kExitBadInput;
  } catch (const std::exception& e) {
    std::cerr << "planckton: internal error: " << e.what() << '\n';
    return kExitInternal;
  }
}
