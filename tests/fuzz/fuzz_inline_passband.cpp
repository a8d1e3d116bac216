// A passband given as a curve of one's own (the "band" of a photometry measurement as an object:
// id, wavelength, wavelength_unit, response, detector). The input is that object; the target puts it
// in a measurement of two (the fewest a fit takes) and reads it as parse_fit_request does
// (parse_photometry checks the curve with make_passband), then integrates it (prepare_photometry)
// and takes the curve's pivot wavelength, width and support, as the response document reports them.
#include "fuzz_support.h"

#include "api/json_reader.h"
#include "api/photometry_request.h"
#include "science/passband.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;
  const std::string text = "[{\"band\": " + std::string(fuzz::as_text(data, size)) +
                           "\n, \"value\": 1.5, \"error\": 0.1, \"unit\": \"mJy\"},"
                           " {\"band\": \"2mass-j\", \"value\": 2.5, \"error\": 0.1, \"unit\": \"mJy\"}]";
  try {
    const auto root = api::json_reading::parse_text(text);
    const api::PhotometryRequest photometry = api::json_reading::parse_photometry(root);
    for (const auto& band : photometry.inline_bands) {
      (void)pivot_wavelength(*band);
      (void)effective_width(*band);
      (void)response_support(*band);
    }
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
