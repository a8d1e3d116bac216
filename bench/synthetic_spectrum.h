// The fixed synthetic spectrum the benchmarks fit, reproducible bit for bit: a 5,800 K black body
// subtending 6.8e-17 sr, sampled at n wavelengths evenly spaced over 300-2500 nm, in W/m2/nm, with
// 1 % Gaussian noise from a SplitMix64 stream (S. Vigna, 2015; public domain) through the
// Box-Muller transform (Box & Muller, Ann. Math. Stat. 29, 610 (1958)).
#pragma once

#include <cmath>
#include <cstdint>
#include <numbers>

#include "science/planck.h"
#include "science/spectrum.h"

namespace planckton::bench {

inline constexpr double kTrueTemperature = 5800.0;
inline constexpr double kTrueSolidAngle = 6.8e-17;

class SplitMix64 {
 public:
  explicit SplitMix64(std::uint64_t seed) : state_(seed) {}
  double uniform() {  // (0, 1)
    std::uint64_t z = (state_ += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    z ^= z >> 31;
    return (static_cast<double>(z >> 11) + 0.5) * 0x1.0p-53;
  }
  double normal() {
    const double u1 = uniform(), u2 = uniform();
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
  }

 private:
  std::uint64_t state_;
};

inline SpectrumInput synthetic_spectrum(int n) {
  SpectrumInput input;
  input.x_unit = "nm";
  input.y_unit = "W/m2/nm";
  SplitMix64 random(20261201);
  for (int i = 0; i < n; ++i) {
    const double nm = 300.0 + 2200.0 * i / (n - 1);
    const double model = kTrueSolidAngle * planck_per_wavelength(nm * 1e-9, kTrueTemperature) * 1e-9;
    const double sigma = 0.01 * model;
    input.x.push_back(nm);
    input.y.push_back(model + sigma * random.normal());
    input.y_error.push_back(sigma);
  }
  return input;
}

}  // namespace planckton::bench
