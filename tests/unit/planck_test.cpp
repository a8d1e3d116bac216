// Planck's law in every convention (science/planck.h): range, limits, derivative, conventions and
// the integral over frequency.
#include <gtest/gtest.h>

#include <array>
#include <cfloat>
#include <cmath>
#include <numbers>
#include <string>

#include "science/constants.h"
#include "science/planck.h"
#include "test_support.h"

namespace {

using planckton::Convention;
namespace k = planckton::constants;

constexpr std::array<Convention, 8> kAllConventions = {
    Convention::kEnergyPerFrequency,     Convention::kEnergyPerWavelength,
    Convention::kEnergyPerWavenumber,    Convention::kEnergyPerPhotonEnergy,
    Convention::kPhotonsPerFrequency,    Convention::kPhotonsPerWavelength,
    Convention::kPhotonsPerWavenumber,   Convention::kPhotonsPerPhotonEnergy,
};

constexpr std::array<double, 6> kTemperatures = {0.1, 3.0, 300.0, 5772.0, 1e5, 1e8};

using planckton::testing::RelativelyNear;

// Frequency at which h nu / (k T) = x.
double frequency_for(double x, double temperature) { return x * temperature / k::kPlanckOverBoltzmann; }

// log(1 / (e^x - 1)), accurate on both sides.
double log_occupation(double x) { return x > 1.0 ? -x - std::log1p(-std::exp(-x)) : -std::log(std::expm1(x)); }

// (a) A log-spaced sweep over x = h nu / kT from 1e-8 to 1000: the radiance is finite and never
// negative; where its true value (log p - x in the Wien limit, evaluated in logs here) is a normal
// double it is positive and agrees with the log form; 0 (or a subnormal) is accepted only where the
// true value is below DBL_MIN.
TEST(Planck, FiniteAndPositiveOverTheWholeRange) {
  const double log_dbl_min = std::log(DBL_MIN);
  const int steps = 1100;  // 100 points per decade over 11 decades
  for (Convention convention : kAllConventions) {
    for (double temperature : kTemperatures) {
      for (int i = 0; i <= steps; ++i) {
        const double x = std::pow(10.0, -8.0 + 11.0 * i / steps);
        const double nu = frequency_for(x, temperature);
        const double value = planckton::planck_radiance(convention, nu, temperature);
        const double log_true = std::log(planckton::planck_prefactor(convention, nu)) + log_occupation(x);
        SCOPED_TRACE(std::string(planckton::convention_name(convention)) + " T=" + std::to_string(temperature) +
                     " x=" + std::to_string(x));
        ASSERT_FALSE(std::isnan(value));
        ASSERT_TRUE(std::isfinite(value));
        ASSERT_GE(value, 0.0);
        if (log_true > log_dbl_min + 1e-9) {
          ASSERT_GT(value, 0.0);
          // common practice: the log of the value is good to ~1e-16 * |log| plus the rounding of p
          ASSERT_NEAR(std::log(value), log_true, 1e-12 * std::max(1.0, std::abs(log_true)));
        }
      }
    }
  }
}

// The Wien-side log form must keep values that are representable but whose exp(-x) alone is not.
TEST(Planck, DeepWienValueIsNotFlushedToZero) {
  // x = 720 at T = 1e8 K: e^-x ~ 2e-313 is subnormal, but p(nu) ~ 5e13 brings the value to ~1e-299.
  const double temperature = 1e8;
  const double x = 720.0;
  const double nu = frequency_for(x, temperature);
  const double value = planckton::planck_per_frequency(nu, temperature);
  const double log_true = std::log(planckton::planck_prefactor(Convention::kEnergyPerFrequency, nu)) - x;
  ASSERT_GT(log_true, std::log(DBL_MIN));  // the case is meaningful only if the truth is normal
  EXPECT_GT(value, 0.0);
  EXPECT_NEAR(std::log(value), log_true, 1e-12 * std::abs(log_true));  // from the definition
}

// (b) Rayleigh-Jeans limit: for x -> 0, B_nu -> 2 nu^2 k T / c^2, with relative error ~ x / 2.
TEST(Planck, RayleighJeansLimit) {
  for (double temperature : kTemperatures) {
    const double nu = frequency_for(1e-8, temperature);
    const double expected = 2.0 * nu * nu * k::kBoltzmann * temperature / (k::kSpeedOfLight * k::kSpeedOfLight);
    EXPECT_TRUE(RelativelyNear(planckton::planck_per_frequency(nu, temperature), expected, 1e-7))
        << "T=" << temperature;  // from memory: the Rayleigh-Jeans law
  }
}

// Wien limit: B_nu (1 - e^-x) = 2 h nu^3 / c^2 e^-x exactly, and B_nu -> 2 h nu^3 / c^2 e^-x.
TEST(Planck, WienLimit) {
  const double x = 50.0;
  for (double temperature : kTemperatures) {
    const double nu = frequency_for(x, temperature);
    const double wien = 2.0 * k::kPlanck * nu * nu * nu / (k::kSpeedOfLight * k::kSpeedOfLight) * std::exp(-x);
    const double b = planckton::planck_per_frequency(nu, temperature);
    EXPECT_TRUE(RelativelyNear(b * -std::expm1(-x), wien, 1e-13)) << "T=" << temperature;  // from memory: Planck's law
    // e^-50 ~ 2e-22, so the Wien approximation itself is exact to double precision here.
    EXPECT_TRUE(RelativelyNear(b, wien, 1e-13)) << "T=" << temperature;  // from memory: Wien's approximation
  }
}

// (c) The analytic temperature derivative against a central finite difference.
TEST(Planck, TemperatureDerivativeMatchesFiniteDifference) {
  constexpr std::array<double, 8> kXs = {1e-6, 1e-3, 0.1, 1.0, 2.82, 10.0, 50.0, 300.0};
  for (Convention convention : kAllConventions) {
    for (double temperature : {3.0, 5772.0, 1e6}) {
      for (double x : kXs) {
        const double nu = frequency_for(x, temperature);
        // Truncation error ~ (x h / T)^2 / 6 relative; keep it below 1e-8 for every x.
        const double step = temperature * 1e-5 / std::max(1.0, x);
        const double numeric = (planckton::planck_radiance(convention, nu, temperature + step) -
                                planckton::planck_radiance(convention, nu, temperature - step)) /
                               (2.0 * step);
        const double analytic = planckton::planck_radiance_temperature_derivative(convention, nu, temperature);
        EXPECT_TRUE(RelativelyNear(analytic, numeric, 1e-6))
            << planckton::convention_name(convention) << " T=" << temperature << " x=" << x;  // common practice
      }
    }
  }
}

// (d) The conventions are one curve under changes of variable (|d nu/d lambda| = nu^2/c,
// d nu/d sigma = c, d nu/dE = 1/h) and, for photons, division by h nu.
TEST(Planck, ConventionsAreConsistent) {
  const double c = k::kSpeedOfLight;
  const double h = k::kPlanck;
  for (double temperature : kTemperatures) {
    for (double x : {1e-6, 0.01, 1.0, 3.0, 20.0, 200.0}) {
      const double nu = frequency_for(x, temperature);
      SCOPED_TRACE("T=" + std::to_string(temperature) + " x=" + std::to_string(x));
      const auto B = [&](Convention conv) { return planckton::planck_radiance(conv, nu, temperature); };
      const double b_nu = B(Convention::kEnergyPerFrequency);
      const double b_lambda = B(Convention::kEnergyPerWavelength);
      const double b_sigma = B(Convention::kEnergyPerWavenumber);
      const double b_e = B(Convention::kEnergyPerPhotonEnergy);
      // from memory: change of spectral variable
      EXPECT_TRUE(RelativelyNear(b_lambda, b_nu * nu * nu / c, 1e-13));
      EXPECT_TRUE(RelativelyNear(b_sigma, c * b_nu, 1e-13));
      EXPECT_TRUE(RelativelyNear(b_e, b_nu / h, 1e-13));
      // from memory: photon number = energy / (h nu)
      const double photon_energy = h * nu;
      EXPECT_TRUE(RelativelyNear(B(Convention::kPhotonsPerFrequency), b_nu / photon_energy, 1e-13));
      EXPECT_TRUE(RelativelyNear(B(Convention::kPhotonsPerWavelength), b_lambda / photon_energy, 1e-13));
      EXPECT_TRUE(RelativelyNear(B(Convention::kPhotonsPerWavenumber), b_sigma / photon_energy, 1e-13));
      EXPECT_TRUE(RelativelyNear(B(Convention::kPhotonsPerPhotonEnergy), b_e / photon_energy, 1e-13));
    }
  }
}

// The convenience forms take their own spectral variable.
TEST(Planck, ConvenienceFormsUseTheirOwnVariable) {
  const double c = k::kSpeedOfLight;
  const double temperature = 5772.0;
  const double nu = 5.4e14;
  using planckton::planck_radiance;
  EXPECT_TRUE(RelativelyNear(planckton::planck_per_wavelength(c / nu, temperature),
                             planck_radiance(Convention::kEnergyPerWavelength, nu, temperature), 1e-14));
  EXPECT_TRUE(RelativelyNear(planckton::planck_per_wavenumber(nu / c, temperature),
                             planck_radiance(Convention::kEnergyPerWavenumber, nu, temperature), 1e-14));
  EXPECT_TRUE(RelativelyNear(planckton::planck_per_photon_energy(k::kPlanck * nu, temperature),
                             planck_radiance(Convention::kEnergyPerPhotonEnergy, nu, temperature), 1e-14));
  EXPECT_TRUE(RelativelyNear(planckton::photon_radiance_per_frequency(nu, temperature),
                             planck_radiance(Convention::kPhotonsPerFrequency, nu, temperature), 1e-14));
  EXPECT_TRUE(RelativelyNear(planckton::photon_radiance_per_wavelength(c / nu, temperature),
                             planck_radiance(Convention::kPhotonsPerWavelength, nu, temperature), 1e-14));
}

// A value worked by hand from the definition: B_lambda(500 nm, 5772 K).
TEST(Planck, HandComputedValue) {
  const double lambda = 500e-9;
  const double temperature = 5772.0;
  const double c = k::kSpeedOfLight;
  const double x = k::kPlanck * c / (lambda * k::kBoltzmann * temperature);
  const double expected = 2.0 * k::kPlanck * c * c / std::pow(lambda, 5) / std::expm1(x);  // from memory: Planck's law
  EXPECT_TRUE(RelativelyNear(planckton::planck_per_wavelength(lambda, temperature), expected, 1e-13));
  EXPECT_TRUE(RelativelyNear(expected, 2.6e13, 0.05));  // order of magnitude quoted in planck.h's example
}

// (e) Stefan-Boltzmann: the integral of pi B_nu over frequency is sigma T^4. With nu = x k T / h the
// integral runs over x; composite Simpson on [1e-6, 60] (the tails hold < 1e-18 of the total).
TEST(Planck, IntegralOverFrequencyIsStefanBoltzmann) {
  const double pi = std::numbers::pi;
  for (double temperature : {300.0, 5772.0, 1e5}) {
    const double lo = 1e-6, hi = 60.0;
    const int intervals = 60000;  // even
    const double dx = (hi - lo) / intervals;
    double sum = 0.0;
    for (int i = 0; i <= intervals; ++i) {
      const double x = lo + i * dx;
      const double weight = (i == 0 || i == intervals) ? 1.0 : (i % 2 == 1 ? 4.0 : 2.0);
      sum += weight * planckton::planck_per_frequency(frequency_for(x, temperature), temperature);
    }
    const double dnu_dx = temperature / k::kPlanckOverBoltzmann;
    const double integral = pi * sum * dx / 3.0 * dnu_dx;
    const double t4 = temperature * temperature * temperature * temperature;
    EXPECT_TRUE(RelativelyNear(integral, k::kStefanBoltzmann * t4, 1e-8)) << "T=" << temperature;  // from memory: Stefan-Boltzmann law
    EXPECT_TRUE(RelativelyNear(integral, 5.670374419e-8 * t4, 1e-8)) << "T=" << temperature;  // CODATA 2018 sigma
  }
}

TEST(Planck, IntegratedRadianceIsSigmaT4OverPi) {
  for (double temperature : kTemperatures) {
    const double t4 = temperature * temperature * temperature * temperature;
    EXPECT_TRUE(RelativelyNear(planckton::planck_integrated_radiance(temperature),
                               k::kStefanBoltzmann * t4 / std::numbers::pi, 1e-14))
        << "T=" << temperature;  // from memory: L = sigma T^4 / pi for a Lambertian surface
  }
}

TEST(Planck, PeakExponents) {
  // from memory: B_nu ~ x^3, B_lambda ~ x^5, N_lambda ~ x^4, N_nu ~ x^2 times 1/(e^x - 1)
  EXPECT_EQ(planckton::peak_exponent(Convention::kEnergyPerFrequency), 3.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kEnergyPerWavelength), 5.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kEnergyPerWavenumber), 3.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kEnergyPerPhotonEnergy), 3.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kPhotonsPerFrequency), 2.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kPhotonsPerWavelength), 4.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kPhotonsPerWavenumber), 2.0);
  EXPECT_EQ(planckton::peak_exponent(Convention::kPhotonsPerPhotonEnergy), 2.0);
}

TEST(Planck, OccupationIsAccurateForSmallX) {
  // 1/(e^x - 1) = 1/x - 1/2 + x/12 - ... (from memory: series expansion)
  for (double x : {1e-12, 1e-8, 1e-5}) {
    EXPECT_TRUE(RelativelyNear(planckton::bose_einstein_occupation(x), 1.0 / x - 0.5 + x / 12.0, 1e-14)) << x;
  }
}

}  // namespace
