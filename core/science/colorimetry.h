// The colour of a light source: tristimulus values, chromaticity, correlated colour temperature
// (CCT) and the distance from the Planckian locus (Duv), from its relative spectral power.
//
// Method.
//  Tristimulus values (CIE 015:2018 Colorimetry, 4th ed., §7.1 and §7.2; section numbers from
//  memory). The source's relative spectral power S(lambda) is interpolated linearly onto the 5 nm
//  grid of the colour-matching functions x-bar, y-bar, z-bar (360-830 nm) and
//
//    X = k sum S(l) x-bar(l) dl,   Y = k sum S(l) y-bar(l) dl,   Z = k sum S(l) z-bar(l) dl,
//    dl = 5 nm, k = 100 / sum S(l) y-bar(l) dl   (so Y = 100; relative colorimetry of a source),
//
//  over the grid points where the source is defined (zero outside its data). CIE 015 asks for
//  data at 5 nm or finer and accepts linear interpolation for smooth sources when the data are at
//  least as fine as the 5 nm grid. Coarser data are interpolated linearly too, which CIE 015
//  does not endorse for them (it describes higher-order interpolation), nor for spiky sources such
//  as line spectra; a caller should say so. The source must cover at least 380-780 nm, the
//  abridged range CIE 015 permits for the sums (from memory); outside it the colour-matching
//  functions are small. Then
//
//    x = X / (X + Y + Z),  y = Y / (X + Y + Z)                       CIE 1931 xy
//    u = 4x / (-2x + 12y + 3),  v = 6y / (-2x + 12y + 3)            CIE 1960 UCS
//    u' = u,  v' = 1.5 v                                            CIE 1976 UCS
//
//  The colour-matching functions are the CIE 1931 2-degree and CIE 1964 10-degree standard
//  observers at 5 nm (core/data/*.csv, embedded at build time).
//
//  Planckian locus: the chromaticity of planck_per_wavelength(T) (planck.h, CODATA 2018 c2) by the
//  same sums over the whole 360-830 nm grid.
//
//  CCT and Duv (Y. Ohno, "Practical use and calculation of CCT and Duv", LEUKOS 10(1), 47-55,
//  2014). A table of locus points (2-degree observer, CIE 1960 uv) at temperatures spaced by 1 %
//  from 950 K to about 21000 K; the table point nearest to (u, v); Ohno's triangular solution from
//  its two neighbours, or his parabolic solution through the three points when |Duv| >= 0.002.
//  Ohno's answer then seeds a final local minimisation, ours and not Ohno's: a golden-section
//  search (J. Kiefer 1953) on ln T of the uv distance to the exact locus (not the table), within
//  0.2 % of Ohno's temperature (or between the nearest point's neighbours, should the minimum lie
//  on that bracket's edge). With 1 % steps Ohno's method alone was found off by up to 2.9 K near
//  20000 K (|Duv| <= 0.05; its Duv within 1e-4), short of the 1 K asked for; refined, CCT and Duv
//  are those of the nearest point of the exact locus (to about 1e-6 K; checked against a brute-
//  force search in colorimetry_test.cpp). Duv is that distance, positive above the locus (v greater
//  than the locus point's v).
//  CIE 015:2018 defines the CCT with the CIE 1931 2-degree observer, so the locus here always uses
//  it; CIE 015 also advises that the CCT is not meaningful far from the locus, and it is withheld
//  when |Duv| > 0.05. 1000-20000 K is the range Ohno states the method for (from memory).
//
// Example:
//   std::vector<double> wavelength_m = ..., power = ...;   // 380-780 nm or wider, 5 nm or finer
//   auto c = planckton::chromaticity_of(wavelength_m, power, planckton::Observer::kCie1931TwoDegree);
//   auto cct = planckton::correlated_colour_temperature(c.u, c.v);
//   if (cct.cct_k) std::printf("x %.4f y %.4f CCT %.1f K Duv %+.4f\n", c.x, c.y, *cct.cct_k, cct.duv);
//   // CIE D65 (core/data/cie-d65.csv): x 0.3127 y 0.3290 CCT 6503.5 K Duv +0.0032
//
// In: wavelengths in m (any order, distinct, finite, positive) and relative spectral power per
// unit wavelength (any scale; finite; negative values, e.g. noise, are summed as given), or uv.
// Out: Chromaticity with X, Y, Z (Y = 100) and its coordinates; CorrelatedColourTemperature says
// whether the CCT was withheld (cct_k empty), whether it lies in the validated range, and how it
// was computed. Bad input throws InputError.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace planckton {

enum class Observer { kCie1931TwoDegree, kCie1964TenDegree };

// "CIE 1931 2-degree", "CIE 1964 10-degree".
std::string_view observer_name(Observer observer);

struct Chromaticity {
  double X = 0.0, Y = 0.0, Z = 0.0;      // tristimulus, normalised so that Y = 100
  double x = 0.0, y = 0.0;               // CIE 1931 xy
  double u = 0.0, v = 0.0;               // CIE 1960 UCS
  double u_prime = 0.0, v_prime = 0.0;   // CIE 1976 UCS
};

struct CorrelatedColourTemperature {
  std::optional<double> cct_k;  // withheld (nullopt) when |duv| > 0.05 (CIE 015:2018), or when the
                                // nearest locus point lies beyond the table (below 950 K or above
                                // about 21000 K)
  double duv = 0.0;             // signed distance from the Planckian locus in CIE 1960 uv (+ above)
  double nearest_locus_temperature_k = 0.0;  // the locus point the distance is measured to (always given)
  bool within_range = false;    // 1000 K <= that temperature <= 20000 K (the method's validated range)
  std::string method;
};

// Tristimulus values and chromaticity of a source. Throws InputError: field "x" for wavelengths that
// are not finite, positive and distinct, or that do not cover 380-780 nm (the message gives the
// range required and the range given); field "y" for a length mismatch, a value that is not finite,
// or a spectrum without luminous power (Y <= 0).
Chromaticity chromaticity_of(const std::vector<double>& wavelength_m, const std::vector<double>& power,
                             Observer observer);

// The Planckian locus point at temperature T (K). Throws InputError (field "temperature") for a
// temperature that is not finite and positive, or so low that the visible radiance underflows.
Chromaticity planckian_chromaticity(double temperature_k, Observer observer);

// CCT and Duv of a CIE 1960 (u, v), always against the 2-degree locus: pass the uv of the source
// computed with Observer::kCie1931TwoDegree, whatever observer is reported for its chromaticity.
// Throws InputError (field "u" or "v") for a coordinate that is not finite.
CorrelatedColourTemperature correlated_colour_temperature(double u, double v);

namespace data {

// core/data/*.csv as embedded at build time (comment lines with their published source, a header
// line, then values).
extern const std::string_view kCie1931TwoDegreeCmf;   // wavelength_nm,x_bar,y_bar,z_bar (360-830, 5 nm)
extern const std::string_view kCie1964TenDegreeCmf;   // wavelength_nm,x_bar,y_bar,z_bar (360-830, 5 nm)
extern const std::string_view kCieIlluminantD65;      // wavelength_nm,relative_power (300-830, 5 nm)
extern const std::string_view kCieIlluminantD50;      // wavelength_nm,relative_power (380-780, 5 nm)

}  // namespace data

}  // namespace planckton
