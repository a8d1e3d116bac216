// The model family: what a fit can compare with the data beyond a bare Planck curve.
//
// Every model is a sum of components, each a scale times a shape factor times a Planck curve, seen
// through optional extinction and redshift. In the convention of the data (planck.h, with its
// prefactor p(nu)), at an observed frequency nu:
//
//   F(nu) = A(lambda) sum_c S_c g_c(nu') p(nu) / (exp(h nu' / k T_c) - 1),   nu' = (1 + z) nu
//
//   planck             one component, g = 1; S is the solid angle (sr) for flux densities, the
//                      emissivity for intensities, a normalisation for relative spectra.
//   diluted_planck     F_nu = pi theta^2 zeta^2 B_nu(T): the photosphere of the expanding-
//                      photosphere method (R. P. Kirshner & J. Kwan, ApJ 193, 27 (1974); R. C.
//                      Eastman, B. P. Schmidt & R. Kirshner, ApJ 466, 911 (1996)), which radiates
//                      below the black body of its colour temperature by the dilution factor zeta.
//                      With the angular radius theta known, zeta is fitted; without it only the
//                      product theta zeta is constrained, and that is what is fitted and reported.
//   modified_black_body  dust: optically thin, g = (nu' / nu_0)^beta with nu_0 a fixed reference
//                      frequency (S is then the solid angle times the optical depth at nu_0); or the
//                      general opacity form g = 1 - exp(-(nu' / nu_t)^beta), with nu_t the frequency
//                      where the optical depth is one (R. H. Hildebrand, QJRAS 24, 267 (1983)).
//   two_temperature    two Planck components with their own scales, ordered T_1 < T_2 (the
//                      start search keeps them apart; labels follow the fitted temperatures).
//
// Extinction A(lambda) = 10^(-0.4 E(B-V) R_V a(lambda)), a = A_lambda / A_V of a published law
// (extinction.h), with E(B-V) a parameter and R_V given; in the observed frame (foreground dust in
// our Galaxy) or in the source's rest frame. The curve is computed once per request per point.
//
// Redshift: a fixed z, given. The model is evaluated in the rest frame, so temperatures, beta and
// nu_t are rest-frame values; the observed curve of a black body is again a black body, at
// T / (1 + z), with the same solid angle (B_nu(nu (1 + z); T) = (1 + z)^3 B_nu(nu; T / (1 + z)) and
// D_L = (1 + z)^2 D_A; e.g. D. W. Hogg, arXiv:astro-ph/9905116), so S keeps its meaning.
//
// Example:
//   planckton::ModelSpec dust;
//   dust.kind = planckton::ModelKind::kModifiedBlackBody;
//   dust.extinction = planckton::ExtinctionSpec{planckton::ExtinctionLaw::kCardelli1989, 3.1};
//   for (const planckton::ParameterInfo& p : planckton::model_parameters(dust)) std::puts(p.name.c_str());
//   // temperature, scale, beta, color_excess
#pragma once

#include <cmath>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "science/extinction.h"

namespace planckton {

enum class ModelKind { kPlanck, kDilutedPlanck, kModifiedBlackBody, kTwoTemperature };
enum class DustOpacity { kOpticallyThin, kGeneral };
enum class ExtinctionFrame { kObserved, kRest };

struct ExtinctionSpec {
  ExtinctionLaw law = ExtinctionLaw::kCardelli1989;
  double r_v = 3.1;
  ExtinctionFrame frame = ExtinctionFrame::kObserved;
};

// A known angular radius (diluted_planck), from a measurement or from radius / distance.
struct AngularRadius {
  double radians = 0.0;
  double relative_error = 0.0;
};

struct ModelSpec {
  ModelKind kind = ModelKind::kPlanck;
  DustOpacity opacity = DustOpacity::kOpticallyThin;
  double reference_frequency_hz = 1e12;  // nu_0 of the optically thin form (300 um)
  std::optional<ExtinctionSpec> extinction;
  double redshift = 0.0;
  std::optional<AngularRadius> angular_radius;  // diluted_planck
};

// The request names of the kinds, and back.
std::string_view model_kind_name(ModelKind kind);
std::optional<ModelKind> find_model_kind(std::string_view name);

enum class ParameterRole { kTemperature, kScale, kBeta, kTurnoverFrequency, kColorExcess };

// One parameter of a model. The solver works on an internal value u: for positive quantities
// (temperatures, scales, frequencies) p = exp(log_slope u + log_offset), so that they stay positive
// and their errors are relative; beta and E(B-V) are linear (p = u). Temperatures are rest-frame.
// Scale parameters always have u = ln S; the dilution factor and theta zeta are the same u with
// their own slope and offset (zeta = sqrt(S / (pi theta^2)), theta zeta = sqrt(S / pi) in mas).
struct ParameterInfo {
  std::string name;     // request and response name
  std::string unit;     // of the natural value; empty for a scale (the data's unit decides)
  std::string meaning;  // for people
  ParameterRole role = ParameterRole::kTemperature;
  int component = 0;    // two_temperature: 0 (cooler) or 1 (warmer)
  bool logarithmic = true;
  double log_slope = 1.0;
  double log_offset = 0.0;
  // Default bounds (natural units; infinite when unbounded) and the start where the search does
  // not set one.
  double lower = -HUGE_VAL;
  double upper = HUGE_VAL;
  double start = 0.0;

  double natural(double u) const;      // p(u)
  double internal(double p) const;     // u(p); p must be inside the domain (positive if logarithmic)
  double derivative(double u) const;   // dp / du
};

std::vector<ParameterInfo> model_parameters(const ModelSpec& spec);

}  // namespace planckton
