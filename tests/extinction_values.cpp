// planckton-extinction-values: a test tool that prints planckton's extinction laws
// (core/science/extinction.h) for the reference check in tests/reference/test_extinction_laws.py,
// which compares them with python3-extinction. Argument (optional): the number of log-spaced
// wavelengths per law and R_V (default 2000, at least 2). Writes one JSON document on standard output:
//   {"laws": [{"id", "citation", "min_wavelength_m", "max_wavelength_m", "default_r_v", "r_v",
//              "wavelengths_m": [...], "ratio": [...],
//              "edge_probes": [{"wavelength_m", "accepted", "ratio", "error"}]}]}
// one entry per law and R_V (2.5, 3.1, 4.0, 5.5 for the Milky Way laws; 4.05 and 3.1 for Calzetti 2000).
// The grid runs from the law's minimum to its maximum wavelength, both included, and adds the points
// 1e-9 relative either side of each place where the law changes formula (so that the reference sees
// which side each boundary's neighbours fall on; the boundaries themselves are left out, since there
// one ulp of difference in 1 / lambda between two programs can pick a different piece). The edge
// probes are the range ends, 1e-9 relative outside them, and a factor of two outside them: "accepted"
// says whether extinction_ratio returned ("ratio") or threw InputError ("error", its message).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "science/extinction.h"
#include "science/input_error.h"

namespace {

using planckton::ExtinctionLaw;
using planckton::ExtinctionLawInfo;

// A double as JSON: %.17g round-trips; JSON has no inf or NaN, so those become null.
void print_number(double value) {
  if (std::isfinite(value)) {
    std::printf("%.17g", value);
  } else {
    std::printf("null");
  }
}

void print_string(const std::string& text) {
  std::putchar('"');
  for (const char ch : text) {
    if (ch == '"' || ch == '\\') {
      std::printf("\\%c", ch);
    } else if (static_cast<unsigned char>(ch) < 0x20) {
      std::printf("\\u%04x", static_cast<unsigned>(ch));
    } else {
      std::putchar(ch);
    }
  }
  std::putchar('"');
}

void print_array(const std::vector<double>& values) {
  std::printf("[");
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (i > 0) std::printf(", ");
    print_number(values[i]);
  }
  std::printf("]");
}

// Wavelengths (m) where the law switches formula (see extinction.cpp).
std::vector<double> formula_boundaries_m(ExtinctionLaw law) {
  switch (law) {
    case ExtinctionLaw::kCardelli1989:
    case ExtinctionLaw::kODonnell1994:
      return {1e-6 / 1.1, 1e-6 / 3.3, 1e-6 / 5.9, 1e-6 / 8.0};  // CCM89 eqs. 2/3, 3/4, F_a/F_b, 4/5
    case ExtinctionLaw::kFitzpatrick1999:
      // Spline knots (26500, 12200, 6000, 5470, 4670, 4110 A), the spline/FM90 switch (2700 A) and
      // FM90's far-UV curvature (x = 5.9 um^-1).
      return {26500e-10, 12200e-10, 6000e-10, 5470e-10, 4670e-10, 4110e-10, 2700e-10, 1e-6 / 5.9};
    case ExtinctionLaw::kCalzetti2000:
      return {0.63e-6};  // Calzetti et al. 2000 eq. 4, blue and red halves
  }
  return {};
}

std::vector<double> grid_m(const ExtinctionLawInfo& info, int points) {
  std::vector<double> grid;
  const double lo = std::log(info.min_wavelength_m);
  const double hi = std::log(info.max_wavelength_m);
  grid.push_back(info.min_wavelength_m);
  for (int i = 1; i + 1 < points; ++i) grid.push_back(std::exp(lo + (hi - lo) * i / (points - 1)));
  grid.push_back(info.max_wavelength_m);
  for (const double b : formula_boundaries_m(info.law)) {
    grid.push_back(b * (1.0 - 1e-9));
    grid.push_back(b * (1.0 + 1e-9));
  }
  std::sort(grid.begin(), grid.end());
  return grid;
}

void print_edge_probes(const ExtinctionLawInfo& info, double r_v) {
  const double probes[] = {info.min_wavelength_m * 0.5, info.min_wavelength_m * (1.0 - 1e-9), info.min_wavelength_m,
                           info.max_wavelength_m,       info.max_wavelength_m * (1.0 + 1e-9), info.max_wavelength_m * 2.0};
  std::printf("[");
  bool first = true;
  for (const double w : probes) {
    std::printf("%s{\"wavelength_m\": ", first ? "" : ", ");
    first = false;
    print_number(w);
    try {
      const double ratio = planckton::extinction_ratio(info.law, w, r_v);
      std::printf(", \"accepted\": true, \"ratio\": ");
      print_number(ratio);
      std::printf(", \"error\": null}");
    } catch (const planckton::InputError& e) {
      std::printf(", \"accepted\": false, \"ratio\": null, \"error\": ");
      print_string(e.what());
      std::printf("}");
    }
  }
  std::printf("]");
}

void print_entry(const ExtinctionLawInfo& info, double r_v, int points) {
  const std::vector<double> grid = grid_m(info, points);
  std::vector<double> ratio;
  ratio.reserve(grid.size());
  for (const double w : grid) ratio.push_back(planckton::extinction_ratio(info.law, w, r_v));
  std::printf("{\"id\": ");
  print_string(info.id);
  std::printf(", \"citation\": ");
  print_string(info.citation);
  std::printf(", \"min_wavelength_m\": ");
  print_number(info.min_wavelength_m);
  std::printf(", \"max_wavelength_m\": ");
  print_number(info.max_wavelength_m);
  std::printf(", \"default_r_v\": ");
  print_number(info.default_r_v);
  std::printf(", \"r_v\": ");
  print_number(r_v);
  std::printf(",\n   \"wavelengths_m\": ");
  print_array(grid);
  std::printf(",\n   \"ratio\": ");
  print_array(ratio);
  std::printf(",\n   \"edge_probes\": ");
  print_edge_probes(info, r_v);
  std::printf("}");
}

}  // namespace

int main(int argc, char** argv) {
  int points = 2000;
  if (argc > 2) {
    std::fprintf(stderr, "usage: planckton-extinction-values [POINTS]\n");
    return 2;
  }
  if (argc == 2) {
    char* end = nullptr;
    const long n = std::strtol(argv[1], &end, 10);
    if (end == argv[1] || *end != '\0' || n < 2 || n > 1000000) {
      std::fprintf(stderr, "planckton-extinction-values: not a number of points from 2 to 1000000: %s\n", argv[1]);
      return 2;
    }
    points = static_cast<int>(n);
  }

  std::printf("{\"laws\": [");
  bool first = true;
  for (const ExtinctionLawInfo& info : planckton::extinction_laws()) {
    const bool calzetti = info.law == ExtinctionLaw::kCalzetti2000;
    const std::vector<double> r_vs = calzetti ? std::vector<double>{4.05, 3.1} : std::vector<double>{2.5, 3.1, 4.0, 5.5};
    for (const double r_v : r_vs) {
      std::printf("%s\n  ", first ? "" : ",");
      first = false;
      print_entry(info, r_v, points);
    }
  }
  std::printf("\n]}\n");
  return 0;
}
