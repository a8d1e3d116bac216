// Where black-body curves peak (science/peaks.h).
#include <gtest/gtest.h>

#include <cmath>
#include <functional>
#include <set>
#include <stdexcept>
#include <string>

#include "science/constants.h"
#include "science/peaks.h"
#include "science/planck.h"
#include "test_support.h"

namespace {

namespace k = planckton::constants;

using planckton::testing::RelativelyNear;

TEST(Peaks, ReducedFrequenciesOfTheCommonConventions) {
  // from memory: x = n + W(-n e^-n), the Lambert-W solutions of n (1 - e^-x) = x
  EXPECT_TRUE(RelativelyNear(planckton::peak_reduced_frequency(3.0), 2.821439372122079, 1e-12));
  EXPECT_TRUE(RelativelyNear(planckton::peak_reduced_frequency(5.0), 4.965114231744276, 1e-12));
  EXPECT_TRUE(RelativelyNear(planckton::peak_reduced_frequency(4.0), 3.920690394872886, 1e-12));
  EXPECT_TRUE(RelativelyNear(planckton::peak_reduced_frequency(2.0), 1.593624260040040, 1e-12));
}

TEST(Peaks, RootSatisfiesThePeakEquation) {
  for (double n : {1.5, 2.7, 3.0, 4.8, 5.0, 7.3}) {
    const double x = planckton::peak_reduced_frequency(n);
    EXPECT_GT(x, 0.0) << n;  // the positive root, not the trivial x = 0
    EXPECT_LT(x, n) << n;    // from memory: the root lies in (0, n) since f(n) = n e^-n > 0
    EXPECT_NEAR(n * (1.0 - std::exp(-x)), x, 1e-14 * x) << n;  // from the definition in peaks.h
  }
}

TEST(Peaks, RootIsAMaximumOfTheCurve) {
  // x^n / (e^x - 1) is larger at the root than slightly to either side (from the definition).
  for (double n : {1.5, 3.0, 5.0, 7.3}) {
    const double x = planckton::peak_reduced_frequency(n);
    const auto f = [n](double v) { return std::pow(v, n) / std::expm1(v); };
    EXPECT_GT(f(x), f(x * (1 - 1e-4))) << n;
    EXPECT_GT(f(x), f(x * (1 + 1e-4))) << n;
  }
}

TEST(Peaks, NoInteriorMaximumForExponentAtMostOne) {
  for (double n : {1.0, 0.5, 0.0, -2.0, std::nan("")}) {
    EXPECT_THROW(planckton::peak_reduced_frequency(n), std::domain_error) << n;  // peaks.h contract
  }
  EXPECT_THROW(planckton::peak_reduced_frequency(HUGE_VAL), std::domain_error);  // peaks.h: non-finite n
}

TEST(Peaks, RuleOfThumbValues) {
  // common practice: h nu_max / kT ~ 2.82, lambda_max T ~ 2898 um K
  EXPECT_NEAR(planckton::peak_reduced_frequency(3.0), 2.82, 0.005);
  const double b_um_k = planckton::wien_wavelength_constant() * 1e6;
  EXPECT_NEAR(b_um_k, 2897.77, 0.01);
  EXPECT_NEAR(b_um_k, 2898.0, 0.5);
}

TEST(Peaks, FrequencyAndWavelengthScaleWithTemperature) {
  for (double t : {2.725, 300.0, 5772.0, 3e4}) {
    // from the definitions in peaks.h
    EXPECT_TRUE(RelativelyNear(planckton::peak_frequency(3.0, t), planckton::wien_frequency_constant() * t, 1e-14));
    EXPECT_TRUE(RelativelyNear(planckton::peak_wavelength(5.0, t), planckton::wien_wavelength_constant() / t, 1e-14));
    EXPECT_TRUE(RelativelyNear(planckton::peak_frequency(4.0, t) * planckton::peak_wavelength(4.0, t),
                               k::kSpeedOfLight, 1e-14));
  }
}

// The argument of the maximum of f over [lo, hi], by repeated zooming of a log-spaced grid.
double brute_force_argmax(const std::function<double(double)>& f, double lo, double hi) {
  constexpr int kNodes = 2001;
  for (int round = 0; round < 6; ++round) {
    int best = 0;
    double best_value = -1.0;
    const double ratio = std::log(hi / lo) / (kNodes - 1);
    for (int i = 0; i < kNodes; ++i) {
      const double v = f(lo * std::exp(ratio * i));
      if (v > best_value) {
        best_value = v;
        best = i;
      }
    }
    const double new_lo = lo * std::exp(ratio * std::max(best - 1, 0));
    const double new_hi = lo * std::exp(ratio * std::min(best + 1, kNodes - 1));
    lo = new_lo;
    hi = new_hi;
  }
  return std::sqrt(lo * hi);
}

TEST(Peaks, BruteForceMaximumOfBLambda) {
  for (double t : {50.0, 300.0, 5772.0, 3e4}) {
    const double found = brute_force_argmax(
        [t](double lambda) { return planckton::planck_per_wavelength(lambda, t); }, 1e-9, 1.0);
    EXPECT_TRUE(RelativelyNear(found, planckton::peak_wavelength(5.0, t), 1e-6)) << "T=" << t;  // from the definition
  }
}

TEST(Peaks, BruteForceMaximumOfBNu) {
  for (double t : {50.0, 300.0, 5772.0, 3e4}) {
    const double found = brute_force_argmax(
        [t](double nu) { return planckton::planck_per_frequency(nu, t); }, 1e8, 1e18);
    EXPECT_TRUE(RelativelyNear(found, planckton::peak_frequency(3.0, t), 1e-6)) << "T=" << t;  // from the definition
  }
}

TEST(Peaks, BruteForceMaximumOfPhotonCurves) {
  const double t = 5772.0;
  const double lambda = brute_force_argmax(
      [t](double l) { return planckton::photon_radiance_per_wavelength(l, t); }, 1e-9, 1.0);
  EXPECT_TRUE(RelativelyNear(lambda, planckton::peak_wavelength(4.0, t), 1e-6));  // from the definition
  const double nu = brute_force_argmax(
      [t](double f) { return planckton::photon_radiance_per_frequency(f, t); }, 1e8, 1e18);
  EXPECT_TRUE(RelativelyNear(nu, planckton::peak_frequency(2.0, t), 1e-6));  // from the definition
}

TEST(Peaks, ReportedConventions) {
  const auto conventions = planckton::peak_conventions();
  std::set<std::string> ids;
  for (const auto& c : conventions) {
    ids.insert(std::string(c.id));
    EXPECT_GT(c.exponent, 1.0) << c.id;
    EXPECT_FALSE(c.description.empty()) << c.id;
  }
  EXPECT_EQ(ids.size(), conventions.size());  // ids are distinct keys of the response
  // The two the response must carry (fit_response.h); B_nu reported as a frequency, B_lambda as a wavelength.
  bool saw_frequency = false, saw_wavelength = false;
  for (const auto& c : conventions) {
    if (c.id == "frequency") {
      saw_frequency = true;
      EXPECT_EQ(c.exponent, 3.0);
      EXPECT_FALSE(c.reported_as_wavelength);
    }
    if (c.id == "wavelength") {
      saw_wavelength = true;
      EXPECT_EQ(c.exponent, 5.0);
      EXPECT_TRUE(c.reported_as_wavelength);
    }
  }
  EXPECT_TRUE(saw_frequency);
  EXPECT_TRUE(saw_wavelength);
}

}  // namespace
