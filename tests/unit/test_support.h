// Helpers shared by the unit tests.
#pragma once

#include <gtest/gtest.h>

#include <cmath>
#include <functional>
#include <random>

#include "science/spectrum.h"

namespace planckton::testing {

// |actual - expected| <= rel * |expected|, with both values in the failure message.
inline ::testing::AssertionResult RelativelyNear(double actual, double expected, double rel) {
  const double diff = std::abs(actual - expected);
  if (diff <= rel * std::abs(expected)) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "actual " << actual << " expected " << expected
                                       << " relative difference " << diff / std::abs(expected) << " > " << rel;
}

// A spectrum in F_nu (W/m2/Hz) of the source f_nu(nu) (W m^-2 Hz^-1) at n wavelengths from lo to hi
// (um, log-spaced), with Gaussian noise of the given relative size (fixed seed) and its errors.
inline MeasuredSpectrum simulate_spectrum(const std::function<double(double)>& f_nu, double lo_um, double hi_um, int n,
                                          double relative_error, unsigned seed) {
  std::mt19937 random(seed);
  std::normal_distribution<double> normal;
  SpectrumInput input;
  input.x_unit = "um";
  input.y_unit = "W/m2/Hz";
  for (int i = 0; i < n; ++i) {
    const double um = lo_um * std::pow(hi_um / lo_um, static_cast<double>(i) / (n - 1));
    const double f = f_nu(299792458.0 / (um * 1e-6));
    input.x.push_back(um);
    input.y.push_back(f * (1.0 + relative_error * normal(random)));
    input.y_error.push_back(f * relative_error);
  }
  return prepare_spectrum(input);
}

}  // namespace planckton::testing
