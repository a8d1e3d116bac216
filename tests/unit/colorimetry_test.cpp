// Colorimetry (science/colorimetry.h): tristimulus values and chromaticity of CIE illuminants, the
// Planckian locus, CCT and Duv against a brute-force search, and bad input.
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <limits>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "science/colorimetry.h"
#include "science/constants.h"
#include "science/input_error.h"
#include "science/planck.h"

namespace {

using planckton::Observer;

struct Spectrum {
  std::vector<double> wavelength_m;
  std::vector<double> power;
};

// core/data/cie-d65.csv and cie-d50.csv (embedded): comment lines, a header, wavelength_nm,value.
Spectrum parse_illuminant(std::string_view text) {
  Spectrum s;
  bool header_seen = false;
  std::size_t pos = 0;
  while (pos < text.size()) {
    std::size_t end = text.find('\n', pos);
    if (end == std::string_view::npos) end = text.size();
    const std::string line(text.substr(pos, end - pos));
    pos = end + 1;
    if (line.empty() || line.front() == '#') continue;
    if (!header_seen) {
      header_seen = true;
      continue;
    }
    const std::size_t comma = line.find(',');
    s.wavelength_m.push_back(std::stod(line.substr(0, comma)) * 1e-9);
    s.power.push_back(std::stod(line.substr(comma + 1)));
  }
  return s;
}

// CIE illuminant A by its CIE 015:2018 defining formula (from memory; also ISO/CIE 11664-2),
// lambda in nm: S_A = 100 (560/l)^5 (exp(1.435e7 / (2848 * 560)) - 1) / (exp(1.435e7 / (2848 l)) - 1).
double illuminant_a(double nm) {
  return 100.0 * std::pow(560.0 / nm, 5) * std::expm1(1.435e7 / (2848.0 * 560.0)) / std::expm1(1.435e7 / (2848.0 * nm));
}

// Illuminant A at 300-830 nm in 5 nm steps (the range of the CIE 015 table).
Spectrum illuminant_a_spectrum() {
  Spectrum s;
  for (int nm = 300; nm <= 830; nm += 5) {
    s.wavelength_m.push_back(nm * 1e-9);
    s.power.push_back(illuminant_a(nm));
  }
  return s;
}

// A black body sampled from first_nm to last_nm in step_nm.
Spectrum planck_spectrum(double temperature_k, double first_nm, double last_nm, double step_nm) {
  Spectrum s;
  for (double nm = first_nm; nm <= last_nm + 1e-9; nm += step_nm) {
    s.wavelength_m.push_back(nm * 1e-9);
    s.power.push_back(planckton::planck_per_wavelength(nm * 1e-9, temperature_k));
  }
  return s;
}

std::array<double, 2> locus_uv(double temperature_k) {
  const auto c = planckton::planckian_chromaticity(temperature_k, Observer::kCie1931TwoDegree);
  return {c.u, c.v};
}

// The point at signed distance duv from the locus point at T, along the locus' normal in CIE 1960
// uv (positive: towards larger v). The tangent is a central difference in T.
std::array<double, 2> off_locus_uv(double temperature_k, double duv) {
  const double h = temperature_k * 1e-5;
  const auto lo = locus_uv(temperature_k - h);
  const auto hi = locus_uv(temperature_k + h);
  const double tu = hi[0] - lo[0], tv = hi[1] - lo[1];
  const double norm = std::hypot(tu, tv);
  double nu = -tv / norm, nv = tu / norm;
  if (nv < 0.0) {
    nu = -nu;
    nv = -nv;
  }
  const auto p = locus_uv(temperature_k);
  return {p[0] + duv * nu, p[1] + duv * nv};
}

// Brute force, independent of Ohno's method: the locus temperature nearest to (u, v), by a scan in
// 0.2 % steps over 900-25000 K and a golden-section search on ln T between the best scan point's
// neighbours. Returns {T, signed Duv}.
std::pair<double, double> brute_force_nearest(double u, double v) {
  auto distance2 = [&](double ln_t) {
    const auto p = locus_uv(std::exp(ln_t));
    return (u - p[0]) * (u - p[0]) + (v - p[1]) * (v - p[1]);
  };
  const double step = std::log(1.002);
  const double first = std::log(900.0), last = std::log(25000.0);
  double best_ln_t = first, best = distance2(first);
  for (double ln_t = first + step; ln_t <= last; ln_t += step) {
    const double d2 = distance2(ln_t);
    if (d2 < best) {
      best = d2;
      best_ln_t = ln_t;
    }
  }
  const double g = (std::sqrt(5.0) - 1.0) / 2.0;
  double a = best_ln_t - step, b = best_ln_t + step;
  double c = b - g * (b - a), d = a + g * (b - a);
  double fc = distance2(c), fd = distance2(d);
  while (b - a > 1e-12) {
    if (fc < fd) {
      b = d, d = c, fd = fc, c = b - g * (b - a), fc = distance2(c);
    } else {
      a = c, c = d, fc = fd, d = a + g * (b - a), fd = distance2(d);
    }
  }
  const double t = std::exp(0.5 * (a + b));
  const auto p = locus_uv(t);
  const double duv = (v >= p[1] ? 1.0 : -1.0) * std::hypot(u - p[0], v - p[1]);
  return {t, duv};
}

// 40 temperatures, geometrically spaced from 1000 K to 20000 K.
std::vector<double> test_temperatures() {
  std::vector<double> t;
  for (int i = 0; i < 40; ++i) t.push_back(1000.0 * std::pow(20.0, i / 39.0));
  return t;
}

// ---------------------------------------------------------------------------------------------
// CIE illuminants.

TEST(Colorimetry, IlluminantAChromaticity) {
  const Spectrum a = illuminant_a_spectrum();
  const auto c = planckton::chromaticity_of(a.wavelength_m, a.power, Observer::kCie1931TwoDegree);
  EXPECT_NEAR(c.Y, 100.0, 1e-12);
  EXPECT_NEAR(c.x, 0.44757, 5e-5);  // CIE 015:2018, illuminant A, 2-degree observer
  EXPECT_NEAR(c.y, 0.40745, 5e-5);  // CIE 015:2018
}

TEST(Colorimetry, IlluminantACct) {
  const Spectrum a = illuminant_a_spectrum();
  const auto c = planckton::chromaticity_of(a.wavelength_m, a.power, Observer::kCie1931TwoDegree);
  const auto cct = planckton::correlated_colour_temperature(c.u, c.v);
  ASSERT_TRUE(cct.cct_k.has_value());
  EXPECT_NEAR(*cct.cct_k, 2856.0, 1.0);  // CIE 015:2018: illuminant A, about 2856 K (from memory)
  EXPECT_LT(std::abs(cct.duv), 1e-4);    // the formula is Planckian in shape
  EXPECT_TRUE(cct.within_range);
  // The formula is B_lambda at the T with c2 / T = 1.435e-2 m K / 2848 K (CIE 015 formula + CODATA
  // 2018 c2): T = 2855.496 K, on the locus.
  const double t_exact = 2848.0 * planckton::constants::kSecondRadiation / 1.435e-2;
  EXPECT_NEAR(*cct.cct_k, t_exact, 0.01);
  EXPECT_LT(std::abs(cct.duv), 1e-8);
}

TEST(Colorimetry, IlluminantD65) {
  const Spectrum d65 = parse_illuminant(planckton::data::kCieIlluminantD65);
  ASSERT_EQ(d65.wavelength_m.size(), 107u);  // 300-830 nm in 5 nm steps
  const auto c = planckton::chromaticity_of(d65.wavelength_m, d65.power, Observer::kCie1931TwoDegree);
  EXPECT_NEAR(c.x, 0.3127, 1e-4);  // CIE 015:2018, D65, 2-degree observer
  EXPECT_NEAR(c.y, 0.3290, 1e-4);  // CIE 015:2018
  const auto cct = planckton::correlated_colour_temperature(c.u, c.v);
  ASSERT_TRUE(cct.cct_k.has_value());
  EXPECT_NEAR(*cct.cct_k, 6504.0, 2.0);  // CIE 015: D65 about 6504 K (from memory of the standard)
  EXPECT_GT(cct.duv, 0.0);               // D65 lies above the locus (from memory, Duv ~ +0.003)
  EXPECT_TRUE(cct.within_range);
}

TEST(Colorimetry, IlluminantD65TenDegreeObserver) {
  const Spectrum d65 = parse_illuminant(planckton::data::kCieIlluminantD65);
  const auto c = planckton::chromaticity_of(d65.wavelength_m, d65.power, Observer::kCie1964TenDegree);
  EXPECT_NEAR(c.x, 0.3138, 2e-4);  // CIE 015, D65, 10-degree observer (from memory)
  EXPECT_NEAR(c.y, 0.3310, 2e-4);  // CIE 015 (from memory)
}

TEST(Colorimetry, IlluminantD50) {
  const Spectrum d50 = parse_illuminant(planckton::data::kCieIlluminantD50);
  ASSERT_EQ(d50.wavelength_m.size(), 81u);  // 380-780 nm in 5 nm steps: exactly the required range
  const auto c = planckton::chromaticity_of(d50.wavelength_m, d50.power, Observer::kCie1931TwoDegree);
  EXPECT_NEAR(c.x, 0.3457, 2e-4);  // CIE 015, D50, 2-degree observer (from memory)
  EXPECT_NEAR(c.y, 0.3585, 2e-4);  // CIE 015 (from memory)
}

TEST(Colorimetry, CoordinateDefinitions) {
  // CIE 1960 UCS from xy, and u' = u, v' = 1.5 v (CIE 1976), checked on D65 against XYZ forms
  // u = 4X / (X + 15Y + 3Z), v = 6Y / (X + 15Y + 3Z) (CIE 015:2018).
  const Spectrum d65 = parse_illuminant(planckton::data::kCieIlluminantD65);
  const auto c = planckton::chromaticity_of(d65.wavelength_m, d65.power, Observer::kCie1931TwoDegree);
  const double denominator = c.X + 15.0 * c.Y + 3.0 * c.Z;
  EXPECT_NEAR(c.u, 4.0 * c.X / denominator, 1e-14);
  EXPECT_NEAR(c.v, 6.0 * c.Y / denominator, 1e-14);
  EXPECT_DOUBLE_EQ(c.u_prime, c.u);
  EXPECT_DOUBLE_EQ(c.v_prime, 1.5 * c.v);
  EXPECT_NEAR(c.x + c.y, (c.X + c.Y) / (c.X + c.Y + c.Z), 1e-15);
}

// ---------------------------------------------------------------------------------------------
// Spectra as given: order, interpolation, scale.

TEST(Colorimetry, OrderAndScaleDoNotMatter) {
  const Spectrum d65 = parse_illuminant(planckton::data::kCieIlluminantD65);
  const auto reference = planckton::chromaticity_of(d65.wavelength_m, d65.power, Observer::kCie1931TwoDegree);
  Spectrum shuffled;
  for (std::size_t i = d65.wavelength_m.size(); i-- > 0;) {
    shuffled.wavelength_m.push_back(d65.wavelength_m[i]);
    shuffled.power.push_back(1e-7 * d65.power[i]);
  }
  const auto c = planckton::chromaticity_of(shuffled.wavelength_m, shuffled.power, Observer::kCie1931TwoDegree);
  EXPECT_NEAR(c.X, reference.X, 1e-10);
  EXPECT_NEAR(c.Z, reference.Z, 1e-10);
  EXPECT_NEAR(c.x, reference.x, 1e-14);
}

TEST(Colorimetry, LinearInterpolationOfAFineSmoothSpectrum) {
  // A black body sampled at 0.7 nm from 377.3 nm (off the 5 nm grid) against the same body on the
  // grid, 380-780 nm both: linear interpolation of a smooth source this fine changes xy by far less
  // than 1e-5 (common practice: the interpolation error is ~ h^2 S'' / 8).
  for (double t : {1000.0, 2856.0, 6500.0, 20000.0}) {
    const Spectrum grid = planck_spectrum(t, 380.0, 780.0, 5.0);
    const Spectrum fine = planck_spectrum(t, 377.3, 781.0, 0.7);
    const auto g = planckton::chromaticity_of(grid.wavelength_m, grid.power, Observer::kCie1931TwoDegree);
    const auto f = planckton::chromaticity_of(fine.wavelength_m, fine.power, Observer::kCie1931TwoDegree);
    EXPECT_NEAR(f.x, g.x, 1e-5) << t;
    EXPECT_NEAR(f.y, g.y, 1e-5) << t;
  }
}

// ---------------------------------------------------------------------------------------------
// The Planckian locus and CCT / Duv.

TEST(Colorimetry, LocusThroughTheSpectrumPathMatchesTheLocus) {
  for (double t : {1000.0, 6500.0, 20000.0}) {
    const Spectrum s = planck_spectrum(t, 360.0, 830.0, 5.0);
    const auto a = planckton::chromaticity_of(s.wavelength_m, s.power, Observer::kCie1931TwoDegree);
    const auto b = planckton::planckian_chromaticity(t, Observer::kCie1931TwoDegree);
    EXPECT_NEAR(a.u, b.u, 1e-14) << t;  // the same sums (colorimetry.h)
    EXPECT_NEAR(a.v, b.v, 1e-14) << t;
  }
}

TEST(Colorimetry, PlanckianRadiatorsSitOnTheLocus) {
  double worst_cct = 0.0, worst_duv = 0.0, worst_brute = 0.0;
  for (double t : test_temperatures()) {
    const Spectrum s = planck_spectrum(t, 360.0, 830.0, 5.0);
    const auto c = planckton::chromaticity_of(s.wavelength_m, s.power, Observer::kCie1931TwoDegree);
    const auto cct = planckton::correlated_colour_temperature(c.u, c.v);
    ASSERT_TRUE(cct.cct_k.has_value()) << t;
    EXPECT_NEAR(*cct.cct_k, t, 1.0) << t;         // target of the issue: 1 K
    EXPECT_LT(std::abs(cct.duv), 1e-4) << t;      // target of the issue
    EXPECT_TRUE(cct.within_range) << t;
    const auto [t_brute, duv_brute] = brute_force_nearest(c.u, c.v);
    EXPECT_NEAR(*cct.cct_k, t_brute, 1.0) << t;   // brute force (this file)
    EXPECT_NEAR(cct.duv, duv_brute, 1e-4) << t;
    worst_cct = std::max(worst_cct, std::abs(*cct.cct_k - t));
    worst_duv = std::max(worst_duv, std::abs(cct.duv));
    worst_brute = std::max(worst_brute, std::abs(*cct.cct_k - t_brute));
  }
  RecordProperty("worst_cct_error_k", std::to_string(worst_cct));
  RecordProperty("worst_abs_duv", std::to_string(worst_duv));
  RecordProperty("worst_cct_vs_brute_force_k", std::to_string(worst_brute));
}

TEST(Colorimetry, PointsOffTheLocusKeepTheirCctAndDuv) {
  double worst_cct = 0.0, worst_duv = 0.0;
  // +-0.001 exercises Ohno's triangular solution, the others the parabolic one.
  for (double duv : {0.001, -0.001, 0.01, -0.01, 0.03, -0.03}) {
    for (double t : test_temperatures()) {
      const auto p = off_locus_uv(t, duv);
      const auto cct = planckton::correlated_colour_temperature(p[0], p[1]);
      ASSERT_TRUE(cct.cct_k.has_value()) << t << " " << duv;
      EXPECT_NEAR(*cct.cct_k, t, 1.0) << t << " " << duv;  // by construction, target 1 K
      EXPECT_NEAR(cct.duv, duv, 1e-4) << t << " " << duv;   // by construction, target 1e-4
      const auto [t_brute, duv_brute] = brute_force_nearest(p[0], p[1]);
      EXPECT_NEAR(*cct.cct_k, t_brute, 1.0) << t << " " << duv;  // brute force (this file)
      EXPECT_NEAR(cct.duv, duv_brute, 1e-4) << t << " " << duv;
      worst_cct = std::max(worst_cct, std::abs(*cct.cct_k - t));
      worst_duv = std::max(worst_duv, std::abs(cct.duv - duv));
    }
  }
  RecordProperty("worst_cct_error_k", std::to_string(worst_cct));
  RecordProperty("worst_duv_error", std::to_string(worst_duv));
}

TEST(Colorimetry, CctWithheldFarFromTheLocus) {
  for (double t : {2000.0, 6500.0, 15000.0}) {
    for (double duv : {0.06, -0.06}) {
      const auto p = off_locus_uv(t, duv);
      const auto cct = planckton::correlated_colour_temperature(p[0], p[1]);
      EXPECT_FALSE(cct.cct_k.has_value()) << t << " " << duv;  // CIE 015:2018: |Duv| > 0.05
      EXPECT_NEAR(cct.duv, duv, 1e-4) << t << " " << duv;       // the distance is still given
      EXPECT_NEAR(cct.nearest_locus_temperature_k, t, 1.0) << t << " " << duv;
    }
  }
  // Just inside the limit the CCT is given.
  const auto p = off_locus_uv(6500.0, 0.049);
  EXPECT_TRUE(planckton::correlated_colour_temperature(p[0], p[1]).cct_k.has_value());
}

TEST(Colorimetry, ValidatedRangeAndBeyondTheTable) {
  // 980 K: inside the table (from 950 K), outside the validated 1000-20000 K.
  const auto low = locus_uv(980.0);
  const auto cct_low = planckton::correlated_colour_temperature(low[0], low[1]);
  ASSERT_TRUE(cct_low.cct_k.has_value());
  EXPECT_NEAR(*cct_low.cct_k, 980.0, 1.0);
  EXPECT_FALSE(cct_low.within_range);
  // 40000 K and 600 K: beyond the table, so no CCT; the nearest table end is reported.
  for (double t : {40000.0, 600.0}) {
    const auto p = locus_uv(t);
    const auto cct = planckton::correlated_colour_temperature(p[0], p[1]);
    EXPECT_FALSE(cct.cct_k.has_value()) << t;
    EXPECT_FALSE(cct.within_range) << t;
    EXPECT_TRUE(t > 20000.0 ? cct.nearest_locus_temperature_k > 20000.0 : cct.nearest_locus_temperature_k < 1000.0);
  }
}

TEST(Colorimetry, MethodAndObserverNames) {
  EXPECT_EQ(planckton::observer_name(Observer::kCie1931TwoDegree), "CIE 1931 2-degree");
  EXPECT_EQ(planckton::observer_name(Observer::kCie1964TenDegree), "CIE 1964 10-degree");
  const auto p = locus_uv(5000.0);
  EXPECT_NE(planckton::correlated_colour_temperature(p[0], p[1]).method.find("Ohno 2014"), std::string::npos);
}

// ---------------------------------------------------------------------------------------------
// Bad input.

template <typename F>
planckton::InputError input_error_of(F&& f) {
  try {
    f();
  } catch (const planckton::InputError& e) {
    return e;
  }
  ADD_FAILURE() << "no InputError";
  return planckton::InputError("", "");
}

TEST(Colorimetry, SpectrumNotCovering380To780IsAnInputError) {
  const Spectrum s = planck_spectrum(3000.0, 400.0, 700.0, 5.0);
  const auto e = input_error_of(
      [&] { planckton::chromaticity_of(s.wavelength_m, s.power, Observer::kCie1931TwoDegree); });
  EXPECT_EQ(e.field(), "x");
  const std::string message = e.what();
  EXPECT_NE(message.find("380-780 nm"), std::string::npos) << message;  // what is required
  EXPECT_NE(message.find("400-700 nm"), std::string::npos) << message;  // what was given
  // One end short is enough.
  const Spectrum red_short = planck_spectrum(3000.0, 360.0, 775.0, 5.0);
  EXPECT_EQ(input_error_of([&] {
              planckton::chromaticity_of(red_short.wavelength_m, red_short.power, Observer::kCie1964TenDegree);
            }).field(),
            "x");
}

TEST(Colorimetry, MalformedSpectraAreInputErrors) {
  Spectrum s = planck_spectrum(3000.0, 380.0, 780.0, 5.0);
  auto run = [](const Spectrum& spectrum) {
    return input_error_of(
        [&] { planckton::chromaticity_of(spectrum.wavelength_m, spectrum.power, Observer::kCie1931TwoDegree); });
  };
  Spectrum short_power = s;
  short_power.power.pop_back();
  EXPECT_EQ(run(short_power).field(), "y");

  Spectrum nan_power = s;
  nan_power.power[7] = std::nan("");
  const auto e_nan = run(nan_power);
  EXPECT_EQ(e_nan.field(), "y");
  EXPECT_EQ(e_nan.index(), std::optional<std::size_t>(7));

  Spectrum negative_wavelength = s;
  negative_wavelength.wavelength_m[3] = -1e-7;
  const auto e_neg = run(negative_wavelength);
  EXPECT_EQ(e_neg.field(), "x");
  EXPECT_EQ(e_neg.index(), std::optional<std::size_t>(3));

  Spectrum repeated = s;
  repeated.wavelength_m[10] = repeated.wavelength_m[9];
  const auto e_rep = run(repeated);
  EXPECT_EQ(e_rep.field(), "x");
  EXPECT_EQ(e_rep.index(), std::optional<std::size_t>(10));

  Spectrum dark = s;
  std::fill(dark.power.begin(), dark.power.end(), 0.0);
  EXPECT_EQ(run(dark).field(), "y");

  EXPECT_EQ(run(Spectrum{}).field(), "x");
}

TEST(Colorimetry, BadTemperaturesAndCoordinatesAreInputErrors) {
  EXPECT_EQ(input_error_of([] { planckton::planckian_chromaticity(0.0, Observer::kCie1931TwoDegree); }).field(),
            "temperature");
  EXPECT_EQ(input_error_of([] { planckton::planckian_chromaticity(1.0, Observer::kCie1931TwoDegree); }).field(),
            "temperature");  // the visible radiance of a 1 K body underflows
  EXPECT_EQ(input_error_of([] { planckton::correlated_colour_temperature(std::nan(""), 0.3); }).field(), "u");
  EXPECT_EQ(input_error_of([] { planckton::correlated_colour_temperature(0.2, std::numeric_limits<double>::infinity()); }).field(), "v");
}

}  // namespace
