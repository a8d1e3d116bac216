#include "api/model_request.h"

#include <cmath>
#include <numbers>

#include "science/extinction.h"
#include "science/input_error.h"
#include "science/units.h"

namespace planckton::api {

namespace {

using namespace json_reading;

struct AngleUnit {
  const char* name;
  double radians;
};
constexpr double kDegree = std::numbers::pi / 180.0;
constexpr AngleUnit kAngleUnits[] = {
    {"rad", 1.0}, {"deg", kDegree}, {"arcsec", kDegree / 3600.0}, {"mas", kDegree / 3.6e6}, {"uas", kDegree / 3.6e9}};

std::vector<std::string> kind_names() {
  return {"planck", "diluted_planck", "modified_black_body", "two_temperature"};
}

std::vector<std::string> law_names() {
  std::vector<std::string> names;
  for (const ExtinctionLawInfo& law : extinction_laws()) names.emplace_back(law.id);
  return names;
}

// {"value", "unit"} of a spectral coordinate (any x_unit) -> Hz.
double frequency_at(const element& value, const std::string& pointer) {
  const Members m(value, pointer, {"value", "unit"});
  const double v = number_at(m.require("value"), m.at("value"));
  const std::string unit = string_at(m.require("unit"), m.at("unit"));
  if (!(v > 0.0)) fail(m.at("value"), "must be positive");
  try {
    return to_frequency(parse_spectral_axis_unit(unit), v);
  } catch (const InputError& e) {
    fail(m.at("unit"), e.what(), documented_spectral_axis_units());
  }
}

// {"value", "unit", "error"} -> SI with relative error; `to_si` parses the unit.
template <class Parse>
MeasuredSize size_at(const element& value, const std::string& pointer, Parse to_si, const std::vector<std::string>& units) {
  const Members m(value, pointer, {"value", "unit", "error"});
  const double v = number_at(m.require("value"), m.at("value"));
  const std::string unit = string_at(m.require("unit"), m.at("unit"));
  double error = 0.0;
  if (const auto e = m.find("error")) error = number_at(*e, m.at("error"));
  if (!(v > 0.0)) fail(m.at("value"), "must be positive");
  if (!(error >= 0.0)) fail(m.at("error"), "must not be negative");
  const std::optional<double> factor = to_si(unit);
  if (!factor) fail(m.at("unit"), "is not a known unit here", units);
  return {v * *factor, error / v};
}

std::optional<double> angle_factor(const std::string& unit) {
  for (const AngleUnit& a : kAngleUnits) {
    if (unit == a.name) return a.radians;
  }
  return std::nullopt;
}

std::optional<double> length_factor(const std::string& unit) {
  try {
    return parse_length_unit(unit);
  } catch (const InputError&) {
    return std::nullopt;
  }
}

DustOpacityInput dust_opacity_at(const element& value, const std::string& pointer) {
  const Members m(value, pointer, {"value", "unit", "at"});
  DustOpacityInput dust;
  const double v = number_at(m.require("value"), m.at("value"));
  const std::string unit = string_at(m.require("unit"), m.at("unit"));
  if (!(v > 0.0)) fail(m.at("value"), "must be positive");
  if (unit == "m2/kg") {
    dust.kappa_m2_per_kg = v;
  } else if (unit == "cm2/g") {
    dust.kappa_m2_per_kg = v * 0.1;  // 1 cm^2 / g = 1e-4 m^2 / 1e-3 kg
  } else {
    fail(m.at("unit"), "is not a known opacity unit", {"m2/kg", "cm2/g"});
  }
  dust.frequency_hz = frequency_at(m.require("at"), m.at("at"));
  return dust;
}

ExtinctionSpec extinction_at(const element& value, const std::string& pointer) {
  const Members m(value, pointer, {"law", "r_v", "frame"});
  const std::string law = string_at(m.require("law"), m.at("law"));
  const ExtinctionLawInfo* info = find_extinction_law(law);
  if (info == nullptr) fail(m.at("law"), "is not a known extinction law", law_names());
  ExtinctionSpec spec;
  spec.law = info->law;
  spec.r_v = info->default_r_v;
  if (const auto e = m.find("r_v")) spec.r_v = number_at(*e, m.at("r_v"));
  if (!(spec.r_v > 0.0) || spec.r_v > 20.0) fail(m.at("r_v"), "must be in (0, 20]");
  if (const auto e = m.find("frame")) {
    const std::string frame = string_at(*e, m.at("frame"));
    if (frame == "observed") {
      spec.frame = ExtinctionFrame::kObserved;
    } else if (frame == "rest") {
      spec.frame = ExtinctionFrame::kRest;
    } else {
      fail(m.at("frame"), "is not a known frame", {"observed", "rest"});
    }
  }
  return spec;
}

ParameterControl control_at(const element& value, const std::string& pointer) {
  const Members m(value, pointer, {"fixed", "bounds", "prior", "initial"});
  ParameterControl control;
  if (const auto e = m.find("fixed")) control.fixed = number_at(*e, m.at("fixed"));
  if (const auto e = m.find("initial")) control.initial = number_at(*e, m.at("initial"));
  if (const auto e = m.find("bounds")) control.bounds = pair_at(*e, m.at("bounds"));
  if (const auto e = m.find("prior")) {
    const Members p(*e, m.at("prior"), {"mean", "sigma"});
    control.prior = GaussianPrior{number_at(p.require("mean"), p.at("mean")), number_at(p.require("sigma"), p.at("sigma"))};
    if (!(control.prior->sigma > 0.0)) fail(p.at("sigma"), "must be positive");
  }
  if (control.fixed && (control.bounds || control.prior || control.initial)) {
    fail(m.at("fixed"), "a fixed parameter takes no bounds, prior or initial value");
  }
  return control;
}

}  // namespace

bool ModelRequest::plain() const {
  return spec.kind == ModelKind::kPlanck && !spec.extinction && spec.redshift == 0.0 && controls.empty();
}

const std::vector<std::string>& documented_angle_units() {
  static const std::vector<std::string> kNames = [] {
    std::vector<std::string> names;
    for (const AngleUnit& a : kAngleUnits) names.emplace_back(a.name);
    return names;
  }();
  return kNames;
}

ModelRequest json_reading::parse_model(const element& value) {
  const Members m(value, "/model",
                  {"kind", "opacity", "reference_frequency", "dust_opacity", "angular_radius", "radius", "extinction",
                   "redshift", "parameters"});
  ModelRequest model;
  model.kind_name = string_at(m.require("kind"), m.at("kind"));
  const std::optional<ModelKind> kind = find_model_kind(model.kind_name);
  if (!kind) fail(m.at("kind"), "is not a known model", kind_names());
  model.spec.kind = *kind;
  const bool dust = *kind == ModelKind::kModifiedBlackBody, diluted = *kind == ModelKind::kDilutedPlanck;
  const auto only_for = [&](const char* member, bool applies, const char* kinds) {
    if (m.find(member) && !applies) fail(m.at(member), std::string("applies to ") + kinds + " only");
  };
  only_for("opacity", dust, "modified_black_body");
  only_for("reference_frequency", dust, "modified_black_body");
  only_for("dust_opacity", dust, "modified_black_body");
  only_for("angular_radius", diluted, "diluted_planck");
  only_for("radius", diluted, "diluted_planck");
  if (const auto e = m.find("opacity")) {
    const std::string opacity = string_at(*e, m.at("opacity"));
    if (opacity == "thin") {
      model.spec.opacity = DustOpacity::kOpticallyThin;
    } else if (opacity == "general") {
      model.spec.opacity = DustOpacity::kGeneral;
    } else {
      fail(m.at("opacity"), "is not a known opacity form", {"thin", "general"});
    }
  }
  if (const auto e = m.find("reference_frequency")) {
    if (model.spec.opacity != DustOpacity::kOpticallyThin) {
      fail(m.at("reference_frequency"), "applies to the thin form (the general form fits turnover_frequency)");
    }
    model.spec.reference_frequency_hz = frequency_at(*e, m.at("reference_frequency"));
  }
  if (const auto e = m.find("dust_opacity")) model.dust_opacity = dust_opacity_at(*e, m.at("dust_opacity"));
  if (m.find("angular_radius") && m.find("radius")) fail(m.at("radius"), "give angular_radius or radius, not both");
  if (const auto e = m.find("angular_radius")) {
    model.angular_radius = size_at(*e, m.at("angular_radius"), angle_factor, documented_angle_units());
  }
  if (const auto e = m.find("radius")) {
    model.radius = size_at(*e, m.at("radius"), length_factor, documented_length_units());
  }
  if (const auto e = m.find("extinction")) model.spec.extinction = extinction_at(*e, m.at("extinction"));
  if (const auto e = m.find("redshift")) {
    model.spec.redshift = number_at(*e, m.at("redshift"));
    if (!(model.spec.redshift >= 0.0) || model.spec.redshift > 20.0) fail(m.at("redshift"), "must be in [0, 20]");
  }
  if (model.angular_radius) model.spec.angular_radius = AngularRadius{model.angular_radius->value, model.angular_radius->relative_error};
  if (const auto e = m.find("parameters")) {
    simdjson::dom::object object;
    if (e->get_object().get(object)) fail(m.at("parameters"), std::string("must be an object, is ") + type_name(*e));
    std::vector<std::string> names;
    for (const ParameterInfo& p : model_parameters(model.spec)) names.push_back(p.name);
    if (model.radius) names = [&] {  // the radius turns theta zeta into the dilution factor
      ModelSpec with_theta = model.spec;
      with_theta.angular_radius = AngularRadius{1.0, 0.0};
      std::vector<std::string> list;
      for (const ParameterInfo& p : model_parameters(with_theta)) list.push_back(p.name);
      return list;
    }();
    const Members parameters(*e, m.at("parameters"), names);
    for (const std::string& name : names) {
      const auto c = parameters.find(name);
      if (!c) continue;
      const ParameterControl control = control_at(*c, parameters.at(name));
      // An empty control asks for nothing: the request stays what it would be without it.
      if (control.fixed || control.bounds || control.prior || control.initial) model.controls[name] = control;
    }
  }
  return model;
}

}  // namespace planckton::api
