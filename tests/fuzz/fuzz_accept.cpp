// How POST /v1/fit chooses its representation (api/fit_representation.h): the `format` query
// parameter and the Accept header (RFC 9110 media ranges with weights).
//
// Input: "FORMAT\nACCEPT" gives both; without a newline the input is the Accept header alone (no
// format parameter), as most requests are.
#include "fuzz_support.h"

#include "api/fit_representation.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > 8192) return -1;  // httplib refuses longer header lines (CPPHTTPLIB_HEADER_MAX_LENGTH)
  const std::string_view text = fuzz::as_text(data, size);
  const std::size_t newline = text.find('\n');
  std::optional<std::string> format;
  std::string_view accept = text;
  if (newline != std::string_view::npos) {
    format = std::string(text.substr(0, newline));
    accept = text.substr(newline + 1);
  }
  (void)api::representation_of_accept(accept);
  try {
    if (format) (void)api::representation_of_format(*format);
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  try {
    const api::FitRepresentation chosen = api::choose_fit_representation(format, accept);
    (void)api::media_type_of(chosen);
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  return 0;
}
