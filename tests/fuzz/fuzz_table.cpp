// POST /v1/fit with a table body (text/csv, text/tab-separated-values, text/plain; `planckton fit
// table.csv --x-unit ...`): CSV, TSV, semicolon or whitespace columns, comments, header, photometry
// tables (first column `band`), with the query parameters that give units, columns, model and options.
//
// Input: an optional query line, "?x_unit=nm&y_unit=W/m2/nm&model=...", decoded as httplib decodes
// the request's query, then the body. The server's call, api::fit_table_outcome, runs with a limit of
// one point, so that a table of two or more points is read, checked and refused (413) where the fit
// would start; a table of fewer points is not given to it (it would be fitted). Then what the limit
// stopped: the table's spectrum or measurements prepared as fit_outcome prepares them.
#include "fuzz_support.h"

#include "api/fit_representation.h"
#include "api/fit_request.h"
#include "api/table_reader.h"

namespace {

using namespace planckton;

std::size_t rows_if_readable(std::string_view body, bool photometry) {
  try {
    return photometry ? api::read_photometry_table(body).measurements.size() : api::read_table(body).line_of_row.size();
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
    return 2;  // refused while read, so never fitted: the service's call shows how it is refused
  }
}

void prepare(std::string_view body, bool photometry, const api::TableParameters& parameters) {
  try {
    if (photometry) {
      nlohmann::json document;
      document["photometry"] = api::read_photometry_table(body).measurements;
      fuzz::prepare_like_fit_outcome(api::parse_fit_request(document), fuzz::kServerLimits);
      return;
    }
    api::TableRequestOptions options;
    for (const auto& [name, value] : parameters) {
      if (name == "x_unit") options.x_unit = value;
      else if (name == "y_unit") options.y_unit = value;
      else if (name == "x_column") options.x_column = value;
      else if (name == "y_column") options.y_column = value;
      else if (name == "error_column") options.error_column = value;
    }
    const api::Table table = api::read_table(body);
    api::FitRequest request;
    request.spectrum = api::table_to_spectrum(table, options);
    (void)api::table_to_request(table, options);
    fuzz::prepare_like_fit_outcome(std::move(request), fuzz::kServerLimits);
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  } catch (const InputError& e) {
    fuzz::check_problem(api::problem_for(e).problem());
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > fuzz::kMaxBodyBytes) return -1;
  const fuzz::QueryAndBody input = fuzz::split_query(fuzz::as_text(data, size));
  if (input.too_long) return -1;
  try {
    (void)api::choose_fit_representation(input.format, "");
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  const bool photometry = api::is_photometry_table(input.body);
  if (rows_if_readable(input.body, photometry) >= 2) {
    try {
      (void)api::fit_table_outcome(input.body, input.parameters, fuzz::kStopBeforeFit);
      __builtin_trap();  // two or more points passed a limit of one: the limit is not applied
    } catch (const api::ProblemError& e) {
      fuzz::check_problem(e.problem());
    }
  }
  prepare(input.body, photometry, input.parameters);
  return 0;
}
