// The "model" member of a fit request (api/model_request.h): kind, opacity, reference frequency, dust
// opacity, sizes, extinction, redshift and parameter control, read by json_reading::parse_model as
// parse_fit_request reads it; then the model's parameter list, which every fit of the family starts
// from. The input is the member's value, e.g. {"kind": "modified_black_body", "opacity": "thin"}.
#include "fuzz_support.h"

#include "api/json_reader.h"
#include "api/model_request.h"
#include "science/model.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;
  try {
    const auto root = api::json_reading::parse_text(fuzz::as_text(data, size));
    const api::ModelRequest model = api::json_reading::parse_model(root);
    (void)model.plain();
    (void)model_kind_name(model.spec.kind);
    try {
      (void)model_parameters(model.spec);
    } catch (const InputError& e) {
      fuzz::check_problem(api::problem_for(e).problem());
    }
  } catch (const api::ProblemError& e) {
    fuzz::check_problem(e.problem());
  }
  return 0;
}
