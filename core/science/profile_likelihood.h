// Profile-likelihood intervals for every free parameter of a fit, and one-sided limits where the
// data bound a parameter on one side only.
//
// Method. For a parameter theta, the profile is -2 ln p minimised over all the others with theta
// held fixed (ModelPosterior::profile: Levenberg-Marquardt from the others' conditional mean under
// the covariance, best + C_ji / C_ii (theta - best_i)).
// The interval at level L is where the profile rises by Delta above its minimum: Delta = 1 for
// 68.27 % and 4 for 95.45 % (Wilks 1938; e.g. W. A. Rolke, A. M. Lopez & J. Conrad, NIM A 551, 493
// (2005); Press et al., Numerical Recipes, 3rd ed., 15.6.5). Each side steps out from the best fit
// (steps of one covariance sigma, doubling) until the profile has risen by 4 or the parameter's bound
// is reached, then finds each crossing (secant on sqrt(rise), TOMS 748 when it misses: Alefeld, Potra &
// Shi 1995; Boost.Math). A side that reaches its bound before rising is open and no closed interval is
// invented: the interval is the half-line, a confidence set at the same level, whose closed end read
// as a limit holds at the one-sided level (Delta = 1: 84.13 %, Delta = 4: 97.72 %) over repeated
// experiments, though not among the intervals that come out open (Feldman & Cousins 1998).
//
// Derived quantities get the range of their values over the profile points at each threshold (the
// parameter vectors found at the crossings of every parameter, and the best fit): for a quantity that
// is a monotone function of one parameter (a Planck peak of T) this is its profile interval exactly.
// For a quantity that combines parameters that range is narrower than its own profile, so it is
// widened to at least the delta method's interval. An end whose value at an open side's bound lies
// beyond the range is open, as for the parameter.
//
// Example:
//   planckton::ModelPosterior posterior(data, fit, options);
//   planckton::ProfileResult profile = planckton::profile_intervals(posterior, fit);
//   if (profile.parameters[0].upper_open) std::puts("temperature: lower limit only");
#pragma once

#include <array>
#include <cstddef>
#include <functional>
#include <optional>
#include <vector>

#include "science/model_fit.h"

namespace planckton {

inline constexpr std::array<double, 2> kProfileThresholds = {1.0, 4.0};     // Delta(-2 ln p)
inline constexpr std::array<double, 2> kTwoSidedLevels = {0.682689492137086, 0.954499736103642};
inline constexpr std::array<double, 2> kOneSidedLevels = {0.841344746068543, 0.977249868051821};

struct ProfileBounds {
  // Per threshold (68 %, 95 %): the crossings in the solver's space; absent on an open side.
  std::array<std::optional<double>, 2> lower, upper;
  bool lower_open = false;  // the profile did not rise by a threshold before the lower bound
  bool upper_open = false;
  // The free-parameter vectors at the crossings (for derived quantities), per threshold, and on an
  // open side the last point followed (at the bound).
  std::array<std::vector<std::vector<double>>, 2> points;
  std::array<std::vector<std::vector<double>>, 2> open_points;
};

struct ProfileResult {
  std::vector<ProfileBounds> parameters;  // one per free parameter, in fit.free order
  std::vector<std::array<double, 2>> bounds;  // each free parameter's internal bounds
  double minimum = 0.0;                   // -2 ln p at the best fit (after re-minimising)
  std::size_t evaluations = 0;            // profile minimisations
  bool minimum_moved = false;             // a profile found a lower minimum than the fit's
};

ProfileResult profile_intervals(const ModelPosterior& posterior, const ModelFitResult& fit);

// A derived quantity's intervals from the profiles, per threshold (68 %, 95 %): the range of q over
// the crossing points and the best fit, widened to at least `linearised` (the delta method's
// interval, when there is one: the points' range alone is narrower than the profile of a quantity
// that combines parameters), with an end open (NaN) where q at an open side's bound point lies beyond
// it. q takes the free-parameter vector.
struct QuantityProfile {
  std::array<std::array<double, 2>, 2> intervals;
  bool lower_open = false, upper_open = false;
};
QuantityProfile profile_quantity(const ProfileResult& profile, const std::vector<double>& best,
                                 const std::function<double(const std::vector<double>&)>& q,
                                 const std::array<std::optional<std::array<double, 2>>, 2>& linearised);

}  // namespace planckton
