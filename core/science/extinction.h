// Interstellar extinction and starburst attenuation laws: how much dust dims light at each wavelength,
// relative to the V band. A spectrum reddened by dust is F_obs(lambda) = F(lambda) 10^(-0.4 A_lambda)
// with A_lambda = A_V * extinction_ratio(law, lambda, R_V); this module gives that ratio A_lambda / A_V.
// R_V = A_V / E(B-V) is the ratio of total to selective extinction: about 3.1 for the diffuse
// Milky Way, larger (flatter curves, bigger grains) in dense clouds, smaller in some sight lines.
//
// The laws (all as functions of x = 1 / lambda in um^-1, lambda the VACUUM wavelength):
//
//   cardelli1989     Cardelli, Clayton & Mathis 1989, ApJ 345, 245 ("CCM89"): the Milky Way mean
//                    R_V-dependent law A_lambda / A_V = a(x) + b(x) / R_V (their eq. 1), with a and b
//                    piecewise: infrared power law (0.3 <= x < 1.1, eq. 2), optical/near-IR
//                    polynomials in y = x - 1.82 (1.1 <= x < 3.3, eq. 3), ultraviolet with the 2175 A
//                    bump as a Drude-like term and a far-UV curvature above x = 5.9 (3.3 <= x < 8,
//                    eq. 4), far-UV cubic (8 <= x <= 10, eq. 5). Range 0.1 to 3.33 um: the domain of
//                    eqs. 2-5. (CCM89 quote their fit for 0.125 to 3.5 um, from memory; the
//                    8-10 um^-1 segment is their extrapolation towards 1000 A.) Equation numbers of the
//                    papers here and in extinction.cpp are from memory.
//   odonnell1994     O'Donnell 1994, ApJ 422, 158: CCM89 with revised coefficients for the optical
//                    polynomials (1.1 <= x < 3.3), refitted to optical data; the infrared
//                    and ultraviolet parts are CCM89's. Same range as CCM89. This is what the IDL
//                    Astronomy Library's CCM_UNRED computes.
//   fitzpatrick1999  Fitzpatrick 1999, PASP 111, 63 ("F99"): an R_V-dependent curve, in the ultraviolet
//                    (lambda <= 2700 A) the Fitzpatrick & Massa 1990 (ApJS 72, 163) parametrisation
//                    with F99's R_V-dependent coefficients, in the optical and infrared a natural cubic
//                    spline through anchor points (F99 section 3 and Table 3) in A_lambda / E(B-V):
//                    0 at x = 0, IR points at 2.65 and 1.22 um scaling with R_V, optical points at
//                    6000, 5470, 4670 and 4110 A given by polynomials in R_V, and two points from the
//                    UV formula at 2700 and 2600 A that tie the spline to it. The optical polynomials
//                    are E. Fitzpatrick's updated ones used by the IDL routine FM_UNRED and by
//                    python3-extinction, not the values printed in F99's Table 3. Range 910 A to
//                    6 um, the range FM_UNRED and python3-extinction document for this curve (whose
//                    documentation adds that F99's claimed validity goes down only to 1150 A).
//                    Note: F99's anchors define V as the Johnson V BAND, so the monochromatic ratio at
//                    0.55 um is about 0.98, not 1 (0.979 at R_V = 3.1).
//   calzetti2000     Calzetti et al. 2000, ApJ 533, 682, eq. 4: the attenuation of starburst galaxies
//                    (dust mixed with the stars, not a screen; no 2175 A bump),
//                    k(lambda) = A_lambda / E(B-V)_stars =
//                      2.659 (-2.156 + 1.509 x - 0.198 x^2 + 0.011 x^3) + R_V    0.12 <= lambda < 0.63 um
//                      2.659 (-1.857 + 1.040 x) + R_V                            0.63 <= lambda <= 2.2 um
//                    and A_lambda / A_V = k / R_V, R_V = 4.05 +- 0.80 (their eq. 5). Range 0.12 to
//                    2.2 um, as published. The two halves of eq. 4 do not quite meet: at 0.63 um the
//                    ratio steps UP by 0.0062 (0.7 %; k by 0.025) going to longer wavelengths.
//                    With R_V below 3.68 the red half reaches k < 0 inside the range (beyond 1.50 um
//                    for R_V = 3.1): a negative A_lambda, returned as the formula gives it.
//
// Agreement: the four laws reproduce python3-extinction 0.4.6 (K. Barbary; functions ccm89,
// odonnell94, fitzpatrick99, calzetti00) to rounding, checked by tests/reference/test_extinction_laws.py.
// That library extrapolates silently outside the ranges; planckton refuses instead (InputError).
//
// Example:
//   using planckton::ExtinctionLaw;
//   double r = planckton::extinction_ratio(ExtinctionLaw::kCardelli1989, 0.44e-6, 3.1);  // B: ~1.32
//   double a_lambda = 0.5 * r;                          // A_lambda in mag for A_V = 0.5 mag
//   flux *= std::pow(10.0, -0.4 * a_lambda);            // redden an intrinsic flux
//   const planckton::ExtinctionLawInfo* info = planckton::find_extinction_law("calzetti2000");
//
// In: a vacuum wavelength in metres and R_V. Out: A_lambda / A_V (dimensionless; positive except for
// Calzetti 2000 with a small R_V, see above). Evaluation allocates nothing and keeps no state: safe
// from any number of threads.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace planckton {

enum class ExtinctionLaw { kCardelli1989, kODonnell1994, kFitzpatrick1999, kCalzetti2000 };

struct ExtinctionLawInfo {
  ExtinctionLaw law;
  const char* id;           // request name: "cardelli1989", "odonnell1994", "fitzpatrick1999", "calzetti2000"
  const char* citation;     // full reference, e.g. "Cardelli, Clayton & Mathis 1989, ApJ 345, 245"
  const char* description;  // one line for people
  double min_wavelength_m;  // validity range (vacuum wavelength, inclusive); see the header comment
  double max_wavelength_m;
  double default_r_v;       // 3.1 for the Milky Way laws, 4.05 for Calzetti 2000
};

// All four laws, in the order of the enum.
const std::vector<ExtinctionLawInfo>& extinction_laws();

// The law with this request name, or nullptr if there is none.
const ExtinctionLawInfo* find_extinction_law(std::string_view id);

const ExtinctionLawInfo& extinction_law_info(ExtinctionLaw law);

// A_lambda / A_V at the vacuum wavelength (m) for the given R_V = A_V / E(B-V).
// Throws InputError (science/input_error.h) with field `field` and a message naming the law and its
// range in micrometres when the wavelength is outside the law's range (or not finite), or when r_v is
// not finite and positive. Never extrapolates.
double extinction_ratio(ExtinctionLaw law, double wavelength_m, double r_v,
                        const std::string& field = "model.extinction");

}  // namespace planckton
