// planckton-synthetic-photometry-values: a test tool that prints planckton's synthetic photometry of
// black bodies through every shipped band, for the reference check in tests/reference (which
// compares it with python3-synphot). Arguments: temperatures in K (default 15 30 60 150 500 1500
// 3000 5800 10000 30000). Writes one JSON document on standard output, SI units throughout:
//   {"temperatures_k": [...], "underflow_x": 600, "bands": [{"id", "detector", "pivot_wavelength_m",
//    "support_m": [lo, hi], "samples", "quoted": {"kind", "reference_wavelength_m", "reference",
//    "power_law_index", "reference_temperature_k"}, "quoted_wavelength_m",
//    "values": [{"temperature_k", "x_pivot", "underflow", "f_nu_band_average" (<F_nu> of B_nu(T),
//    W m^-2 Hz^-1 sr^-1), "f_lambda_band_average" (c / pivot^2 <F_nu>, W m^-2 m^-1 sr^-1),
//    "f_nu_quoted" (in the band's own convention), "b_nu_pivot" (B_nu at the pivot)}]}]}
// Where x = h c / (pivot k T) > 600 the band values underflow: "underflow" is true and the values
// are null.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <vector>

#include "science/constants.h"
#include "science/passband.h"
#include "science/planck.h"
#include "science/synthetic_photometry.h"

namespace {

constexpr double kUnderflowX = 600.0;

// A double as JSON: %.17g round-trips; JSON has no inf or NaN, so those become null.
void print_number(double value) {
  if (std::isfinite(value)) {
    std::printf("%.17g", value);
  } else {
    std::printf("null");
  }
}

void print_quoted(const planckton::QuotedFlux& quoted) {
  using planckton::QuotedFlux;
  const bool monochromatic = quoted.kind == QuotedFlux::Kind::kMonochromatic;
  std::printf("{\"kind\": \"%s\"", monochromatic ? "monochromatic" : "band_average");
  if (monochromatic) {
    std::printf(", \"reference_wavelength_m\": ");
    print_number(quoted.reference_wavelength_m);
    const bool black_body = quoted.reference == QuotedFlux::Reference::kBlackBody;
    std::printf(", \"reference\": \"%s\"", black_body ? "black_body" : "power_law");
    if (black_body) {
      std::printf(", \"reference_temperature_k\": ");
      print_number(quoted.reference_temperature_k);
    } else {
      std::printf(", \"power_law_index\": ");
      print_number(quoted.power_law_index);
    }
  }
  std::printf("}");
}

}  // namespace

int main(int argc, char** argv) {
  using namespace planckton;
  std::vector<double> temperatures;
  for (int i = 1; i < argc; ++i) {
    char* end = nullptr;
    const double t = std::strtod(argv[i], &end);
    if (end == argv[i] || *end != '\0' || !std::isfinite(t) || !(t > 0.0)) {
      std::fprintf(stderr, "planckton-synthetic-photometry-values: not a positive temperature in K: %s\n", argv[i]);
      return 2;
    }
    temperatures.push_back(t);
  }
  if (temperatures.empty()) temperatures = {15, 30, 60, 150, 500, 1500, 3000, 5800, 10000, 30000};

  const double c = constants::kSpeedOfLight;
  std::printf("{\"temperatures_k\": [");
  for (std::size_t i = 0; i < temperatures.size(); ++i) {
    if (i > 0) std::printf(", ");
    print_number(temperatures[i]);
  }
  std::printf("],\n \"underflow_x\": ");
  print_number(kUnderflowX);
  std::printf(",\n \"bands\": [");
  bool first_band = true;
  for (const Passband& band : builtin_passbands()) {
    const BandQuadrature average = make_band_quadrature(band, QuotedFlux{});
    const BandQuadrature quoted = make_band_quadrature(band, band.quoted);
    const double pivot = pivot_wavelength(band);
    const auto [lo, hi] = response_support(band);
    std::printf("%s\n  {\"id\": \"%s\", \"detector\": \"%s\", \"samples\": %zu, \"pivot_wavelength_m\": ",
                first_band ? "" : ",", band.id.c_str(), detector_name(band.detector), band.wavelength_m.size());
    first_band = false;
    print_number(pivot);
    std::printf(", \"support_m\": [");
    print_number(lo);
    std::printf(", ");
    print_number(hi);
    std::printf("],\n   \"quoted\": ");
    print_quoted(band.quoted);
    std::printf(", \"quoted_wavelength_m\": ");
    print_number(quoted.quoted_wavelength_m);
    std::printf(",\n   \"values\": [");
    for (std::size_t i = 0; i < temperatures.size(); ++i) {
      const double t = temperatures[i];
      const double x = constants::kSecondRadiation / (pivot * t);
      const bool underflow = x > kUnderflowX;
      std::printf("%s\n    {\"temperature_k\": ", i > 0 ? "," : "");
      print_number(t);
      std::printf(", \"x_pivot\": ");
      print_number(x);
      std::printf(", \"underflow\": %s", underflow ? "true" : "false");
      if (underflow) {
        std::printf(", \"f_nu_band_average\": null, \"f_lambda_band_average\": null, \"f_nu_quoted\": null, "
                    "\"b_nu_pivot\": null}");
        continue;
      }
      const auto b_nu = [t](double nu) { return planck_per_frequency(nu, t); };
      const double f_nu = average.apply(b_nu);
      std::printf(", \"f_nu_band_average\": ");
      print_number(f_nu);
      std::printf(", \"f_lambda_band_average\": ");
      print_number(c / (pivot * pivot) * f_nu);
      std::printf(", \"f_nu_quoted\": ");
      print_number(quoted.apply(b_nu));
      std::printf(", \"b_nu_pivot\": ");
      print_number(planck_per_frequency(c / pivot, t));
      std::printf("}");
    }
    std::printf("]}");
  }
  std::printf("\n ]}\n");
  return 0;
}
