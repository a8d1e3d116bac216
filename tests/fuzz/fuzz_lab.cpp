// The laboratory documents (api/lab_documents.h): POST /v1/light (a light source's spectral power
// distribution: chromaticity, correlated colour temperature, distribution temperature) and
// POST /v1/hot-body (a radiance spectrum: grey-body fit, radiance and ratio temperatures). The input
// is one JSON document, given to both, as a client may post it to either.
//
// These two entry points read and compute in one call, and a document that is read is fitted: the
// target calls them with the service's limits made small (at most 256 points, a time budget of
// 0.05 s) so that one input costs milliseconds at most; larger spectra are refused (413) as the
// service refuses them beyond its own limit.
#include "fuzz_support.h"

#include "api/lab_documents.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;
  static const api::ServiceLimits kLabLimits{256, 0.05};
  const std::string_view text = fuzz::as_text(data, size);
  try {
    if (fuzz::json_text(api::light_source_text(text, kLabLimits)).empty()) __builtin_trap();
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  try {
    if (fuzz::json_text(api::hot_body_text(text, kLabLimits)).empty()) __builtin_trap();
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  return 0;
}
