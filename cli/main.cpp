// planckton: the command-line front end. It only carries requests: it reads a JSON request or a
// table, hands it to the api layer, and prints the response document (the same document that
// POST /v1/fit answers) or the problem on stderr.
//
// Exit codes: 0 success, 2 bad input (a problem document), 3 an unexpected internal error.
#include <CLI/CLI.hpp>

#include <algorithm>
#include <fstream>
#include <iostream>
#include <iterator>
#include <sstream>
#include <string>
#include <vector>

#include "api/fit_service.h"
#include "api/lab_documents.h"
#include "api/problem.h"

namespace {

constexpr int kExitBadInput = 2;
constexpr int kExitInternal = 3;

struct FitArguments {
  std::string file;
  std::string format = "auto";
  bool compact = false;
  // Table settings, by their api parameter names (see api/fit_service.h).
  std::vector<std::string> exclude;
};

std::string read_input(const std::string& file) {
  if (file == "-") return std::string(std::istreambuf_iterator<char>(std::cin), std::istreambuf_iterator<char>());
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

planckton::api::TableParameters table_parameters(const FitArguments& args,
                                                 const std::vector<std::pair<std::string, std::string*>>& flags) {
  planckton::api::TableParameters parameters;
  for (const auto& [name, value] : flags) {
    if (!value->empty()) parameters.emplace_back(name, *value);
  }
  for (const std::string& range : args.exclude) parameters.emplace_back("exclude", range);
  return parameters;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"planckton: fit black-body (Planck) curves to spectra and report a defensible temperature"};
  app.require_subcommand(1);
  FitArguments args;
  CLI::App* fit = app.add_subcommand("fit", "Fit a spectrum or band photometry given as a JSON request or a CSV/TSV/whitespace table "
                                  "(a photometry table has the columns band,value,error,unit[,upper_limit])");
  fit->add_option("file", args.file, "JSON request or table file ('-' reads standard input)")->required();
  fit->add_option("--format", args.format, "input format")->check(CLI::IsMember({"auto", "json", "table"}));
  fit->add_flag("--compact", args.compact, "print the response on one line");

  // Each table flag carries the api parameter of the same name (--x-unit is x_unit ...).
  const std::vector<std::pair<std::string, std::string>> kTableFlags = {
      {"x_unit", "unit of the table's spectral axis (nm, um, Angstrom, Hz, THz, cm-1, eV ...)"},
      {"y_unit", "unit of the table's values (W/m2/nm, erg/s/cm2/Angstrom, Jy, W/m2/sr/nm ...)"},
      {"x_column", "table column of x: header name or 1-based index"},
      {"y_column", "table column of y: header name or 1-based index"},
      {"error_column", "table column of y_error: name, index, or 'none'"},
      {"model", "model kind (planck)"},
      {"loss", "robust loss: none, huber or cauchy"},
      {"loss_scale", "robust loss scale, in units of sigma"},
      {"distance", "distance as 'VALUE UNIT', e.g. '120 pc'"},
      {"temperature_min", "lower temperature bound, K"},
      {"temperature_max", "upper temperature bound, K"},
      {"time_budget_seconds", "time budget of the fit, s"},
      {"systematic_error", "photometry: systematic error floor, a fraction of the flux"},
  };
  std::vector<std::string> values(kTableFlags.size());
  std::vector<std::pair<std::string, std::string*>> flags;
  for (std::size_t i = 0; i < kTableFlags.size(); ++i) {
    std::string flag = "--" + kTableFlags[i].first;
    std::replace(flag.begin(), flag.end(), '_', '-');
    fit->add_option(flag, values[i], "for a table: " + kTableFlags[i].second);
    flags.emplace_back(kTableFlags[i].first, &values[i]);
  }
  fit->add_option("--exclude", args.exclude, "for a table: mask the x range LO:HI (in --x-unit); repeatable");

  // The laboratory documents (JSON requests only).
  std::string lab_file;
  CLI::App* light = app.add_subcommand("light", "Chromaticity, CCT, Duv and distribution temperature of a light source");
  light->add_option("file", lab_file, "JSON request ('-' reads standard input)")->required();
  light->add_flag("--compact", args.compact, "print the response on one line");
  CLI::App* hot_body = app.add_subcommand("hot-body", "Grey-body temperature, emissivity and radiance temperatures");
  hot_body->add_option("file", lab_file, "JSON request ('-' reads standard input)")->required();
  hot_body->add_flag("--compact", args.compact, "print the response on one line");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? 0 : kExitBadInput;
  }
  try {
    nlohmann::ordered_json response;
    if (light->parsed()) {
      response = planckton::api::light_source_text(read_input(lab_file));
    } else if (hot_body->parsed()) {
      response = planckton::api::hot_body_text(read_input(lab_file));
    } else {
      const std::string text = read_input(args.file);
      response = looks_like_json(text, args.format) ? planckton::api::fit_json_text(text)
                                                    : planckton::api::fit_table_text(text, table_parameters(args, flags));
    }
    std::cout << (args.compact ? response.dump() : response.dump(2)) << '\n';
    return 0;
  } catch (const planckton::api::ProblemError& e) {
    std::cerr << "planckton: " << e.problem().one_line() << '\n';
    return kExitBadInput;
  } catch (const std::exception& e) {
    std::cerr << "planckton: internal error: " << e.what() << '\n';
    return kExitInternal;
  }
}
