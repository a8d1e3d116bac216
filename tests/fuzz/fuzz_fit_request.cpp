// POST /v1/fit with Content-Type application/json (and `planckton fit request.json`): the request
// document as api::fit_json_outcome reads it (api::parse_fit_request), then what fit_outcome does
// before it fits (fuzz_support.h). Seeds: sample-spectra/*.json and the documents of tests/.
#include "fuzz_support.h"

#include "api/fit_request.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;  // httplib answers 413 before the route runs
  try {
    api::FitRequest request = api::parse_fit_request(fuzz::as_text(data, size));
    fuzz::prepare_like_fit_outcome(std::move(request), fuzz::kServerLimits);
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  return 0;
}
