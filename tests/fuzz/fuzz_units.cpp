// Unit strings (science/units.h), as every document gives them: x_unit and wavelength_unit (spectral
// axis), y_unit and a measurement's unit (flux density or intensity), options.distance.unit
// (length). The input is the string itself, read as each of the three; a unit that is read converts
// a value both ways, as prepare_spectrum and the response do.
#include "fuzz_support.h"

#include <cmath>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > 4096) return -1;  // a unit is a word; longer strings only repeat what shorter ones test
  const std::string_view text = fuzz::as_text(data, size);
  try {
    const SpectralAxisUnit axis = parse_spectral_axis_unit(text);
    const double nu = to_frequency(axis, 1.0);
    if (std::isfinite(nu) && nu > 0.0) (void)from_frequency(axis, nu);
    (void)axis_is_wavelength_like(axis);
  } catch (const InputError& e) {
    fuzz::check_problem(api::problem_for(e).problem());
  }
  try {
    (void)parse_flux_density_unit(text);
  } catch (const InputError& e) {
    fuzz::check_problem(api::problem_for(e).problem());
  }
  try {
    (void)parse_length_unit(text);
  } catch (const InputError& e) {
    fuzz::check_problem(api::problem_for(e).problem());
  }
  return 0;
}
