#include "science/model.h"

#include <array>
#include <numbers>

namespace planckton {

namespace {

constexpr double kMilliarcsecondsPerRadian = 180.0 / std::numbers::pi * 3600.0 * 1000.0;

struct KindName {
  ModelKind kind;
  std::string_view name;
};
constexpr std::array<KindName, 4> kKindNames = {{{ModelKind::kPlanck, "planck"},
                                                 {ModelKind::kDilutedPlanck, "diluted_planck"},
                                                 {ModelKind::kModifiedBlackBody, "modified_black_body"},
                                                 {ModelKind::kTwoTemperature, "two_temperature"}}};

// Temperatures from cold dust to hot plasmas; the fit's temperature bounds narrow them.
ParameterInfo temperature(std::string name, std::string meaning, int component) {
  return {.name = std::move(name), .unit = "K", .meaning = std::move(meaning), .role = ParameterRole::kTemperature,
          .component = component, .lower = 0.1, .upper = 1e9, .start = 5000.0};
}

ParameterInfo scale(std::string name, std::string meaning, int component) {
  return {.name = std::move(name), .unit = "", .meaning = std::move(meaning), .role = ParameterRole::kScale,
          .component = component, .lower = 0.0, .start = 1.0};
}

// zeta = sqrt(S / (pi theta^2)) with theta given; theta zeta = sqrt(S / pi) in mas without it.
ParameterInfo diluted_scale(const ModelSpec& spec) {
  if (spec.angular_radius) {
    const double theta = spec.angular_radius->radians;
    return {.name = "dilution_factor", .unit = "1",
            .meaning = "dilution factor zeta: F_nu = pi theta^2 zeta^2 B_nu(T), with the angular radius theta given",
            .role = ParameterRole::kScale, .log_slope = 0.5, .log_offset = -0.5 * std::log(std::numbers::pi * theta * theta),
            .lower = 0.0, .start = 1.0};
  }
  return {.name = "angular_radius_dilution", .unit = "mas",
          .meaning = "product theta zeta of angular radius and dilution factor (the only combination the data constrain "
                     "without a known angular radius)",
          .role = ParameterRole::kScale, .log_slope = 0.5,
          .log_offset = -0.5 * std::log(std::numbers::pi) + std::log(kMilliarcsecondsPerRadian), .lower = 0.0, .start = 1.0};
}

ParameterInfo linear(std::string name, std::string unit, std::string meaning, ParameterRole role, double lower,
                     double upper, double start) {
  return {.name = std::move(name), .unit = std::move(unit), .meaning = std::move(meaning), .role = role,
          .logarithmic = false, .lower = lower, .upper = upper, .start = start};
}

}  // namespace

double ParameterInfo::natural(double u) const { return logarithmic ? std::exp(log_slope * u + log_offset) : u; }
double ParameterInfo::internal(double p) const { return logarithmic ? (std::log(p) - log_offset) / log_slope : p; }
double ParameterInfo::derivative(double u) const { return logarithmic ? log_slope * natural(u) : 1.0; }

std::string_view model_kind_name(ModelKind kind) {
  for (const KindName& k : kKindNames) {
    if (k.kind == kind) return k.name;
  }
  return "planck";
}

std::optional<ModelKind> find_model_kind(std::string_view name) {
  for (const KindName& k : kKindNames) {
    if (k.name == name) return k.kind;
  }
  return std::nullopt;
}

std::vector<ParameterInfo> model_parameters(const ModelSpec& spec) {
  std::vector<ParameterInfo> list;
  switch (spec.kind) {
    case ModelKind::kPlanck:
      list.push_back(temperature("temperature", "temperature of the black body", 0));
      list.push_back(scale("scale", "solid angle, emissivity or normalisation (see the data's unit)", 0));
      break;
    case ModelKind::kDilutedPlanck:
      list.push_back(temperature("temperature", "colour temperature of the photosphere", 0));
      list.push_back(diluted_scale(spec));
      break;
    case ModelKind::kModifiedBlackBody: {
      list.push_back(temperature("temperature", "dust temperature", 0));
      list.push_back(scale("scale",
                           spec.opacity == DustOpacity::kOpticallyThin
                               ? "solid angle times the optical depth at the reference frequency"
                               : "solid angle of the emitting region",
                           0));
      list.back().start = 1e-12;
      list.push_back(linear("beta", "1", "emissivity index: optical depth proportional to nu^beta",
                            ParameterRole::kBeta, 0.0, 5.0, 1.5));
      if (spec.opacity == DustOpacity::kGeneral) {
        list.push_back({.name = "turnover_frequency", .unit = "Hz",
                        .meaning = "frequency where the optical depth is one (rest frame)",
                        .role = ParameterRole::kTurnoverFrequency, .lower = 1e8, .upper = 1e17, .start = 1e12});
      }
      break;
    }
    case ModelKind::kTwoTemperature:
      list.push_back(temperature("temperature_1", "temperature of the cooler component", 0));
      list.push_back(scale("scale_1", "scale of the cooler component", 0));
      list.push_back(temperature("temperature_2", "temperature of the warmer component", 1));
      list.push_back(scale("scale_2", "scale of the warmer component", 1));
      break;
  }
  if (spec.extinction) {
    list.push_back(linear("color_excess", "mag", "colour excess E(B-V) of the extinction law", ParameterRole::kColorExcess,
                          0.0, 10.0, 0.0));
  }
  return list;
}

}  // namespace planckton
