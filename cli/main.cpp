// planckton: the command-line front end. It only carries requests: it reads a JSON request or a
// table, hands it to the api layer, and prints the response document (the same document that
// POST /v1/fit answers) or the problem on stderr. `fit --output csv|svg` prints the fit's CSV table
// or SVG picture instead (api/fit_representation.h), `fit --plot FILE` also writes the SVG to FILE.
//
// Exit codes: 0 success, 2 bad input (a problem document, or a --plot file that cannot be written),
// 3 an unexpected internal error.
#include <CLI/CLI.hpp>

#include <algorithm>
#include <fstream>
#include <iostream>
#include <iterator>
#include <sstream>
#include <string>
#include <vector>

#include "api/fit_representation.h"
#include "api/fits_reader.h"
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
  std::string output = "json";  // what is printed: json, csv or svg
  std::string plot;             // also write the SVG here
  // Table settings, by their api parameter names (see api/fit_service.h).
  std::vector<std::string> exclude;
  std::vector<std::string> fix;
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

// A JSON request, a FITS file (by its first bytes) or a table, by --format or by content.
planckton::api::FitOutcome fit_input(const std::string& text, const FitArguments& args,
                                     const planckton::api::TableParameters& parameters) {
  if (args.format == "fits" || (args.format == "auto" && planckton::api::looks_like_fits(text))) {
    return planckton::api::fit_fits_outcome(text, parameters);
  }
  if (looks_like_json(text, args.format)) return planckton::api::fit_json_outcome(text);
  return planckton::api::fit_table_outcome(text, parameters);
}

void write_file(const std::string& path, const std::string& content) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << content;
  out.close();
  if (!out) {
    throw planckton::api::ProblemError(planckton::api::invalid_parameter("--plot", "cannot write '" + path + "'"));
  }
}

planckton::api::TableParameters table_parameters(const FitArguments& args,
                                                 const std::vector<std::pair<std::string, std::string*>>& flags) {
  planckton::api::TableParameters parameters;
  for (const auto& [name, value] : flags) {
    if (!value->empty()) parameters.emplace_back(name, *value);
  }
  for (const std::string& range : args.exclude) parameters.emplace_back("exclude", range);
  for (const std::string& fixed : args.fix) parameters.emplace_back("fix", fixed);
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
  fit->add_option("--format", args.format, "input format")->check(CLI::IsMember({"auto", "json", "table", "fits"}));
  fit->add_flag("--compact", args.compact, "print the response on one line");
  fit->add_option("--output", args.output, "what to print: the JSON response, the CSV table of data and model, or the SVG plot")
      ->check(CLI::IsMember({"json", "csv", "svg"}));
  fit->add_option("--plot", args.plot, "also write the SVG plot of the fit to this file");

  // Each table flag carries the api parameter of the same name (--x-unit is x_unit ...).
  const std::vector<std::pair<std::string, std::string>> kTableFlags = {
      {"x_unit", "unit of the table's spectral axis (nm, um, Angstrom, Hz, THz, cm-1, eV ...)"},
      {"y_unit", "unit of the table's values (W/m2/nm, erg/s/cm2/Angstrom, Jy, W/m2/sr/nm ...)"},
      {"x_column", "table column of x: header name or 1-based index"},
      {"y_column", "table column of y: header name or 1-based index"},
      {"error_column", "table column of y_error: name, index, or 'none'"},
      {"model", "model kind: planck, diluted_planck, modified_black_body or two_temperature"},
      {"opacity", "modified_black_body: thin or general"},
      {"redshift", "fixed redshift z of the source"},
      {"extinction", "extinction law: cardelli1989, odonnell1994, fitzpatrick1999 or calzetti2000"},
      {"r_v", "R_V of the extinction law"},
      {"loss", "robust loss: none, huber or cauchy"},
      {"loss_scale", "robust loss scale, in units of sigma"},
      {"distance", "distance as 'VALUE UNIT', e.g. '120 pc'"},
      {"temperature_min", "lower temperature bound, K"},
      {"temperature_max", "upper temperature bound, K"},
      {"time_budget_seconds", "time budget of the fit, s"},
      {"systematic_error", "photometry: systematic error floor, a fraction of the flux"},
      {"intervals", "interval method: covariance (default), profile or posterior"},
      {"seed", "posterior: the sampler's seed (same seed, same answer)"},
      {"hdu", "FITS: the HDU to read, by EXTNAME or 0-based number"},
      {"error_hdu", "FITS: the HDU of the errors of an image spectrum, by EXTNAME or 0-based number, or 'none'"},
  };
  std::vector<std::string> values(kTableFlags.size());
  std::vector<std::pair<std::string, std::string*>> flags;
  for (std::size_t i = 0; i < kTableFlags.size(); ++i) {
    std::string flag = "--" + kTableFlags[i].first;
    std::replace(flag.begin(), flag.end(), '_', '-');
    fit->add_option(flag, values[i], "for a table or FITS file: " + kTableFlags[i].second);
    flags.emplace_back(kTableFlags[i].first, &values[i]);
  }
  fit->add_option("--exclude", args.exclude, "for a table: mask the x range LO:HI (in --x-unit); repeatable");
  fit->add_option("--fix", args.fix, "for a table or FITS file: hold parameter NAME at VALUE (NAME:VALUE, e.g. beta:2); repeatable");

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
      const planckton::api::FitOutcome outcome = fit_input(read_input(args.file), args, table_parameters(args, flags));
      if (!args.plot.empty()) write_file(args.plot, planckton::api::represent(outcome, planckton::api::FitRepresentation::kSvg));
      if (args.output == "csv") {
        std::cout << planckton::api::represent(outcome, planckton::api::FitRepresentation::kCsv);
        return 0;
      }
      if (args.output == "svg") {
        std::cout << planckton::api::represent(outcome, planckton::api::FitRepresentation::kSvg);
        return 0;
      }
      response = outcome.response;
    }
    // replace: a document never fails to print over a byte that is not UTF-8 (the readers refuse them).
    std::cout << response.dump(args.compact ? -1 : 2, ' ', false, nlohmann::ordered_json::error_handler_t::replace) << '\n';
    return 0;
  } catch (const planckton::api::ProblemError& e) {
    std::cerr << "planckton: " << e.problem().one_line() << '\n';
    return kExitBadInput;
  } catch (const std::exception& e) {
    std::cerr << "planckton: internal error: " << e.what() << '\n';
    return kExitInternal;
  }
}
