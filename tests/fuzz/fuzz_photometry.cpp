// The "photometry" member of a fit request (api/photometry_request.h): band measurements with shipped
// bands or inline curves, magnitudes and flux densities, zero points, quoted conventions, upper
// limits; read by json_reading::parse_photometry as parse_fit_request reads it, then prepared in SI
// (science/photometry.h prepare_photometry: units, zero points, band quadratures) as fit_outcome does.
// The input is the member's value, a JSON array.
#include "fuzz_support.h"

#include "api/json_reader.h"
#include "api/photometry_request.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;
  try {
    const auto root = api::json_reading::parse_text(fuzz::as_text(data, size));
    const api::PhotometryRequest photometry = api::json_reading::parse_photometry(root);
    try {
      (void)prepare_photometry(photometry.input);
    } catch (const InputError& e) {
      fuzz::check_problem(api::problem_for(e).problem());
    }
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  return 0;
}
