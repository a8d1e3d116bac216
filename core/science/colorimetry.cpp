#include "science/colorimetry.h"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstddef>
#include <numeric>
#include <stdexcept>
#include <string>
#include <system_error>

#include "science/input_error.h"
#include "science/planck.h"

namespace planckton {

namespace {

// The colour-matching functions' grid (CIE 015:2018 tables at 5 nm).
constexpr double kGridStartNm = 360.0;
constexpr double kGridStepNm = 5.0;
constexpr std::size_t kGridSize = 95;  // 360-830 nm
// The range a source must cover (CIE 015:2018).
constexpr double kRequiredStartNm = 380.0;
constexpr double kRequiredEndNm = 780.0;
// Wavelengths given in m and compared in nm: 380 nm written as 380e-9 or 3.8e-7 must count as
// 380 nm. 1e-6 nm is far below any spectrometer's resolution.
constexpr double kWavelengthToleranceNm = 1e-6;

// Ohno 2014's table: 1 % steps from 950 K to about 21000 K.
constexpr double kTableStartK = 950.0;
constexpr double kTableRatio = 1.01;
constexpr double kTableEndK = 21000.0;
constexpr double kTriangularLimit = 0.002;  // |Duv| below which the triangular solution is used
constexpr double kDuvLimit = 0.05;          // CIE 015:2018: no CCT beyond this distance
constexpr double kValidatedMinK = 1000.0;
constexpr double kValidatedMaxK = 20000.0;
// The final golden-section search: half-width of the bracket around Ohno's answer, in ln T, and the
// width in ln T at which it stops (1e-10 of T, far below the 1 K the method is asked for).
constexpr double kRefineHalfWidth = 0.002;
constexpr double kRefineTolerance = 1e-10;

constexpr const char* kMethod =
    "Ohno 2014 (LEUKOS 10, 47), combined triangular/parabolic on a 1 % table, refined by a "
    "golden-section search on the exact locus; CIE 1931 2-degree observer";

struct Cmf {
  std::array<double, kGridSize> x_bar{}, y_bar{}, z_bar{};
};

// Parses an embedded colour-matching function table. The tables are ours and fixed at build
// time, so a malformed one is a bug (std::logic_error), not bad input.
Cmf parse_cmf(std::string_view text, const char* name) {
  Cmf cmf;
  std::size_t row = 0;
  bool header_seen = false;
  std::size_t pos = 0;
  while (pos < text.size()) {
    std::size_t end = text.find('\n', pos);
    if (end == std::string_view::npos) end = text.size();
    std::string_view line = text.substr(pos, end - pos);
    pos = end + 1;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    if (line.empty() || line.front() == '#') continue;
    if (!header_seen) {
      header_seen = true;
      if (line != "wavelength_nm,x_bar,y_bar,z_bar") throw std::logic_error(std::string(name) + ": unexpected header");
      continue;
    }
    std::array<double, 4> values{};
    const char* p = line.data();
    const char* const last = line.data() + line.size();
    for (std::size_t i = 0; i < values.size(); ++i) {
      const auto [next, ec] = std::from_chars(p, last, values[i]);
      if (ec != std::errc()) throw std::logic_error(std::string(name) + ": bad number in " + std::string(line));
      p = next;
      if (i + 1 < values.size()) {
        if (p == last || *p != ',') throw std::logic_error(std::string(name) + ": bad row " + std::string(line));
        ++p;
      }
    }
    if (p != last) throw std::logic_error(std::string(name) + ": trailing text in " + std::string(line));
    if (row >= kGridSize || values[0] != kGridStartNm + kGridStepNm * static_cast<double>(row)) {
      throw std::logic_error(std::string(name) + ": not on the 360-830 nm, 5 nm grid at " + std::string(line));
    }
    cmf.x_bar[row] = values[1];
    cmf.y_bar[row] = values[2];
    cmf.z_bar[row] = values[3];
    ++row;
  }
  if (row != kGridSize) throw std::logic_error(std::string(name) + ": expected 95 rows (360-830 nm)");
  return cmf;
}

// Parsed once, on first use (thread-safe initialisation of function-local statics).
const Cmf& cmf_of(Observer observer) {
  static const Cmf two_degree = parse_cmf(data::kCie1931TwoDegreeCmf, "cie1931-2deg-cmf.csv");
  static const Cmf ten_degree = parse_cmf(data::kCie1964TenDegreeCmf, "cie1964-10deg-cmf.csv");
  return observer == Observer::kCie1964TenDegree ? ten_degree : two_degree;
}

double grid_nm(std::size_t i) { return kGridStartNm + kGridStepNm * static_cast<double>(i); }

// XYZ (Y = 100) and the coordinates from the sums of S x-bar, S y-bar, S z-bar. The common factor
// dl cancels in the normalisation.
Chromaticity from_sums(double sx, double sy, double sz) {
  Chromaticity c;
  const double k = 100.0 / sy;
  c.X = k * sx;
  c.Y = 100.0;
  c.Z = k * sz;
  const double sum = c.X + c.Y + c.Z;
  c.x = c.X / sum;
  c.y = c.Y / sum;
  const double denominator = -2.0 * c.x + 12.0 * c.y + 3.0;
  c.u = 4.0 * c.x / denominator;
  c.v = 6.0 * c.y / denominator;
  c.u_prime = c.u;
  c.v_prime = 1.5 * c.v;
  return c;
}

std::string format_nm(double nm) {
  char buffer[32];
  const auto [end, ec] = std::to_chars(buffer, buffer + sizeof buffer, nm, std::chars_format::general, 6);
  return ec == std::errc() ? std::string(buffer, end) : std::to_string(nm);
}

struct LocusPoint {
  double temperature_k, u, v;
};

double square(double value) { return value * value; }

// 2-degree locus point in CIE 1960 uv.
LocusPoint locus_point(double temperature_k) {
  const Chromaticity c = planckian_chromaticity(temperature_k, Observer::kCie1931TwoDegree);
  return {temperature_k, c.u, c.v};
}

const std::vector<LocusPoint>& locus_table() {
  static const std::vector<LocusPoint> table = [] {
    std::vector<LocusPoint> points;
    for (int i = 0;; ++i) {
      const double t = kTableStartK * std::pow(kTableRatio, i);
      points.push_back(locus_point(t));
      if (t >= kTableEndK) break;
    }
    return points;
  }();
  return table;
}

double distance_squared(double u, double v, const LocusPoint& p) { return square(u - p.u) + square(v - p.v); }

// Golden-section search (Kiefer 1953) on ln T of the squared uv distance to the exact locus, in
// [lo, hi] (K). Returns ln T at the minimum.
double golden_section_ln_t(double u, double v, double lo, double hi) {
  const double inv_phi = (std::sqrt(5.0) - 1.0) / 2.0;
  double a = std::log(lo), b = std::log(hi);
  double c = b - inv_phi * (b - a), d = a + inv_phi * (b - a);
  double fc = distance_squared(u, v, locus_point(std::exp(c)));
  double fd = distance_squared(u, v, locus_point(std::exp(d)));
  while (b - a > kRefineTolerance) {
    if (fc < fd) {
      b = d;
      d = c;
      fd = fc;
      c = b - inv_phi * (b - a);
      fc = distance_squared(u, v, locus_point(std::exp(c)));
    } else {
      a = c;
      c = d;
      fc = fd;
      d = a + inv_phi * (b - a);
      fd = distance_squared(u, v, locus_point(std::exp(d)));
    }
  }
  return 0.5 * (a + b);
}

}  // namespace

std::string_view observer_name(Observer observer) {
  switch (observer) {
    case Observer::kCie1931TwoDegree: return "CIE 1931 2-degree";
    case Observer::kCie1964TenDegree: return "CIE 1964 10-degree";
  }
  return "unknown";
}

Chromaticity chromaticity_of(const std::vector<double>& wavelength_m, const std::vector<double>& power,
                             Observer observer) {
  const std::size_t n = wavelength_m.size();
  if (power.size() != n) {
    throw InputError("y", "must have as many values as x (" + std::to_string(n) + "), has " +
                              std::to_string(power.size()));
  }
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(wavelength_m[i])) throw InputError("x", "must be a finite number", i);
    if (!(wavelength_m[i] > 0.0)) throw InputError("x", "must be positive (a wavelength)", i);
    if (!std::isfinite(power[i])) throw InputError("y", "must be a finite number", i);
  }
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return wavelength_m[a] < wavelength_m[b]; });
  std::vector<double> nm(n), s(n);
  for (std::size_t k = 0; k < n; ++k) {
    nm[k] = wavelength_m[order[k]] * 1e9;
    s[k] = power[order[k]];
    if (k > 0 && !(nm[k] > nm[k - 1])) {
      throw InputError("x", "wavelengths must be distinct; this one repeats an earlier one",
                       std::max(order[k], order[k - 1]));
    }
  }
  if (n < 2 || nm.front() > kRequiredStartNm + kWavelengthToleranceNm ||
      nm.back() < kRequiredEndNm - kWavelengthToleranceNm) {
    const std::string given =
        n == 0 ? "no wavelengths" : n == 1 ? "a single wavelength, " + format_nm(nm.front()) + " nm"
                                           : format_nm(nm.front()) + "-" + format_nm(nm.back()) + " nm";
    throw InputError("x", "the spectrum must cover at least 380-780 nm (CIE 015:2018, for colorimetry); given " +
                              given);
  }

  // Linear interpolation onto the 5 nm grid, at the grid points inside the data.
  const Cmf& cmf = cmf_of(observer);
  double sx = 0.0, sy = 0.0, sz = 0.0;
  std::size_t j = 0;  // nm[j] <= l < nm[j + 1]
  for (std::size_t i = 0; i < kGridSize; ++i) {
    const double l = grid_nm(i);
    if (l < nm.front() - kWavelengthToleranceNm || l > nm.back() + kWavelengthToleranceNm) continue;
    while (j + 2 < n && nm[j + 1] <= l) ++j;
    const double t = std::clamp((l - nm[j]) / (nm[j + 1] - nm[j]), 0.0, 1.0);
    const double value = s[j] + t * (s[j + 1] - s[j]);
    sx += value * cmf.x_bar[i];
    sy += value * cmf.y_bar[i];
    sz += value * cmf.z_bar[i];
  }
  if (!(sy > 0.0) || !(sx + sy + sz > 0.0)) {
    throw InputError("y", "the spectrum has no luminous power in 380-780 nm (Y <= 0); a colour needs light");
  }
  return from_sums(sx, sy, sz);
}

Chromaticity planckian_chromaticity(double temperature_k, Observer observer) {
  if (!std::isfinite(temperature_k) || !(temperature_k > 0.0)) {
    throw InputError("temperature", "must be a finite positive temperature in K");
  }
  const Cmf& cmf = cmf_of(observer);
  double sx = 0.0, sy = 0.0, sz = 0.0;
  for (std::size_t i = 0; i < kGridSize; ++i) {
    const double b = planck_per_wavelength(grid_nm(i) * 1e-9, temperature_k);
    sx += b * cmf.x_bar[i];
    sy += b * cmf.y_bar[i];
    sz += b * cmf.z_bar[i];
  }
  if (!(sy > 0.0)) {
    throw InputError("temperature", "too low for a chromaticity: the visible radiance underflows");
  }
  return from_sums(sx, sy, sz);
}

CorrelatedColourTemperature correlated_colour_temperature(double u, double v) {
  if (!std::isfinite(u)) throw InputError("u", "must be a finite number");
  if (!std::isfinite(v)) throw InputError("v", "must be a finite number");
  const std::vector<LocusPoint>& table = locus_table();
  const std::size_t n = table.size();

  // Ohno 2014: the nearest table point m, and its neighbours (m clamped so that both exist).
  std::size_t nearest = 0;
  double best = distance_squared(u, v, table[0]);
  for (std::size_t i = 1; i < n; ++i) {
    const double d2 = distance_squared(u, v, table[i]);
    if (d2 < best) {
      best = d2;
      nearest = i;
    }
  }
  const std::size_t m = std::clamp<std::size_t>(nearest, 1, n - 2);
  const LocusPoint& p0 = table[m - 1];
  const LocusPoint& p1 = table[m];
  const LocusPoint& p2 = table[m + 1];
  const double d0 = std::sqrt(distance_squared(u, v, p0));
  const double d1 = std::sqrt(distance_squared(u, v, p1));
  const double d2 = std::sqrt(distance_squared(u, v, p2));

  // Triangular solution: the foot of the perpendicular on the chord p0-p2.
  const double chord = std::hypot(p2.u - p0.u, p2.v - p0.v);
  const double along = (d0 * d0 - d2 * d2 + chord * chord) / (2.0 * chord);
  double t_ohno = p0.temperature_k + (p2.temperature_k - p0.temperature_k) * along / chord;
  const double v_foot = p0.v + (p2.v - p0.v) * along / chord;
  const double sign = v - v_foot >= 0.0 ? 1.0 : -1.0;
  const double duv_ohno = sign * std::sqrt(std::max(0.0, d0 * d0 - along * along));
  if (std::abs(duv_ohno) >= kTriangularLimit) {
    // Parabolic solution: d(T) = a T^2 + b T + c through the three points (Ohno's closed form,
    // written here with divided differences), minimised.
    const double s01 = (d1 - d0) / (p1.temperature_k - p0.temperature_k);
    const double s12 = (d2 - d1) / (p2.temperature_k - p1.temperature_k);
    const double a = (s12 - s01) / (p2.temperature_k - p0.temperature_k);
    const double b = s01 - a * (p0.temperature_k + p1.temperature_k);
    if (a > 0.0) t_ohno = -b / (2.0 * a);
  }

  // Refinement (ours): golden-section search on the exact locus around Ohno's answer; should the
  // minimum sit on the bracket's edge, again between the nearest point's neighbours.
  const double lo_limit = p0.temperature_k, hi_limit = p2.temperature_k;
  t_ohno = std::clamp(t_ohno, lo_limit, hi_limit);
  double lo = std::max(lo_limit, t_ohno * std::exp(-kRefineHalfWidth));
  double hi = std::min(hi_limit, t_ohno * std::exp(kRefineHalfWidth));
  double ln_t = golden_section_ln_t(u, v, lo, hi);
  const double edge = 10.0 * kRefineTolerance;
  if ((ln_t - std::log(lo) < edge && lo > lo_limit) || (std::log(hi) - ln_t < edge && hi < hi_limit)) {
    lo = lo_limit;
    hi = hi_limit;
    ln_t = golden_section_ln_t(u, v, lo, hi);
  }
  double t = std::exp(ln_t);
  // Beyond the table: the nearest point is its first (last) one and the minimum runs into it.
  const bool below_table = nearest == 0 && ln_t - std::log(lo_limit) < edge;
  const bool above_table = nearest == n - 1 && std::log(hi_limit) - ln_t < edge;
  const bool beyond_table = below_table || above_table;
  if (below_table) t = table.front().temperature_k;
  if (above_table) t = table.back().temperature_k;

  const LocusPoint foot = locus_point(t);
  CorrelatedColourTemperature result;
  result.duv = (v - foot.v >= 0.0 ? 1.0 : -1.0) * std::sqrt(distance_squared(u, v, foot));
  result.nearest_locus_temperature_k = t;
  // The validated range's ends with a margin of 1e-3 K, far below the method's accuracy, so that a
  // 20000 K radiator is inside despite rounding.
  result.within_range = !beyond_table && t >= kValidatedMinK - 1e-3 && t <= kValidatedMaxK + 1e-3;
  if (!beyond_table && std::abs(result.duv) <= kDuvLimit) result.cct_k = t;
  result.method = kMethod;
  return result;
}

}  // namespace planckton
