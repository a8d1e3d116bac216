// Profile-likelihood intervals (science/profile_likelihood.h): against the covariance on a nearly
// linear problem, one-sided limits on the Rayleigh-Jeans side, and the asymmetry on the Wien side.
#include <gtest/gtest.h>

#include <cmath>

#include "science/model_fit.h"
#include "science/planck.h"
#include "science/profile_likelihood.h"
#include "test_support.h"

namespace planckton {
namespace {

using testing::simulate_spectrum;

struct Profiled {
  ModelData data;
  ModelFitResult fit;
  ProfileResult profile;
};

Profiled profile_of(double t, double lo_um, double hi_um, int n, double noise, unsigned seed) {
  Profiled out;
  out.data = model_data(simulate_spectrum([t](double nu) { return 1e-18 * planck_per_frequency(nu, t); }, lo_um, hi_um, n,
                                          noise, seed));
  out.fit = fit_model(out.data, {}, {});
  const ModelPosterior posterior(out.data, out.fit, {});
  out.profile = profile_intervals(posterior, out.fit);
  return out;
}

TEST(ProfileLikelihood, EqualsTheCovarianceIntervalOnANearlyLinearProblem) {
  // High signal-to-noise, peak well inside the data: the profile is quadratic and its Delta = 1
  // crossings sit one covariance sigma from the best fit (the test, to 2 %).
  const Profiled p = profile_of(6000.0, 0.2, 3.0, 400, 0.001, 1);
  for (std::size_t i = 0; i < p.fit.free.size(); ++i) {
    const FittedParameter& fp = p.fit.parameters[p.fit.free[i]];
    const ProfileBounds& b = p.profile.parameters[i];
    ASSERT_TRUE(b.lower[0] && b.upper[0] && b.lower[1] && b.upper[1]) << fp.info.name;
    const double sigma = *fp.internal_sigma;
    EXPECT_NEAR((fp.internal - *b.lower[0]) / sigma, 1.0, 0.02) << fp.info.name;
    EXPECT_NEAR((*b.upper[0] - fp.internal) / sigma, 1.0, 0.02) << fp.info.name;
    EXPECT_NEAR((*b.upper[1] - fp.internal) / sigma, 2.0, 0.04) << fp.info.name;
    EXPECT_FALSE(b.lower_open || b.upper_open);
    // The point kept for each crossing is the profile's minimiser there (the parameter at the
    // crossing), which derived quantities are evaluated at.
    for (std::size_t level = 0; level < 2; ++level) {
      ASSERT_EQ(b.points[level].size(), 2u);
      EXPECT_EQ(b.points[level][0][i], *b.lower[level]) << fp.info.name << " " << level;
      EXPECT_EQ(b.points[level][1][i], *b.upper[level]) << fp.info.name << " " << level;
    }
  }
  EXPECT_FALSE(p.profile.minimum_moved);
}

TEST(ProfileLikelihood, RayleighJeansDataGiveALowerLimitOnlyAndThePeakClosesIt) {
  // 8000 K seen only at 30-300 um (x < 0.06): the curve's shape hardly depends on T.
  const Profiled rj = profile_of(8000.0, 30.0, 300.0, 20, 0.03, 2);
  const ProfileBounds& t = rj.profile.parameters[0];
  EXPECT_TRUE(t.upper_open);
  EXPECT_FALSE(t.upper[1].has_value());
  ASSERT_TRUE(t.lower[0].has_value());
  EXPECT_LT(std::exp(*t.lower[0]), 8000.0 * 1.5);
  // The same source with the peak in the data: a closed interval around the truth.
  const Profiled peak = profile_of(8000.0, 0.2, 20.0, 80, 0.02, 2);
  const ProfileBounds& closed = peak.profile.parameters[0];
  ASSERT_TRUE(closed.lower[0] && closed.upper[0]);
  EXPECT_FALSE(closed.upper_open || closed.lower_open);
  EXPECT_LT(std::exp(*closed.lower[1]), 8000.0);
  EXPECT_GT(std::exp(*closed.upper[1]), 8000.0);
}

TEST(ProfileLikelihood, WienSideIntervalsAreAsymmetric) {
  // 3000 K seen at 0.3-0.6 um only (x from 8 to 16), few points, 30 % noise: in ln T the profile
  // rises faster towards low temperatures (the Wien tail falls as exp(-h nu / k T)).
  const Profiled p = profile_of(3000.0, 0.3, 0.6, 8, 0.3, 3);
  const ProfileBounds& t = p.profile.parameters[0];
  ASSERT_TRUE(t.lower[1] && t.upper[1]);
  const double u = p.fit.parameters[0].internal;
  const double below = u - *t.lower[1], above = *t.upper[1] - u;
  EXPECT_GT((above - below) / (below + above), 0.02) << below << " " << above;
}

TEST(ProfileLikelihood, DerivedQuantityOfOneParameterSpansItsProfileAndOpensWithIt) {
  // A quantity monotone in T alone (here T itself, as a Planck peak is) spans T's profile interval.
  const Profiled p = profile_of(5000.0, 0.3, 2.0, 100, 0.01, 4);
  const std::vector<double> best = {p.fit.parameters[0].internal, p.fit.parameters[1].internal};
  const auto t = [](const std::vector<double>& x) { return std::exp(x[0]); };
  const QuantityProfile q = profile_quantity(p.profile, best, t, {std::nullopt, std::nullopt});
  EXPECT_NEAR(q.intervals[0][0], std::exp(*p.profile.parameters[0].lower[0]), 1e-9 * 5000.0);
  EXPECT_NEAR(q.intervals[1][1], std::exp(*p.profile.parameters[0].upper[1]), 1e-9 * 5000.0);
  EXPECT_FALSE(q.lower_open || q.upper_open);
  // A combination of parameters is widened to at least its linearised interval (the points' range
  // alone would under-cover it).
  const QuantityProfile wide = profile_quantity(p.profile, best, t, {std::array<double, 2>{4000.0, 6000.0}, std::nullopt});
  EXPECT_EQ(wide.intervals[0][0], 4000.0);
  EXPECT_EQ(wide.intervals[0][1], 6000.0);
  // On the Rayleigh-Jeans side T's upper side is open, and so is the quantity's.
  const Profiled rj = profile_of(8000.0, 30.0, 300.0, 20, 0.03, 2);
  const QuantityProfile open = profile_quantity(rj.profile, {rj.fit.parameters[0].internal, rj.fit.parameters[1].internal},
                                                t, {std::nullopt, std::nullopt});
  EXPECT_TRUE(open.upper_open);
  EXPECT_TRUE(std::isnan(open.intervals[1][1]));
  EXPECT_TRUE(std::isfinite(open.intervals[1][0]));
}

}  // namespace
}  // namespace planckton
