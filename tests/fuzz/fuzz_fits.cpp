// POST /v1/fit with Content-Type application/fits (`planckton fit file.fits`): FITS images and tables,
// spectra and band measurements, read from memory by api::read_fits through cfitsio, with the query
// parameters hdu, x_column, y_column, error_column, error_hdu, x_unit, y_unit (and the model and
// options ones).
//
// Input: an optional query line ("?hdu=1&x_unit=nm", as in fuzz_table.cpp), then the file's bytes.
// The file is read as the service reads it; when it holds two or more points, the service's call,
// api::fit_fits_outcome, runs with a limit of one point, so that it reads, checks and refuses (413) the
// file where the fit would start. Then what the limit stopped: the content prepared as fit_outcome does.
#include "fuzz_support.h"

#include "api/fit_request.h"
#include "api/fits_reader.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;
  const fuzz::QueryAndBody input = fuzz::split_query(fuzz::as_text(data, size));
  if (input.too_long) return -1;
  api::FitsOptions options;
  for (const auto& [name, value] : input.parameters) {
    if (name == "hdu") options.hdu = value;
    else if (name == "x_column") options.x_column = value;
    else if (name == "y_column") options.y_column = value;
    else if (name == "error_column") options.error_column = value;
    else if (name == "error_hdu") options.error_hdu = value;
    else if (name == "x_unit") options.x_unit = value;
    else if (name == "y_unit") options.y_unit = value;
  }
  try {
    const api::FitsContent content = api::read_fits(input.body, options);
    const std::size_t points = content.spectrum ? content.spectrum->x.size() : content.photometry->size();
    if (points >= 2) {
      try {
        (void)api::fit_fits_outcome(input.body, input.parameters, fuzz::kStopBeforeFit);
        __builtin_trap();  // two or more points passed a limit of one
      } catch (const api::ProblemError& e) {
        fuzz::check_problem(e.problem());
      }
    }
    if (content.spectrum) {
      api::FitRequest request;
      request.spectrum = *content.spectrum;
      fuzz::prepare_like_fit_outcome(std::move(request), fuzz::kServerLimits);
    } else {
      nlohmann::json document;
      document["photometry"] = *content.photometry;
      fuzz::prepare_like_fit_outcome(api::parse_fit_request(document), fuzz::kServerLimits);
    }
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  return 0;
}
