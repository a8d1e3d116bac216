#include "science/profile_likelihood.h"

#include <boost/math/tools/roots.hpp>

#include <algorithm>
#include <cmath>
#include <limits>

namespace planckton {

namespace {

struct ProfilePoint {
  double t;      // the parameter's internal value
  double delta;  // the profile's rise above the minimum
  std::vector<double> x;
};

// One side (direction -1 or +1) of parameter i's profile. Near the minimum the profile is nearly
// quadratic, so sign * sqrt(rise) is nearly linear in t: each threshold's crossing is first predicted
// by the secant through the best fit and the last point, which usually lands within the tolerance
// at once; otherwise the bracket is refined by TOMS 748. Where no point reaches the threshold before
// the bound, the side is open.
// The others' values expected at theta_i = t where the likelihood is Gaussian: their conditional mean
// best + C_ji / C_ii (t - best_i), the start of each profile minimisation (one or two iterations then
// suffice on a nearly Gaussian problem).
std::vector<double> conditional_start(const ModelFitResult& fit, const ModelPosterior& posterior,
                                      const std::vector<double>& best, std::size_t i, double t) {
  std::vector<double> x = best;
  if (!fit.covariance_available) return x;
  for (std::size_t j = 0; j < x.size(); ++j) {
    if (j == i) continue;
    const std::array<double, 2> limits = posterior.bounds(j);
    x[j] = std::clamp(best[j] + fit.covariance_at(j, i) / fit.covariance_at(i, i) * (t - best[i]), limits[0], limits[1]);
  }
  return x;
}

void profile_side(const ModelPosterior& posterior, const ModelFitResult& fit, std::size_t i, const std::vector<double>& best,
                  double minimum, double sigma, int direction, ProfileResult& result, ProfileBounds& bounds) {
  constexpr double kTolerance = 1e-3;  // on sqrt(rise): the crossing to ~1e-3 sigma
  const std::array<double, 2> limits = posterior.bounds(i);
  const double bound = direction < 0 ? limits[0] : limits[1];
  // The profile's rise at t; x receives the minimiser (started from the conditional mean).
  const auto rise = [&](double t, std::vector<double>& x) {
    ++result.evaluations;
    x = conditional_start(fit, posterior, best, i, t);
    const double cost = posterior.profile(i, t, x);
    if (cost < minimum - 1e-6 * (1.0 + std::abs(minimum))) result.minimum_moved = true;
    return std::isfinite(cost) ? std::max(cost - minimum, 0.0) : HUGE_VAL;
  };
  const auto inside = [&](double t, bool& at_bound) {
    at_bound = direction * (t - bound) >= 0.0;
    return at_bound ? bound : t;
  };
  std::vector<ProfilePoint> path = {{best[i], 0.0, best}};
  for (std::size_t level = 0; level < kProfileThresholds.size(); ++level) {
    const double target = std::sqrt(kProfileThresholds[level]);
    // Step out until a point reaches the threshold: the first step predicted from the last point
    // (one sigma at first), then doubling.
    bool at_bound = false;
    double step = 0.0;
    while (path.back().delta < kProfileThresholds[level] && !(path.size() > 1 && path.back().t == bound)) {
      const ProfilePoint& last = path.back();
      const double distance = std::abs(last.t - best[i]);
      step = last.delta > 1e-6 && step == 0.0 ? distance * (target / std::sqrt(last.delta)) * 1.02
                                               : (step == 0.0 ? sigma : 2.0 * step);
      const double t = inside(best[i] + direction * std::max(step, distance + 1e-3 * sigma), at_bound);
      if (!std::isfinite(t) || path.size() > 60) break;
      std::vector<double> x;
      const double delta = rise(t, x);
      path.push_back({t, delta, x});
      if (at_bound) break;
    }
    const auto crossing = std::find_if(path.begin() + 1, path.end(),
                                       [&](const ProfilePoint& p) { return p.delta >= kProfileThresholds[level]; });
    if (crossing == path.end()) {
      // Open: the last point followed (at the bound) stands for the side in the derived quantities.
      (direction < 0 ? bounds.lower_open : bounds.upper_open) = true;
      bounds.open_points[level].push_back(path.back().x);
      continue;
    }
    ProfilePoint a = *(crossing - 1), b = *crossing;
    std::vector<double> x = b.x;  // the crossing's minimiser, unless a refinement replaces it
    const auto g = [&](double t) { return std::sqrt(rise(t, x)) - target; };
    double ga = std::sqrt(a.delta) - target, gb = std::sqrt(b.delta) - target;
    double t = b.t;
    if (std::abs(gb) > kTolerance) {
      // The secant on sqrt(rise), then TOMS 748 on the bracket if it did not land.
      t = a.t + (b.t - a.t) * (-ga) / (gb - ga);
      const double gt = g(t);
      if (std::abs(gt) > kTolerance) {
        double lo = a.t, hi = b.t, glo = ga, ghi = gb;
        if (gt < 0.0) { lo = t; glo = gt; } else { hi = t; ghi = gt; }
        if (lo > hi) { std::swap(lo, hi); std::swap(glo, ghi); }
        boost::uintmax_t iterations = 30;
        const auto root = boost::math::tools::toms748_solve(
            g, lo, hi, glo, ghi, [&](double l, double h) { return std::abs(h - l) < 1e-6 * sigma; }, iterations);
        t = 0.5 * (root.first + root.second);
        g(t);
      }
    }
    (direction < 0 ? bounds.lower : bounds.upper)[level] = t;
    bounds.points[level].push_back(x);
  }
}

}  // namespace

ProfileResult profile_intervals(const ModelPosterior& posterior, const ModelFitResult& fit) {
  ProfileResult result;
  const std::vector<double> best = posterior.at_fit();
  result.minimum = -2.0 * posterior.log_probability(best.data());
  for (std::size_t i = 0; i < posterior.dimension(); ++i) result.bounds.push_back(posterior.bounds(i));
  for (std::size_t i = 0; i < posterior.dimension(); ++i) {
    const FittedParameter& p = fit.parameters[fit.free[i]];
    // Step from the covariance's sigma; without one, a tenth of an e-fold (or of a unit for beta, E).
    const double sigma = p.internal_sigma && *p.internal_sigma > 0.0 ? *p.internal_sigma : 0.1;
    ProfileBounds bounds;
    profile_side(posterior, fit, i, best, result.minimum, sigma, -1, result, bounds);
    profile_side(posterior, fit, i, best, result.minimum, sigma, +1, result, bounds);
    result.parameters.push_back(std::move(bounds));
  }
  return result;
}

QuantityProfile profile_quantity(const ProfileResult& profile, const std::vector<double>& best,
                                 const std::function<double(const std::vector<double>&)>& q,
                                 const std::array<std::optional<std::array<double, 2>>, 2>& linearised) {
  const double at_best = q(best);
  // A crossing of one parameter may have driven another to its bound (the temperature, when the data
  // bound it from below only): such a point belongs with the open sides.
  const auto at_a_bound = [&](const std::vector<double>& x) {
    for (std::size_t j = 0; j < x.size() && j < profile.bounds.size(); ++j) {
      for (double b : profile.bounds[j]) {
        if (std::isfinite(b) && std::abs(x[j] - b) <= 1e-9 * (1.0 + std::abs(b))) return true;
      }
    }
    return false;
  };
  QuantityProfile out;
  out.intervals = {{{at_best, at_best}, {at_best, at_best}}};
  std::array<std::vector<const std::vector<double>*>, 2> open;
  for (std::size_t level = 0; level < 2; ++level) {
    auto& range = out.intervals[level];
    for (const ProfileBounds& bounds : profile.parameters) {
      for (const std::vector<double>& x : bounds.open_points[level]) open[level].push_back(&x);
      for (const std::vector<double>& x : bounds.points[level]) {
        if (at_a_bound(x)) {
          open[level].push_back(&x);
          continue;
        }
        const double v = q(x);
        if (!std::isfinite(v)) continue;
        range[0] = std::min(range[0], v);
        range[1] = std::max(range[1], v);
      }
    }
    if (level == 1) {  // the 95 % range contains the 68 % one
      range[0] = std::min(range[0], out.intervals[0][0]);
      range[1] = std::max(range[1], out.intervals[0][1]);
    }
    if (linearised[level]) {
      range[0] = std::min(range[0], (*linearised[level])[0]);
      range[1] = std::max(range[1], (*linearised[level])[1]);
    }
    for (const std::vector<double>* x : open[level]) {
      const double v = q(*x);
      if (!(v >= range[0])) out.lower_open = true;
      if (!(v <= range[1])) out.upper_open = true;
    }
  }
  for (auto& range : out.intervals) {
    if (out.lower_open) range[0] = std::numeric_limits<double>::quiet_NaN();
    if (out.upper_open) range[1] = std::numeric_limits<double>::quiet_NaN();
  }
  return out;
}

}  // namespace planckton
