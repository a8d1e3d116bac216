#include "science/extinction.h"

#include <array>
#include <cmath>
#include <cstddef>
#include <cstdio>
#include <string>

#include "science/input_error.h"

namespace planckton {

namespace {

// ---------------------------------------------------------------------------------------------
// Cardelli, Clayton & Mathis 1989 (ApJ 345, 245) and O'Donnell 1994 (ApJ 422, 158).
// <A_lambda / A_V> = a(x) + b(x) / R_V (CCM89 eq. 1), x = 1 / lambda in um^-1. The pieces join at
// x = 1.1, 3.3 and 8 um^-1 with small steps (up to 3e-4 in A_lambda / A_V for CCM89, 0.01 at
// x = 3.3 for O'Donnell's polynomial); each boundary belongs to the piece above it, as in
// python3-extinction and the IDL routine CCM_UNRED. (Equation numbers of CCM89 from memory.)
// ---------------------------------------------------------------------------------------------

struct AB {
  double a;
  double b;
};

// Optical / near-IR polynomials in y = x - 1.82, coefficients of y^0 .. y^n. At y = 0 (lambda =
// 0.5495 um) a = 1 and b = 0, so A_lambda = A_V there for every R_V: that is how CCM89 tie the law
// to V.
constexpr std::array<double, 8> kCcm89OpticalA = {1.0, 0.17699, -0.50447, -0.02427, 0.72085, 0.01979, -0.77530, 0.32999};
constexpr std::array<double, 8> kCcm89OpticalB = {0.0, 1.41338, 2.28305, 1.07233, -5.38434, -0.62251, 5.30260, -2.09002};
// O'Donnell 1994's revised coefficients for the same range (his replacement for CCM89 eq. 3).
constexpr std::array<double, 9> kOdonnell94OpticalA = {1.0, 0.104, -0.609, 0.701, 1.137, -1.718, -0.827, 1.647, -0.505};
constexpr std::array<double, 9> kOdonnell94OpticalB = {0.0, 1.952, 2.908, -3.989, -7.985, 11.102, 5.491, -10.805, 3.347};

template <std::size_t N>
double polynomial(const std::array<double, N>& c, double y) {
  double sum = 0.0;
  for (std::size_t i = N; i-- > 0;) sum = sum * y + c[i];  // Horner
  return sum;
}

// CCM89 eq. 2a,b: infrared, 0.3 <= x < 1.1 um^-1, a power law.
AB ccm89_infrared(double x) {
  const double p = std::pow(x, 1.61);
  return {0.574 * p, -0.527 * p};
}

// CCM89 eq. 4a,b: ultraviolet, 3.3 <= x < 8 um^-1. The Lorentzian-like terms are the 2175 A bump
// (FM90's Drude profile in CCM's form); above x = 5.9 the far-UV curvature terms F_a(x), F_b(x).
AB ccm89_ultraviolet(double x) {
  double a = 1.752 - 0.316 * x - 0.104 / ((x - 4.67) * (x - 4.67) + 0.341);
  double b = -3.090 + 1.825 * x + 1.206 / ((x - 4.62) * (x - 4.62) + 0.263);
  if (x > 5.9) {
    const double y = x - 5.9;
    a += -0.04473 * y * y - 0.009779 * y * y * y;
    b += 0.2130 * y * y + 0.1207 * y * y * y;
  }
  return {a, b};
}

// CCM89 eq. 5a,b: far ultraviolet, 8 <= x <= 10 um^-1, y = x - 8.
AB ccm89_far_ultraviolet(double x) {
  const double y = x - 8.0;
  return {-1.073 - 0.628 * y + 0.137 * y * y - 0.070 * y * y * y,
          13.670 + 4.257 * y - 0.420 * y * y + 0.374 * y * y * y};
}

template <std::size_t N>
double ccm89_like(double x, double r_v, const std::array<double, N>& optical_a, const std::array<double, N>& optical_b) {
  AB ab;
  if (x < 1.1) {
    ab = ccm89_infrared(x);
  } else if (x < 3.3) {
    const double y = x - 1.82;  // CCM89 eq. 3a,b (or O'Donnell's coefficients)
    ab = {polynomial(optical_a, y), polynomial(optical_b, y)};
  } else if (x < 8.0) {
    ab = ccm89_ultraviolet(x);
  } else {
    ab = ccm89_far_ultraviolet(x);
  }
  return ab.a + ab.b / r_v;  // CCM89 eq. 1
}

// ---------------------------------------------------------------------------------------------
// Fitzpatrick 1999 (PASP 111, 63). Works in k(x) + R_V = A_lambda / E(B-V); the ratio is that over R_V.
// ---------------------------------------------------------------------------------------------

// Fitzpatrick & Massa 1990 (ApJS 72, 163) ultraviolet parametrisation with F99's R_V-dependent
// coefficients (F99 section 3 / Table 3): x0 = 4.596 um^-1 and gamma = 0.99 um^-1 the bump's centre
// and width, c3 = 3.23 its strength, c4 = 0.41 the far-UV curvature, c2 = -0.824 + 4.717 / R_V the UV
// slope and c1 = 2.030 - 3.007 c2 the intercept. Returns A_lambda / E(B-V) = k(x) + R_V.
double fm90_a_over_ebv(double x, double r_v) {
  constexpr double kX0 = 4.596, kGamma = 0.99, kC3 = 3.23, kC4 = 0.41;
  const double c2 = -0.824 + 4.717 / r_v;
  const double c1 = 2.030 - 3.007 * c2;
  const double x2 = x * x;
  const double drude = x2 / ((x2 - kX0 * kX0) * (x2 - kX0 * kX0) + x2 * kGamma * kGamma);  // the bump D(x)
  double k = c1 + c2 * x + kC3 * drude;
  if (x >= 5.9) {
    const double y = x - 5.9;
    k += kC4 * (0.5392 * y * y + 0.05644 * y * y * y);  // FM90's far-UV curvature F(x)
  }
  return k + r_v;
}

// The spline's anchors in x (um^-1): infinite wavelength, 2.65 and 1.22 um (IR), 6000, 5470, 4670,
// 4110 A (optical), 2700 and 2600 A (UV, from the FM90 formula so that the curves join).
constexpr std::size_t kF99Knots = 9;
constexpr std::array<double, kF99Knots> kF99KnotX = {0.0,         1e4 / 26500.0, 1e4 / 12200.0, 1e4 / 6000.0, 1e4 / 5470.0,
                                                     1e4 / 4670.0, 1e4 / 4110.0,  1e4 / 2700.0,  1e4 / 2600.0};
// Below 2700 A (x >= 1e4 / 2700) the FM90 formula itself.
constexpr double kF99UltravioletX = 1e4 / 2700.0;

// A_lambda / E(B-V) at the anchors for this R_V. IR: F99's values for R_V = 3.1 scaled with R_V.
// Optical: E. Fitzpatrick's updated polynomials in R_V, as in the IDL routine FM_UNRED (W. Landsman,
// IDL Astronomy User's Library) and python3-extinction; they replace F99 Table 3's optical values.
std::array<double, kF99Knots> f99_knot_values(double r_v) {
  const double r2 = r_v * r_v;
  return {0.0,
          0.26469 * r_v / 3.1,
          0.82925 * r_v / 3.1,
          -0.422809 + 1.00270 * r_v + 2.13572e-4 * r2,
          -5.13540e-2 + 1.00216 * r_v - 7.35778e-5 * r2,
          0.700127 + 1.00184 * r_v - 3.32598e-5 * r2,
          1.19456 + 1.01707 * r_v - 5.46959e-3 * r2 + 7.97809e-4 * r2 * r_v - 4.45636e-5 * r2 * r2,
          fm90_a_over_ebv(kF99KnotX[7], r_v),
          fm90_a_over_ebv(kF99KnotX[8], r_v)};
}

// Natural cubic spline (zero second derivative at both ends) through the knots, evaluated at x,
// kF99KnotX[0] <= x <= kF99KnotX[last]. FM_UNRED uses IDL's natural spline (SPL_INIT), and so does
// python3-extinction (a not-a-knot spline would differ by up to 10 % near 6 um). The second
// derivatives come from the usual tridiagonal system (e.g. Numerical Recipes, 3rd ed., section 3.3),
// solved by the Thomas algorithm; nine knots, so solving it per call costs less than the pow() of
// CCM89's infrared branch and needs no cache.
double natural_cubic_spline(const std::array<double, kF99Knots>& xs, const std::array<double, kF99Knots>& ys, double x) {
  constexpr std::size_t n = kF99Knots;
  std::array<double, n> m{};  // second derivatives; m[0] = m[n-1] = 0 (natural)
  std::array<double, n> c{};  // Thomas forward sweep: modified super-diagonal
  for (std::size_t i = 1; i + 1 < n; ++i) {
    const double h0 = xs[i] - xs[i - 1];
    const double h1 = xs[i + 1] - xs[i];
    const double rhs = 6.0 * ((ys[i + 1] - ys[i]) / h1 - (ys[i] - ys[i - 1]) / h0);
    const double diag = 2.0 * (h0 + h1) - h0 * c[i - 1];
    c[i] = h1 / diag;
    m[i] = (rhs - h0 * m[i - 1]) / diag;
  }
  for (std::size_t i = n - 2; i >= 1; --i) m[i] -= c[i] * m[i + 1];

  std::size_t k = 0;  // interval [xs[k], xs[k+1]] containing x
  while (k + 2 < n && x > xs[k + 1]) ++k;
  const double h = xs[k + 1] - xs[k];
  const double t = (x - xs[k]) / h;
  const double u = 1.0 - t;
  return u * ys[k] + t * ys[k + 1] + h * h / 6.0 * ((u * u * u - u) * m[k] + (t * t * t - t) * m[k + 1]);
}

double fitzpatrick99(double x, double r_v) {
  if (x >= kF99UltravioletX) return fm90_a_over_ebv(x, r_v) / r_v;
  return natural_cubic_spline(kF99KnotX, f99_knot_values(r_v), x) / r_v;
}

// ---------------------------------------------------------------------------------------------
// Calzetti et al. 2000 (ApJ 533, 682), eq. 4: k(lambda) = A_lambda / E(B-V)_stars; A_lambda / A_V =
// k / R_V. 0.63 um itself belongs to the red half, as in python3-extinction.
// ---------------------------------------------------------------------------------------------

double calzetti2000(double x, double r_v) {
  double k;
  if (x > 1.0 / 0.63) {
    k = 2.659 * (-2.156 + 1.509 * x - 0.198 * x * x + 0.011 * x * x * x) + r_v;  // 0.12 - 0.63 um
  } else {
    k = 2.659 * (-1.857 + 1.040 * x) + r_v;  // 0.63 - 2.20 um
  }
  return k / r_v;
}

// ---------------------------------------------------------------------------------------------
// The table and the checks.
// ---------------------------------------------------------------------------------------------

const std::vector<ExtinctionLawInfo>& law_table() {
  // A function-local static: initialised once, thread-safely (C++11 and later), never modified.
  static const std::vector<ExtinctionLawInfo> table = {
      {ExtinctionLaw::kCardelli1989, "cardelli1989", "Cardelli, Clayton & Mathis 1989, ApJ 345, 245",
       "Milky Way average extinction curve, R_V-dependent (CCM89)", 0.1e-6, 1e-6 / 0.3, 3.1},
      {ExtinctionLaw::kODonnell1994, "odonnell1994", "O'Donnell 1994, ApJ 422, 158",
       "Milky Way average extinction curve, R_V-dependent: CCM89 with revised optical coefficients", 0.1e-6, 1e-6 / 0.3,
       3.1},
      {ExtinctionLaw::kFitzpatrick1999, "fitzpatrick1999", "Fitzpatrick 1999, PASP 111, 63",
       "Milky Way extinction curve, R_V-dependent: FM90 ultraviolet and a spline through optical/IR anchors (F99)",
       910e-10, 6e-6, 3.1},
      {ExtinctionLaw::kCalzetti2000, "calzetti2000", "Calzetti et al. 2000, ApJ 533, 682",
       "starburst galaxy attenuation curve (dust mixed with the stars; no 2175 A bump)", 0.12e-6, 2.2e-6, 4.05},
  };
  return table;
}

void require_r_v(const ExtinctionLawInfo& info, double r_v, const std::string& field) {
  if (std::isfinite(r_v) && r_v > 0.0) return;
  char text[300];
  std::snprintf(text, sizeof text,
                "R_V = %g cannot be used with the %s extinction law (%s): R_V = A_V / E(B-V) must be a finite "
                "positive number (typically 2 to 6; %g is the law's default)",
                r_v, info.id, info.citation, info.default_r_v);
  throw InputError(field, text);
}

void require_range(const ExtinctionLawInfo& info, double wavelength_m, const std::string& field) {
  // The negated comparison also refuses NaN.
  if (wavelength_m >= info.min_wavelength_m && wavelength_m <= info.max_wavelength_m) return;
  char text[300];
  std::snprintf(text, sizeof text,
                "the wavelength %.9g um is outside the range of the %s extinction law (%s): %.6g um to %.6g um; "
                "the law is not extrapolated",
                wavelength_m * 1e6, info.id, info.citation, info.min_wavelength_m * 1e6, info.max_wavelength_m * 1e6);
  throw InputError(field, text);
}

}  // namespace

const std::vector<ExtinctionLawInfo>& extinction_laws() { return law_table(); }

const ExtinctionLawInfo* find_extinction_law(std::string_view id) {
  for (const ExtinctionLawInfo& info : law_table()) {
    if (id == info.id) return &info;
  }
  return nullptr;
}

const ExtinctionLawInfo& extinction_law_info(ExtinctionLaw law) {
  // The table is in the order of the enum (checked by the unit tests).
  return law_table()[static_cast<std::size_t>(law)];
}

double extinction_ratio(ExtinctionLaw law, double wavelength_m, double r_v, const std::string& field) {
  const ExtinctionLawInfo& info = extinction_law_info(law);
  require_range(info, wavelength_m, field);
  require_r_v(info, r_v, field);
  const double x = 1e-6 / wavelength_m;  // um^-1
  switch (law) {
    case ExtinctionLaw::kCardelli1989:
      return ccm89_like(x, r_v, kCcm89OpticalA, kCcm89OpticalB);
    case ExtinctionLaw::kODonnell1994:
      return ccm89_like(x, r_v, kOdonnell94OpticalA, kOdonnell94OpticalB);
    case ExtinctionLaw::kFitzpatrick1999:
      return fitzpatrick99(x, r_v);
    case ExtinctionLaw::kCalzetti2000:
      return calzetti2000(x, r_v);
  }
  return 0.0;  // not reached: every enumerator is handled above
}

}  // namespace planckton
