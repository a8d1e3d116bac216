#include "science/profile_likelihood.h"

#include <boost/math/tools/roots.hpp>

#include <algorithm>
#include <cmath>

namespace planckton {

namespace {

struct ProfilePoint {
  double t;      // the parameter's internal value
  double delta;  // the profile's rise above the minimum
  std::vector<double> x;
};

// One side (direction -1 or +1) of parameter i's profile: step out, then find each threshold's
// crossing. Near the minimum the profile is nearly quadratic, so the crossing is sought on
// sign * sqrt(delta), which is nearly linear in t: TOMS 748 then needs two or three profiles.
void profile_side(const ModelPosterior& posterior, std::size_t i, const std::vector<double>& best, double minimum,
                  double sigma, int direction, ProfileResult& result, ProfileBounds& bounds) {
  const std::array<double, 2> limits = posterior.bounds(i);
  const double bound = direction < 0 ? limits[0] : limits[1];
  const auto rise = [&](double t, std::vector<double>& x) {
    ++result.evaluations;
    const double cost = posterior.profile(i, t, x);
    if (cost < minimum - 1e-6 * (1.0 + std::abs(minimum))) result.minimum_moved = true;
    return std::isfinite(cost) ? std::max(cost - minimum, 0.0) : HUGE_VAL;
  };
  std::vector<ProfilePoint> path = {{best[i], 0.0, best}};
  double step = sigma;
  bool at_bound = false;
  for (int k = 0; k < 40 && path.back().delta < kProfileThresholds[1] && !at_bound; ++k) {
    double t = best[i] + direction * step;
    if (direction * (t - bound) >= 0.0) {
      t = bound;
      at_bound = true;
    }
    if (!std::isfinite(t)) break;
    std::vector<double> x = path.back().x;
    const double delta = rise(t, x);
    path.push_back({t, delta, x});
    step *= path.back().delta < 0.25 ? 4.0 : 2.0;
  }
  for (std::size_t level = 0; level < kProfileThresholds.size(); ++level) {
    const double threshold = kProfileThresholds[level];
    const auto crossing = std::find_if(path.begin() + 1, path.end(), [&](const ProfilePoint& p) { return p.delta >= threshold; });
    if (crossing == path.end()) {
      // Open: the profile stays below the threshold up to the bound (or where it could be followed);
      // that point stands for the side in the derived quantities' ranges.
      (direction < 0 ? bounds.lower_open : bounds.upper_open) = true;
      bounds.points[level].push_back(path.back().x);
      continue;
    }
    const ProfilePoint& below = *(crossing - 1);
    std::vector<double> x = below.x;
    const auto f = [&](double t) { return std::sqrt(rise(t, x)) - std::sqrt(threshold); };
    double t = crossing->t;
    std::vector<double> at = crossing->x;
    if (crossing->delta > threshold * (1.0 + 1e-9)) {
      boost::uintmax_t iterations = 30;
      const auto root = boost::math::tools::toms748_solve(f, std::min(below.t, crossing->t), std::max(below.t, crossing->t),
                                                          below.t < crossing->t ? std::sqrt(below.delta) - std::sqrt(threshold)
                                                                                : std::sqrt(crossing->delta) - std::sqrt(threshold),
                                                          below.t < crossing->t ? std::sqrt(crossing->delta) - std::sqrt(threshold)
                                                                                : std::sqrt(below.delta) - std::sqrt(threshold),
                                                          boost::math::tools::eps_tolerance<double>(36), iterations);
      t = 0.5 * (root.first + root.second);
      at = below.x;
      rise(t, at);
    }
    (direction < 0 ? bounds.lower : bounds.upper)[level] = t;
    bounds.points[level].push_back(at);
  }
}

}  // namespace

ProfileResult profile_intervals(const ModelPosterior& posterior, const ModelFitResult& fit) {
  ProfileResult result;
  const std::vector<double> best = posterior.at_fit();
  result.minimum = -2.0 * posterior.log_probability(best.data());
  for (std::size_t i = 0; i < posterior.dimension(); ++i) {
    const FittedParameter& p = fit.parameters[fit.free[i]];
    // Step from the covariance's sigma; without one, a tenth of an e-fold (or of a unit for beta, E).
    const double sigma = p.internal_sigma && *p.internal_sigma > 0.0 ? *p.internal_sigma : 0.1;
    ProfileBounds bounds;
    profile_side(posterior, i, best, result.minimum, sigma, -1, result, bounds);
    profile_side(posterior, i, best, result.minimum, sigma, +1, result, bounds);
    result.parameters.push_back(std::move(bounds));
  }
  return result;
}

std::array<std::array<double, 2>, 2> profile_range(const ProfileResult& profile, const std::vector<double>& best,
                                                   const std::function<double(const std::vector<double>&)>& q) {
  const double at_best = q(best);
  std::array<std::array<double, 2>, 2> range = {{{at_best, at_best}, {at_best, at_best}}};
  for (const ProfileBounds& bounds : profile.parameters) {
    for (std::size_t level = 0; level < 2; ++level) {
      for (const std::vector<double>& x : bounds.points[level]) {
        const double v = q(x);
        if (!std::isfinite(v)) continue;
        range[level][0] = std::min(range[level][0], v);
        range[level][1] = std::max(range[level][1], v);
      }
    }
  }
  // The 95 % range contains the 68 % one.
  range[1][0] = std::min(range[1][0], range[0][0]);
  range[1][1] = std::max(range[1][1], range[0][1]);
  return range;
}

}  // namespace planckton
