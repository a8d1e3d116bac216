// The request and response documents, problem documents and tables (core/api).
#include <gtest/gtest.h>

#include "science/passband.h"
#include "science/planck.h"
#include "science/synthetic_photometry.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "api/fit_request.h"
#include "api/fit_service.h"
#include "api/problem.h"
#include "api/table_reader.h"
#include "science/constants.h"
#include "science/peaks.h"
#include "science/planck.h"
#include "science/units.h"
#include "test_support.h"

namespace {

using nlohmann::json;
using planckton::api::Problem;
using planckton::api::ProblemError;
using planckton::api::TableRequestOptions;

using planckton::testing::RelativelyNear;

constexpr double kTemperature = 5800.0;
constexpr double kScale = 1e-15;

// A 5800 K black body in W/m2/nm at n wavelengths from 350 to 1000 nm, 1 % errors, seeded noise.
struct Samples {
  std::vector<double> x, y, y_error;
};

Samples black_body_samples(int n, unsigned seed = 1234) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  const auto flux = planckton::parse_flux_density_unit("W/m2/nm");
  Samples s;
  for (int i = 0; i < n; ++i) {
    const double lambda = 350.0 + 650.0 * i / (n - 1);
    const double nu = planckton::constants::kSpeedOfLight / (lambda * 1e-9);
    const double y = kScale * planckton::planck_radiance(flux.convention, nu, kTemperature) / flux.to_si;
    s.x.push_back(lambda);
    s.y_error.push_back(0.01 * y);
    s.y.push_back(y + 0.01 * y * normal(rng));
  }
  return s;
}

json valid_request(int n = 60) {
  const Samples s = black_body_samples(n);
  return {{"spectrum", {{"x", s.x}, {"x_unit", "nm"}, {"y", s.y}, {"y_unit", "W/m2/nm"}, {"y_error", s.y_error}}}};
}

// The problem a call throws; fails the test when it throws none (or something else).
Problem problem_of(const std::function<void()>& call) {
  try {
    call();
  } catch (const ProblemError& e) {
    return e.problem();
  } catch (const std::exception& e) {
    ADD_FAILURE() << "threw something other than ProblemError: " << e.what();
    return {};
  }
  ADD_FAILURE() << "no ProblemError";
  return {};
}

Problem problem_of_document(const json& document) {
  return problem_of([&] { planckton::api::fit_document(document); });
}
Problem problem_of_text(const std::string& text) {
  return problem_of([&] { planckton::api::fit_json_text(text); });
}

// RFC 9457 members every problem carries.
void expect_well_formed(const Problem& p) {
  EXPECT_FALSE(p.type.empty());
  EXPECT_FALSE(p.title.empty());
  EXPECT_FALSE(p.detail.empty());
  const auto doc = p.to_json();
  EXPECT_EQ(doc.at("type"), p.type);
  EXPECT_EQ(doc.at("title"), p.title);
  EXPECT_EQ(doc.at("status"), p.status);
  EXPECT_EQ(doc.at("detail"), p.detail);
}

void expect_invalid_at(const Problem& p, const std::string& pointer) {
  SCOPED_TRACE(pointer);
  expect_well_formed(p);
  EXPECT_EQ(p.status, 422);
  EXPECT_EQ(p.type, "/problems/invalid-value");
  EXPECT_EQ(p.pointer, pointer) << p.detail;
  EXPECT_EQ(p.to_json().at("pointer"), pointer);
}

void expect_malformed(const Problem& p) {
  expect_well_formed(p);
  EXPECT_EQ(p.status, 400) << p.detail;  // RFC 9457 / HTTP: a body that cannot be read is a 400
  EXPECT_EQ(p.type, "/problems/malformed-document");
}

// ---------------------------------------------------------------------------------------------
// The response document.

TEST(Api, ValidRequestAnswersTheDocumentedMembers) {
  // Source: fit_response.h / fit_request.h (the documented members and units).
  const json request = valid_request(60);
  const auto r = planckton::api::fit_document(request);

  EXPECT_EQ(r.at("model"), "planck");
  EXPECT_EQ(r.begin().key(), "model");  // fit_response.h: members in written order, model first
  EXPECT_EQ(r.at("status"), "converged");

  const auto& t = r.at("parameters").at("temperature");
  EXPECT_EQ(t.at("unit"), "K");
  const double value = t.at("value").get<double>();
  const double error = t.at("error").get<double>();
  EXPECT_GT(error, 0.0);
  EXPECT_LT(std::abs(value - kTemperature), 3.0 * error);  // common practice: within 3 sigma
  ASSERT_TRUE(t.at("interval_68").is_array());
  ASSERT_EQ(t.at("interval_68").size(), 2u);
  ASSERT_EQ(t.at("interval_95").size(), 2u);
  const double lo68 = t["interval_68"][0], hi68 = t["interval_68"][1];
  const double lo95 = t["interval_95"][0], hi95 = t["interval_95"][1];
  EXPECT_LT(lo95, lo68);
  EXPECT_LT(lo68, value);
  EXPECT_LT(value, hi68);
  EXPECT_LT(hi68, hi95);

  const auto& peaks = r.at("peaks");
  EXPECT_EQ(peaks.at("frequency").at("unit"), "Hz");
  EXPECT_EQ(peaks.at("wavelength").at("unit"), "nm");
  EXPECT_TRUE(RelativelyNear(peaks["frequency"]["value"].get<double>(), planckton::peak_frequency(3.0, value), 1e-12));
  EXPECT_TRUE(RelativelyNear(peaks["wavelength"]["value"].get<double>(),
                             planckton::peak_wavelength(5.0, value) * 1e9, 1e-12));  // m -> nm
  EXPECT_EQ(peaks.at("of_data"), "wavelength");  // the data are per unit wavelength

  const auto& stats = r.at("statistics");
  const double chi2 = stats.at("chi_square").get<double>();
  const int dof = stats.at("degrees_of_freedom").get<int>();
  EXPECT_EQ(dof, 58);
  EXPECT_TRUE(RelativelyNear(stats.at("reduced_chi_square").get<double>(), chi2 / dof, 1e-14));
  const double p = stats.at("p_value").get<double>();
  EXPECT_GE(p, 0.0);
  EXPECT_LE(p, 1.0);
  EXPECT_EQ(stats.at("points_given"), 60);
  EXPECT_EQ(stats.at("points_used"), 60);
  EXPECT_EQ(stats.at("points_excluded"), 0);

  EXPECT_TRUE(r.at("warnings").is_array());
  EXPECT_TRUE(r.at("warnings").empty()) << r.at("warnings").dump();
  EXPECT_EQ(r.at("provenance").at("constants"), "CODATA 2018");

  // A flux density: the scale is a solid angle and the derived block has flux and angular size.
  EXPECT_EQ(r.at("parameters").at("scale").at("unit"), "sr");
  EXPECT_TRUE(r.at("derived").contains("bolometric_flux"));
  EXPECT_EQ(r.at("derived").at("angular_radius").at("unit"), "mas");
  EXPECT_FALSE(r.at("derived").contains("radius"));
}

TEST(Api, JsonTextAndDocumentGiveTheSameResponse) {
  // Source: fit_service.h (both front ends answer the same document).
  const json request = valid_request(40);
  EXPECT_EQ(planckton::api::fit_json_text(request.dump()), planckton::api::fit_document(request));
}

TEST(Api, NoErrorsAreReportedAsEstimated) {
  // Source: planck_fit.h step 3 and fit_response.cpp.
  json request = valid_request(80);
  request["spectrum"].erase("y_error");
  const auto r = planckton::api::fit_document(request);
  EXPECT_TRUE(r.at("statistics").at("chi_square").is_null());
  EXPECT_TRUE(r.at("statistics").at("p_value").is_null());
  EXPECT_TRUE(r.at("statistics").at("reduced_chi_square").is_null());
  EXPECT_EQ(r.at("statistics").at("residual_scatter").at("unit"), "W/m2/nm");
  const auto& warnings = r.at("warnings");
  EXPECT_TRUE(std::any_of(warnings.begin(), warnings.end(), [](const auto& w) { return w.at("code") == "errors_estimated"; }))
      << warnings.dump();
  for (const auto& w : warnings) EXPECT_FALSE(w.at("message").get<std::string>().empty());
}

TEST(Api, NullErrorsMeanNoErrors) {
  // Source: fit_request.cpp (a null y_error is treated as absent).
  json request = valid_request(30);
  request["spectrum"]["y_error"] = nullptr;
  const auto r = planckton::api::fit_document(request);
  EXPECT_TRUE(r.at("statistics").at("chi_square").is_null());
}

TEST(Api, DistanceGivesRadiusAndLuminosity) {
  // Source: fit_response.h (units at this edge).
  json request = valid_request(60);
  request["options"] = {{"distance", {{"value", 10.0}, {"unit", "pc"}, {"error", 0.5}}}};
  const auto r = planckton::api::fit_document(request);
  const auto& derived = r.at("derived");
  ASSERT_TRUE(derived.contains("radius"));
  ASSERT_TRUE(derived.contains("luminosity"));
  EXPECT_EQ(derived["radius"]["unit"], "m");
  // IAU 2015 Resolution B3 nominal solar radius and luminosity
  EXPECT_TRUE(RelativelyNear(derived["radius"]["solar_radii"].get<double>(),
                             derived["radius"]["value"].get<double>() / 6.957e8, 1e-12));
  EXPECT_TRUE(RelativelyNear(derived["luminosity"]["solar_luminosities"].get<double>(),
                             derived["luminosity"]["value"].get<double>() / 3.828e26, 1e-12));
  // from memory: L = 4 pi d^2 F
  const double d = 10.0 * planckton::constants::kParsec;
  EXPECT_TRUE(RelativelyNear(derived["luminosity"]["value"].get<double>(),
                             4.0 * std::numbers::pi * d * d * derived["bolometric_flux"]["value"].get<double>(), 1e-12));
}

TEST(Api, RobustLossIsEchoed) {
  // Source: fit_request.h (options.loss).
  json request = valid_request(60);
  request["options"] = {{"loss", {{"kind", "cauchy"}, {"scale", 2.0}}}};
  const auto r = planckton::api::fit_document(request);
  const auto& loss = r.at("statistics").at("robust_loss");
  EXPECT_EQ(loss.at("kind"), "cauchy");
  EXPECT_EQ(loss.at("scale"), 2.0);
  EXPECT_GE(loss.at("cost").get<double>(), 0.0);
}

TEST(Api, ExcludeIsCounted) {
  // Source: spectrum.h (exclude ranges in x_unit).
  json request = valid_request(66);  // x = 350, 360, ..., 1000
  request["spectrum"]["exclude"] = json::array({json::array({595.0, 705.0})});
  const auto r = planckton::api::fit_document(request);
  EXPECT_EQ(r.at("statistics").at("points_excluded"), 11);
  EXPECT_EQ(r.at("statistics").at("points_used"), 55);
}

TEST(Api, RequestIsParsedIntoTheScienceStructs) {
  // Source: fit_request.h (the request document layout).
  json request = valid_request(10);
  request["model"] = {{"kind", "planck"}};
  request["options"] = {{"temperature_bounds", {100.0, 20000.0}},
                        {"loss", {{"kind", "huber"}, {"scale", 1.5}}},
                        {"distance", {{"value", 120.0}, {"unit", "pc"}, {"error", 5.0}}},
                        {"max_iterations", 50},
                        {"time_budget_seconds", 2.5}};
  request["spectrum"]["exclude"] = {{500.0, 510.0}};
  const auto parsed = planckton::api::parse_fit_request(request);
  EXPECT_EQ(parsed.spectrum.x.size(), 10u);
  EXPECT_EQ(parsed.spectrum.x_unit, "nm");
  EXPECT_EQ(parsed.spectrum.y_unit, "W/m2/nm");
  EXPECT_EQ(parsed.spectrum.y_error.size(), 10u);
  ASSERT_EQ(parsed.spectrum.exclude.size(), 1u);
  EXPECT_EQ(parsed.spectrum.exclude[0][0], 500.0);
  EXPECT_EQ(parsed.spectrum.exclude[0][1], 510.0);
  EXPECT_EQ(parsed.model.kind_name, "planck");
  EXPECT_EQ(parsed.fit_options.min_temperature_k, 100.0);
  EXPECT_EQ(parsed.fit_options.max_temperature_k, 20000.0);
  EXPECT_EQ(parsed.fit_options.loss, planckton::RobustLoss::kHuber);
  EXPECT_EQ(parsed.fit_options.loss_scale, 1.5);
  EXPECT_EQ(parsed.loss_name, "huber");
  EXPECT_EQ(parsed.fit_options.max_iterations, 50);
  EXPECT_EQ(parsed.fit_options.time_budget_seconds, 2.5);
  ASSERT_TRUE(parsed.distance.has_value());
  EXPECT_EQ(parsed.distance->value, 120.0);
  EXPECT_EQ(parsed.distance->unit, "pc");
  EXPECT_EQ(parsed.distance->error, 5.0);
}

TEST(Api, DefaultsWhenOptionsAreAbsent) {
  // Source: planck_fit.h defaults.
  const auto parsed = planckton::api::parse_fit_request(valid_request(10));
  const planckton::PlanckFitOptions defaults;
  EXPECT_EQ(parsed.model.kind_name, "planck");
  EXPECT_EQ(parsed.fit_options.min_temperature_k, defaults.min_temperature_k);
  EXPECT_EQ(parsed.fit_options.max_temperature_k, defaults.max_temperature_k);
  EXPECT_EQ(parsed.fit_options.loss, planckton::RobustLoss::kNone);
  EXPECT_FALSE(parsed.distance.has_value());
}

TEST(Api, PointerForField) {
  // Source: fit_request.h; RFC 6901 pointer syntax.
  using planckton::api::pointer_for_field;
  EXPECT_EQ(pointer_for_field("x", std::nullopt), "/spectrum/x");
  EXPECT_EQ(pointer_for_field("y_error", 3), "/spectrum/y_error/3");
  EXPECT_EQ(pointer_for_field("options.temperature_bounds", std::nullopt), "/options/temperature_bounds");
  EXPECT_EQ(pointer_for_field("options.loss.scale", std::nullopt), "/options/loss/scale");
  EXPECT_EQ(pointer_for_field("distance.unit", std::nullopt), "/options/distance/unit");
  EXPECT_EQ(pointer_for_field("exclude", 1), "/spectrum/exclude/1");
}

// ---------------------------------------------------------------------------------------------
// Problem documents.

TEST(ApiProblems, MalformedJson) {
  // Source: fit_service.h (malformed JSON becomes a 400 problem); RFC 8259 grammar.
  for (const char* text : {"{", "{\"spectrum\": }", "not json", "{\"a\":1}{\"b\":2}", "[1,2,]"}) {
    SCOPED_TRACE(text);
    expect_malformed(problem_of_text(text));
  }
}

TEST(ApiProblems, EmptyBody) {
  // Source: RFC 8259 (an empty text is no JSON value); fit_service.h.
  expect_malformed(problem_of_text(""));
  expect_malformed(problem_of_text("   \n"));
}

TEST(ApiProblems, TopLevelNotAnObject) {
  // Source: fit_request.h (strict validation); RFC 9457 members.
  for (const json& document : {json::array({1, 2}), json(3), json("spectrum"), json(nullptr)}) {
    const Problem p = problem_of_document(document);
    expect_well_formed(p);
    EXPECT_EQ(p.status, 422);
    EXPECT_EQ(p.type, "/problems/invalid-value");
  }
  const Problem from_text = problem_of_text("[1, 2]");
  EXPECT_EQ(from_text.status, 422);
}

TEST(ApiProblems, TopLevelPointerIsTheEmptyPointer) {
  // Found as a bug and fixed; this test would have caught it.
  const Problem p = problem_of_document(json::array({1, 2}));
  EXPECT_EQ(p.pointer, "");
}

TEST(ApiProblems, MissingSpectrum) {
  // Source: fit_request.h (missing members, with their JSON pointer).
  expect_invalid_at(problem_of_document(json::object()), "/spectrum");
  expect_invalid_at(problem_of_document({{"model", {{"kind", "planck"}}}}), "/spectrum");
}

TEST(ApiProblems, SpectrumNotAnObject) {
  // Source: fit_request.h (wrong types).
  expect_invalid_at(problem_of_document({{"spectrum", 5}}), "/spectrum");
}

TEST(ApiProblems, MissingMembers) {
  // Source: fit_request.h (missing members).
  for (const char* member : {"x", "y", "x_unit", "y_unit"}) {
    json request = valid_request(10);
    request["spectrum"].erase(member);
    expect_invalid_at(problem_of_document(request), std::string("/spectrum/") + member);
  }
}

TEST(ApiProblems, XNotAnArray) {
  // Source: fit_request.h (wrong types).
  json request = valid_request(10);
  request["spectrum"]["x"] = "500";
  expect_invalid_at(problem_of_document(request), "/spectrum/x");
  request["spectrum"]["x"] = json::object();
  expect_invalid_at(problem_of_document(request), "/spectrum/x");
}

TEST(ApiProblems, EmptyX) {
  // Source: fit_request.cpp (x must not be empty).
  json request = valid_request(10);
  request["spectrum"]["x"] = json::array();
  request["spectrum"]["y"] = json::array();
  request["spectrum"].erase("y_error");
  expect_invalid_at(problem_of_document(request), "/spectrum/x");
}

TEST(ApiProblems, StringInY) {
  // Source: fit_request.h (wrong types, JSON pointer to the element, RFC 6901).
  json request = valid_request(10);
  request["spectrum"]["y"][2] = "1.5";
  expect_invalid_at(problem_of_document(request), "/spectrum/y/2");
  request = valid_request(10);
  request["spectrum"]["y"][4] = nullptr;
  expect_invalid_at(problem_of_document(request), "/spectrum/y/4");
  request = valid_request(10);
  request["spectrum"]["y"][5] = true;
  expect_invalid_at(problem_of_document(request), "/spectrum/y/5");
}

TEST(ApiProblems, UnknownMembers) {
  // Source: fit_request.h (unknown members, with what is accepted).
  json request = valid_request(10);
  request["spectrum"]["foo"] = 1;
  const Problem p = problem_of_document(request);
  expect_invalid_at(p, "/spectrum/foo");
  EXPECT_NE(std::find(p.accepted.begin(), p.accepted.end(), "y_error"), p.accepted.end());  // lists the known members

  request = valid_request(10);
  request["bar"] = 1;
  expect_invalid_at(problem_of_document(request), "/bar");
}

TEST(ApiProblems, UnknownUnit) {
  // Source: fit_request.h / units.h (unknown units, with the accepted spellings).
  json request = valid_request(10);
  request["spectrum"]["y_unit"] = "furlong";
  const Problem p = problem_of_document(request);
  expect_invalid_at(p, "/spectrum/y_unit");
  EXPECT_FALSE(p.accepted.empty());
  EXPECT_NE(std::find(p.accepted.begin(), p.accepted.end(), "W/m2/nm"), p.accepted.end());
  EXPECT_NE(p.detail.find("furlong"), std::string::npos);

  request = valid_request(10);
  request["spectrum"]["x_unit"] = "W/m2";
  const Problem q = problem_of_document(request);
  expect_invalid_at(q, "/spectrum/x_unit");
  EXPECT_NE(std::find(q.accepted.begin(), q.accepted.end(), "nm"), q.accepted.end());
}

TEST(ApiProblems, UnknownDistanceUnit) {
  // Source: units.h (field distance.unit).
  json request = valid_request(10);
  request["options"] = {{"distance", {{"value", 10.0}, {"unit", "furlong"}}}};
  const Problem p = problem_of_document(request);
  expect_invalid_at(p, "/options/distance/unit");
  EXPECT_NE(std::find(p.accepted.begin(), p.accepted.end(), "pc"), p.accepted.end());
}

TEST(ApiProblems, UnknownModelKind) {
  // Source: fit_request.h (unknown models).
  json request = valid_request(10);
  request["model"] = {{"kind", "synchrotron"}};
  const Problem p = problem_of_document(request);
  expect_invalid_at(p, "/model/kind");
  EXPECT_EQ(p.accepted, (std::vector<std::string>{"planck", "diluted_planck", "modified_black_body", "two_temperature"}));
}

TEST(ApiProblems, UnknownOption) {
  // Source: fit_request.h (unknown options).
  json request = valid_request(10);
  request["options"] = {{"foo", 1}};
  expect_invalid_at(problem_of_document(request), "/options/foo");
}

TEST(ApiProblems, BadLossKind) {
  // Source: fit_request.h (loss kinds none, huber, cauchy).
  json request = valid_request(10);
  request["options"] = {{"loss", {{"kind", "tukey"}}}};
  const Problem p = problem_of_document(request);
  expect_invalid_at(p, "/options/loss/kind");
  EXPECT_EQ(p.accepted, (std::vector<std::string>{"none", "huber", "cauchy"}));
}

TEST(ApiProblems, BadOptionValues) {
  // Source: fit_request.h / fit_request.cpp (option ranges).
  const std::vector<std::pair<json, std::string>> cases = {
      {{{"temperature_bounds", {100.0, 10.0}}}, "/options/temperature_bounds"},
      {{{"temperature_bounds", {100.0}}}, "/options/temperature_bounds"},
      {{{"temperature_bounds", {"a", 10.0}}}, "/options/temperature_bounds/0"},
      {{{"loss", {{"kind", "huber"}, {"scale", -1.0}}}}, "/options/loss/scale"},
      {{{"max_iterations", 0}}, "/options/max_iterations"},
      {{{"max_iterations", 2.5}}, "/options/max_iterations"},
      {{{"time_budget_seconds", 0}}, "/options/time_budget_seconds"},
      {{{"distance", {{"value", -1.0}, {"unit", "pc"}}}}, "/options/distance/value"},
      {{{"distance", {{"value", 1.0}, {"unit", "pc"}, {"error", -1.0}}}}, "/options/distance/error"},
  };
  for (const auto& [options, pointer] : cases) {
    json request = valid_request(10);
    request["options"] = options;
    expect_invalid_at(problem_of_document(request), pointer);
  }
}

TEST(ApiProblems, NegativeErrorNamesItsIndex) {
  // Source: spectrum.h and fit_request.h (pointer to the first offending point).
  json request = valid_request(10);
  request["spectrum"]["y_error"][3] = -0.5;
  request["spectrum"]["y_error"][6] = -0.5;
  expect_invalid_at(problem_of_document(request), "/spectrum/y_error/3");
}

TEST(ApiProblems, ScienceErrorsMapToPointers) {
  // Source: fit_request.h pointer_for_field.
  json request = valid_request(10);
  request["spectrum"]["x"][7] = -500.0;
  expect_invalid_at(problem_of_document(request), "/spectrum/x/7");
  request = valid_request(10);
  request["spectrum"]["y"].push_back(1.0);
  expect_invalid_at(problem_of_document(request), "/spectrum/y");
  request = valid_request(10);
  request["spectrum"]["exclude"] = {{400.0, 500.0}, {700.0, 600.0}};
  expect_invalid_at(problem_of_document(request), "/spectrum/exclude/1");
}

TEST(ApiProblems, HugeNumber) {
  // Source: fit_service.cpp (numbers a double cannot hold); RFC 8259 section 6 (implementations may limit range).
  // 1e999 overflows a double: the body cannot be read as the numbers it claims to hold
  // (fit_service.cpp answers it as a malformed document).
  const Problem p = problem_of_text(
      R"({"spectrum": {"x": [1e999, 600, 700], "x_unit": "nm", "y": [1, 2, 3], "y_unit": "W/m2/nm"}})");
  expect_malformed(p);
  EXPECT_NE(p.detail.find("1e999"), std::string::npos) << p.detail;
}

TEST(ApiProblems, SpectrumAndPhotometryTogetherAreAmbiguous) {
  // Source: fit_request.cpp (a request fits one kind of data).
  json request = valid_request(10);
  request["photometry"] = json::array();
  const Problem p = problem_of_document(request);
  expect_well_formed(p);
  EXPECT_EQ(p.status, 422);
  EXPECT_EQ(p.pointer, "/photometry");
}

// Photometry of a 6,000 K black body (AB magnitudes through the shipped curves, computed by
// planckton's own synthetic photometry, which tests/reference checks against synphot).
json photometry_request() {
  json bands = json::array();
  for (const char* id : {"johnson-b", "johnson-v", "cousins-r", "2mass-j", "2mass-ks"}) {
    const planckton::Passband& band = *planckton::find_builtin_passband(id);
    const double f_nu = 1e-18 * planckton::make_band_quadrature(band, band.quoted).apply([](double nu) {
      return planckton::planck_per_frequency(nu, 6000.0);
    });
    bands.push_back({{"band", id}, {"value", -2.5 * std::log10(f_nu / 3631e-26)}, {"error", 0.02}, {"unit", "ABmag"}});
  }
  return {{"id", "sed-1"}, {"photometry", bands}};
}

TEST(ApiPhotometry, FitsCatalogueMagnitudesAndReportsEachBand) {
  const auto r = planckton::api::fit_document(photometry_request());
  EXPECT_EQ(r["id"], "sed-1");
  EXPECT_NEAR(r["parameters"]["temperature"]["value"].get<double>(), 6000.0, 1e-3);
  ASSERT_EQ(r["bands"].size(), 5u);
  const auto& v = r["bands"][1];
  EXPECT_EQ(v["band"], "johnson-v");
  EXPECT_NEAR(v["model"].get<double>(), v["value"].get<double>(), 1e-6);
  EXPECT_NEAR(v["pivot_wavelength_nm"].get<double>(), 547.9, 1.0);
  EXPECT_EQ(v["quoted"]["kind"], "band_average");
  EXPECT_EQ(r["statistics"]["bands_given"], 5);
  EXPECT_EQ(r["parameters"]["scale"]["unit"], "sr");
}

TEST(ApiPhotometry, InlineCurveFitsLikeAShippedOne) {
  json request = photometry_request();
  // johnson-v given inline, as a laboratory filter would be, in nm and decreasing order.
  const planckton::Passband& v = *planckton::find_builtin_passband("johnson-v");
  json wavelength = json::array(), response = json::array();
  for (std::size_t i = v.wavelength_m.size(); i-- > 0;) {
    wavelength.push_back(v.wavelength_m[i] * 1e9);
    response.push_back(v.response[i]);
  }
  request["photometry"][1]["band"] = {{"id", "lab-v"}, {"wavelength", wavelength}, {"wavelength_unit", "nm"},
                                      {"response", response}, {"detector", "photon_counting"}};
  const auto r = planckton::api::fit_document(request);
  EXPECT_NEAR(r["parameters"]["temperature"]["value"].get<double>(), 6000.0, 1e-3);
  EXPECT_EQ(r["bands"][1]["band"], "lab-v");
}

TEST(ApiPhotometry, ProblemsPointAtTheMeasurement) {
  // Source: photometry_request.cpp and photometry.cpp (field names), RFC 6901 pointers.
  json unknown = photometry_request();
  unknown["photometry"][2]["band"] = "johnson-q";
  EXPECT_EQ(problem_of_document(unknown).pointer, "/photometry/2/band");
  json bad_curve = photometry_request();
  bad_curve["photometry"][0]["band"] = {{"id", "f"}, {"wavelength", {400, 500, 600}}, {"wavelength_unit", "nm"},
                                        {"response", {0.1, -1, 0.2}}, {"detector", "photon_counting"}};
  EXPECT_EQ(problem_of_document(bad_curve).pointer, "/photometry/0/band/response/1");
  json no_zero_point = photometry_request();
  no_zero_point["photometry"][3]["band"] = "sdss-g";
  no_zero_point["photometry"][3]["unit"] = "Vegamag";
  EXPECT_EQ(problem_of_document(no_zero_point).pointer, "/photometry/3/zero_point");
  json one = photometry_request();
  one["photometry"] = json::array({one["photometry"][0]});
  EXPECT_EQ(problem_of_document(one).pointer, "/photometry");
  json floor_for_spectrum = valid_request(10);
  floor_for_spectrum["options"]["systematic_error"] = 0.02;
  EXPECT_EQ(problem_of_document(floor_for_spectrum).pointer, "/options/systematic_error");
  json robust = photometry_request();
  robust["options"]["loss"] = {{"kind", "huber"}};
  EXPECT_EQ(problem_of_document(robust).pointer, "/options/loss");
}

TEST(ApiPhotometry, TableOfBandsFitsAndProblemsCarryTheLine) {
  const std::string table =
      "# invented catalogue\nband,value,error,unit\njohnson-b,11.3,0.02,Vegamag\njohnson-v,10.6,0.02,Vegamag\n"
      "2mass-j,9.2,0.03,Vegamag\n";
  const auto r = planckton::api::fit_table_text(table, planckton::api::TableParameters{{"systematic_error", "0.02"}});
  EXPECT_EQ(r["bands"].size(), 3u);
  EXPECT_EQ(r["input"]["systematic_error"], 0.02);
  const Problem bad = problem_of([&] {
    planckton::api::fit_table_text("band,value,error,unit\njohnson-b,11.3,0.02,Vegamag\nwrong,10.6,0.02,Vegamag\n",
                                   planckton::api::TableParameters{});
  });
  EXPECT_EQ(bad.line, 3u);
  const Problem spectral = problem_of([&] {
    planckton::api::fit_table_text(table, planckton::api::TableParameters{{"x_unit", "nm"}});
  });
  EXPECT_EQ(spectral.parameter, "x_unit");
}

TEST(ApiProblems, DeepNesting) {
  // Source: fit_service.cpp (nesting limit against stack exhaustion); common practice.
  expect_malformed(problem_of_text(std::string(1000, '[') + std::string(1000, ']')));
  expect_malformed(problem_of_text(std::string(1000, '[')));
  expect_malformed(problem_of_text("{\"spectrum\": " + std::string(100000, '{')));
  // Shallow nesting is read and then rejected for its content, not its depth.
  const Problem shallow = problem_of_text(std::string(10, '[') + std::string(10, ']'));
  EXPECT_EQ(shallow.status, 422);
  // Brackets inside a string do not nest.
  const Problem in_string = problem_of_text("{\"spectrum\": \"" + std::string(1000, '[') + "\"}");
  EXPECT_EQ(in_string.status, 422);
  EXPECT_EQ(in_string.pointer, "/spectrum");
}

TEST(ApiProblems, OneLineSummary) {
  // Source: problem.h (one_line for stderr names the pointer).
  json request = valid_request(10);
  request["spectrum"]["y_error"][3] = -0.5;
  const Problem p = problem_of_document(request);
  EXPECT_NE(p.one_line().find("/spectrum/y_error/3"), std::string::npos) << p.one_line();
}

// ---------------------------------------------------------------------------------------------
// Tables.

std::string format_number(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.17g", v);
  return buffer;
}

// A table of the black body with the given separator; header row when header is non-empty.
std::string black_body_table(int n, const std::string& separator, const std::string& header) {
  const Samples s = black_body_samples(n);
  std::string text;
  if (!header.empty()) text += header + "\n";
  for (std::size_t i = 0; i < s.x.size(); ++i) {
    text += format_number(s.x[i]) + separator + format_number(s.y[i]) + separator + format_number(s.y_error[i]) + "\n";
  }
  return text;
}

TableRequestOptions nm_options() {
  TableRequestOptions options;
  options.x_unit = "nm";
  options.y_unit = "W/m2/nm";
  return options;
}

TEST(ApiTables, CsvWithCommentsAndHeader) {
  // Source: table_reader.h (comments, header, default columns, 1-based lines).
  const std::string text = "# a synthetic black body\n# columns: wavelength, flux, error\n\nx,y,y_error\n" +
                           black_body_table(30, ",", "") + "# trailing comment\n";
  const auto table = planckton::api::read_table(text);
  EXPECT_EQ(table.header, (std::vector<std::string>{"x", "y", "y_error"}));
  ASSERT_EQ(table.columns.size(), 3u);
  EXPECT_EQ(table.columns[0].size(), 30u);
  ASSERT_EQ(table.line_of_row.size(), 30u);
  EXPECT_EQ(table.line_of_row.front(), 5u);  // three comment/blank lines and the header come first
  EXPECT_EQ(table.line_of_row.back(), 34u);
  EXPECT_EQ(table.columns[0][0], 350.0);

  const auto r = planckton::api::fit_table_text(text, nm_options(), json::object());
  EXPECT_EQ(r.at("model"), "planck");
  EXPECT_FALSE(r.at("statistics").at("chi_square").is_null());  // the error column was used
  const double t = r["parameters"]["temperature"]["value"], e = r["parameters"]["temperature"]["error"];
  EXPECT_LT(std::abs(t - kTemperature), 3.0 * e);
}

TEST(ApiTables, TrailingCommentsOnARow) {
  // Source: table_reader.h ('#' comments).
  const auto table = planckton::api::read_table("400, 1.0  # first\n500, 2.0 # second\n");
  EXPECT_TRUE(table.header.empty());
  EXPECT_EQ(table.columns[1], (std::vector<double>{1.0, 2.0}));
}

TEST(ApiTables, CrLfLineEndings) {
  // Source: common practice (tables written on other systems end lines with CR LF).
  const auto table = planckton::api::read_table("x,y\r\n400,1.0\r\n500,2.0\r\n");
  EXPECT_EQ(table.header, (std::vector<std::string>{"x", "y"}));
  EXPECT_EQ(table.columns[1], (std::vector<double>{1.0, 2.0}));
  EXPECT_EQ(table.line_of_row, (std::vector<std::size_t>{2, 3}));
}

TEST(ApiTables, WhitespaceWithoutHeader) {
  // Source: table_reader.h (whitespace-separated, optional header, third column as error).
  const std::string text = black_body_table(25, "   ", "");
  const auto table = planckton::api::read_table(text);
  EXPECT_TRUE(table.header.empty());
  ASSERT_EQ(table.columns.size(), 3u);
  EXPECT_EQ(table.line_of_row.front(), 1u);
  const auto r = planckton::api::fit_table_text(text, nm_options(), json::object());
  EXPECT_EQ(r.at("statistics").at("points_used"), 25);
  EXPECT_FALSE(r.at("statistics").at("chi_square").is_null());  // third column taken as the error
}

TEST(ApiTables, Tsv) {
  // Source: table_reader.h (tabs; error column named sigma).
  const std::string text = black_body_table(25, "\t", "lambda\tflux\tsigma");
  const auto table = planckton::api::read_table(text);
  EXPECT_EQ(table.header, (std::vector<std::string>{"lambda", "flux", "sigma"}));
  const auto request = planckton::api::table_to_request(table, nm_options());
  EXPECT_EQ(request.at("spectrum").at("x").size(), 25u);
  EXPECT_EQ(request["spectrum"]["y_error"], json(table.columns[2]));  // "sigma" is an error column name
  const auto r = planckton::api::fit_table_text(text, nm_options(), json::object());
  EXPECT_EQ(r.at("model"), "planck");
}

TEST(ApiTables, SemicolonsAndSigns) {
  // Source: table_reader.h (semicolons; std::from_chars numbers).
  const auto table = planckton::api::read_table("+400;1e-3\n500;-2.5E2\n");
  EXPECT_EQ(table.columns[0], (std::vector<double>{400.0, 500.0}));
  EXPECT_EQ(table.columns[1], (std::vector<double>{1e-3, -250.0}));
}

TEST(ApiTables, BadNumberNamesItsLine) {
  // Source: table_reader.h (every problem names its 1-based line).
  const std::string text = "# comment\nx,y\n400,1.0\n500,2.0\n600,abc\n700,3.0\n";
  const Problem p = problem_of([&] { planckton::api::read_table(text); });
  expect_malformed(p);
  ASSERT_TRUE(p.line.has_value());
  EXPECT_EQ(*p.line, 5u);
  EXPECT_NE(p.detail.find("abc"), std::string::npos) << p.detail;
  EXPECT_EQ(p.to_json().at("line"), 5);
  // And through the fit.
  const Problem q = problem_of([&] { planckton::api::fit_table_text(text, nm_options(), json::object()); });
  ASSERT_TRUE(q.line.has_value());
  EXPECT_EQ(*q.line, 5u);
}

TEST(ApiTables, EmptyFieldIsABadNumber) {
  // Source: table_reader.h.
  const Problem p = problem_of([] { planckton::api::read_table("400,1.0\n500,\n"); });
  expect_malformed(p);
  EXPECT_EQ(p.line, std::optional<std::size_t>(2));
}

TEST(ApiTables, RowsOfDifferentWidth) {
  // Source: table_reader.h.
  const Problem p = problem_of([] { planckton::api::read_table("x y e\n400 1 0.1\n500 2\n600 3 0.1\n"); });
  expect_malformed(p);
  EXPECT_EQ(p.line, std::optional<std::size_t>(3));
  const Problem q = problem_of([] { planckton::api::read_table("400,1\n\n# c\n500,2,3\n"); });
  EXPECT_EQ(q.line, std::optional<std::size_t>(4));
}

TEST(ApiTables, NanIsMappedToItsLine) {
  // Source: fit_service.h (problems with a row carry the table's line number).
  std::string text = "# header follows\nx,y,y_error\n" + black_body_table(20, ",", "");
  // Replace the flux of the 7th data row (line 9) with nan.
  std::vector<std::string> lines;
  std::size_t start = 0;
  while (start < text.size()) {
    const std::size_t end = text.find('\n', start);
    lines.push_back(text.substr(start, end - start));
    start = end + 1;
  }
  const std::size_t row = 8;  // 0-based index of line 9
  const std::size_t comma = lines[row].find(',');
  const std::size_t second = lines[row].find(',', comma + 1);
  lines[row] = lines[row].substr(0, comma + 1) + "nan" + lines[row].substr(second);
  text.clear();
  for (const auto& line : lines) text += line + "\n";

  const Problem p = problem_of([&] { planckton::api::fit_table_text(text, nm_options(), json::object()); });
  expect_well_formed(p);
  EXPECT_EQ(p.status, 422);
  EXPECT_EQ(p.pointer, "/spectrum/y/6");
  EXPECT_EQ(p.line, std::optional<std::size_t>(9));
}

TEST(ApiTables, NegativeErrorIsMappedToItsLine) {
  // Source: fit_service.h (problems with a row carry the table's line number).
  const std::string text = "x y err\n400 1 0.1\n500 2 0.1\n# skip\n600 3 -0.1\n700 4 0.1\n";
  const Problem p = problem_of([&] { planckton::api::fit_table_text(text, nm_options(), json::object()); });
  EXPECT_EQ(p.pointer, "/spectrum/y_error/2");
  EXPECT_EQ(p.line, std::optional<std::size_t>(5));
}

TEST(ApiTables, EmptyTable) {
  // Source: table_reader.h (unreadable tables are 400 problems).
  for (const char* text : {"", "\n\n", "# only a comment\n", "x,y\n"}) {
    SCOPED_TRACE(text);
    expect_malformed(problem_of([&] { planckton::api::read_table(text); }));
  }
}

TEST(ApiTables, OneColumnOnly) {
  // Source: table_reader.cpp (x and y need two columns).
  expect_malformed(problem_of([] { planckton::api::read_table("400\n500\n600\n"); }));
  expect_malformed(problem_of([] { planckton::api::read_table("x\n400\n500\n"); }));
}

TEST(ApiTables, ColumnSelectionByName) {
  // Source: table_reader.h (columns by header name).
  const std::string text = "flux,lambda,noise\n1.0,400,0.1\n2.0,500,0.2\n3.0,600,0.3\n";
  const auto table = planckton::api::read_table(text);
  TableRequestOptions options = nm_options();
  options.x_column = "lambda";
  options.y_column = "flux";
  options.error_column = "noise";
  const auto request = planckton::api::table_to_request(table, options);
  EXPECT_EQ(request["spectrum"]["x"], json({400.0, 500.0, 600.0}));
  EXPECT_EQ(request["spectrum"]["y"], json({1.0, 2.0, 3.0}));
  EXPECT_EQ(request["spectrum"]["y_error"], json({0.1, 0.2, 0.3}));
  EXPECT_EQ(request["spectrum"]["x_unit"], "nm");
  EXPECT_EQ(request["spectrum"]["y_unit"], "W/m2/nm");

  options.x_column = "wavelength";
  const Problem p = problem_of([&] { planckton::api::table_to_request(table, options); });
  expect_well_formed(p);
  EXPECT_EQ(p.status, 422);
  EXPECT_EQ(p.accepted, table.header);  // the header's names are offered
}

TEST(ApiTables, ColumnSelectionByIndex) {
  // Source: table_reader.h (columns by 1-based index).
  const auto table = planckton::api::read_table("1.0 400 0.1 9\n2.0 500 0.2 9\n3.0 600 0.3 9\n");
  TableRequestOptions options = nm_options();
  options.x_column = "2";
  options.y_column = "1";
  options.error_column = "3";
  const auto request = planckton::api::table_to_request(table, options);
  EXPECT_EQ(request["spectrum"]["x"], json({400.0, 500.0, 600.0}));
  EXPECT_EQ(request["spectrum"]["y"], json({1.0, 2.0, 3.0}));
  EXPECT_EQ(request["spectrum"]["y_error"], json({0.1, 0.2, 0.3}));

  for (const char* bad : {"0", "5"}) {
    options.x_column = bad;
    const Problem p = problem_of([&] { planckton::api::table_to_request(table, options); });
    EXPECT_EQ(p.status, 422) << bad;
  }
}

TEST(ApiTables, ErrorColumnNoneAndDefaults) {
  // Source: table_reader.h (defaults; "none" = no errors).
  const auto table = planckton::api::read_table("400 1 0.1\n500 2 0.2\n");
  TableRequestOptions options = nm_options();
  options.error_column = "none";
  EXPECT_FALSE(planckton::api::table_to_request(table, options).at("spectrum").contains("y_error"));
  const auto two = planckton::api::read_table("400 1\n500 2\n");
  EXPECT_FALSE(planckton::api::table_to_request(two, nm_options()).at("spectrum").contains("y_error"));
  // By default x is the column named x even when it is not first.
  const auto named = planckton::api::read_table("y,x\n1,400\n2,500\n");
  const auto request = planckton::api::table_to_request(named, nm_options());
  EXPECT_EQ(request["spectrum"]["x"], json({400.0, 500.0}));
  EXPECT_EQ(request["spectrum"]["y"], json({1.0, 2.0}));
}

// Only the spectrum's per-point arrays (x, y, y_error) index table rows; a problem in another
// member must not be given the line of an unrelated row.
TEST(ApiTables, ProblemInExtraExcludeHasNoRowLine) {
  // Source: fit_service.h (only problems with a row carry a line).
  // Found as a bug and fixed; this test would have caught it.
  const std::string text = "# c\n# c\nx,y\n400,1\n500,2\n600,3\n700,4\n";
  const json extra = {{"spectrum", {{"exclude", {{400.0, 450.0}, {700.0, 600.0}}}}}};
  const Problem p = problem_of([&] { planckton::api::fit_table_text(text, nm_options(), extra); });
  EXPECT_EQ(p.pointer, "/spectrum/exclude/1");
  EXPECT_FALSE(p.line.has_value()) << "line " << *p.line;
}

TEST(ApiTables, ExtraMembersAreMerged) {
  // Source: fit_service.h (extra_request_members merged into the request).
  const std::string text = black_body_table(66, ",", "x,y,y_error");
  json extra = {{"spectrum", {{"exclude", {{595.0, 705.0}}}}}, {"options", {{"loss", {{"kind", "huber"}}}}}};
  const auto r = planckton::api::fit_table_text(text, nm_options(), extra);
  EXPECT_EQ(r.at("statistics").at("points_excluded"), 11);
  EXPECT_EQ(r.at("statistics").at("robust_loss").at("kind"), "huber");
}

}  // namespace

// ---- the model family (model_request.h, fit_response.cpp's model document) ------------------

namespace {

json with_model(const json& model) {
  json request = valid_request(60);
  request["model"] = model;
  return request;
}

}  // namespace

TEST(ApiModels, PlainPlanckTakesTheDedicatedFitAndAnythingElseTheModelFamily) {
  // Source: model_request.h (ModelRequest::plain).
  EXPECT_TRUE(planckton::api::parse_fit_request(valid_request(10)).model.plain());
  EXPECT_TRUE(planckton::api::parse_fit_request(with_model({{"kind", "planck"}})).model.plain());
  EXPECT_FALSE(planckton::api::parse_fit_request(with_model({{"kind", "planck"}, {"redshift", 0.1}})).model.plain());
  EXPECT_FALSE(planckton::api::parse_fit_request(
                   with_model({{"kind", "planck"}, {"parameters", {{"temperature", {{"initial", 5000}}}}}}))
                   .model.plain());
  // The same spectrum gives the same temperature through both paths (the controls change nothing).
  const json plain = planckton::api::fit_document(valid_request(60));
  const json family = planckton::api::fit_document(
      with_model({{"kind", "planck"}, {"parameters", {{"temperature", {{"initial", 3000}}}}}}));
  EXPECT_TRUE(RelativelyNear(family["parameters"]["temperature"]["value"].get<double>(),
                             plain["parameters"]["temperature"]["value"].get<double>(), 1e-7));
  EXPECT_TRUE(RelativelyNear(family["parameters"]["temperature"]["error"].get<double>(),
                             plain["parameters"]["temperature"]["error"].get<double>(), 1e-4));
  EXPECT_TRUE(RelativelyNear(family["peaks"]["wavelength"]["value"].get<double>(),
                             plain["peaks"]["wavelength"]["value"].get<double>(), 1e-7));
  EXPECT_EQ(family["parameters"]["temperature"]["fixed"], false);
}

TEST(ApiModels, BadModelMembersNameTheirPointer) {
  // Source: model_request.h (validation is strict, with the pointer of the offending value).
  const std::vector<std::pair<json, std::string>> cases = {
      {{{"kind", "planck"}, {"opacity", "thin"}}, "/model/opacity"},
      {{{"kind", "modified_black_body"}, {"opacity", "thick"}}, "/model/opacity"},
      {{{"kind", "planck"}, {"extinction", {{"law", "galactic"}}}}, "/model/extinction/law"},
      {{{"kind", "planck"}, {"extinction", {{"law", "cardelli1989"}, {"r_v", -1}}}}, "/model/extinction/r_v"},
      {{{"kind", "planck"}, {"extinction", {{"law", "cardelli1989"}, {"frame", "host"}}}}, "/model/extinction/frame"},
      {{{"kind", "planck"}, {"redshift", -0.5}}, "/model/redshift"},
      {{{"kind", "planck"}, {"parameters", {{"beta", {{"fixed", 2}}}}}}, "/model/parameters/beta"},
      {{{"kind", "planck"}, {"parameters", {{"temperature", {{"fixed", 2}, {"initial", 3}}}}}},
       "/model/parameters/temperature/fixed"},
      {{{"kind", "planck"}, {"parameters", {{"temperature", {{"bounds", {9000, 3000}}}}}}},
       "/model/parameters/temperature/bounds"},
      {{{"kind", "planck"}, {"parameters", {{"temperature", {{"prior", {{"mean", 5000}, {"sigma", 0}}}}}}}},
       "/model/parameters/temperature/prior/sigma"},
      {{{"kind", "diluted_planck"}, {"angular_radius", {{"value", 1}, {"unit", "furlong"}}}}, "/model/angular_radius/unit"},
      {{{"kind", "diluted_planck"}, {"radius", {{"value", 7e8}, {"unit", "m"}}}}, "/model/radius"},
      {{{"kind", "modified_black_body"}, {"dust_opacity", {{"value", 0.1}, {"unit", "m2/g"}, {"at", {{"value", 1}, {"unit", "THz"}}}}}},
       "/model/dust_opacity/unit"},
      {{{"kind", "modified_black_body"}, {"opacity", "general"}, {"reference_frequency", {{"value", 1}, {"unit", "THz"}}}},
       "/model/reference_frequency"},
  };
  for (const auto& [model, pointer] : cases) {
    expect_invalid_at(problem_of_document(with_model(model)), pointer);
  }
}

TEST(ApiModels, ExtinctionOutsideItsLawsRangeIsRefusedWithTheRange) {
  // Source: extinction.h (CCM89 is defined from 0.1 to 3.33 um; planckton refuses, never extrapolates).
  json request = valid_request(60);
  request["spectrum"]["x"] = json::array();
  for (int i = 0; i < 60; ++i) request["spectrum"]["x"].push_back(4000.0 + 10.0 * i);  // nm: 4-4.6 um
  request["model"] = {{"kind", "planck"}, {"extinction", {{"law", "cardelli1989"}}}};
  const Problem p = problem_of_document(request);
  expect_invalid_at(p, "/model/extinction");
  EXPECT_NE(p.detail.find("um"), std::string::npos) << p.detail;
}

TEST(ApiModels, ModelDocumentLabelsFramesComponentsAndExtinction) {
  // Source: fit_response.cpp (model_document).
  const json reddened = planckton::api::fit_document(
      with_model({{"kind", "planck"}, {"redshift", 0.2}, {"extinction", {{"law", "fitzpatrick1999"}, {"r_v", 3.1}}}}));
  EXPECT_EQ(reddened["model"], "planck");
  EXPECT_TRUE(reddened["parameters"].contains("color_excess"));
  EXPECT_EQ(reddened["parameters"]["color_excess"]["unit"], "mag");
  EXPECT_EQ(reddened["extinction"]["law"], "fitzpatrick1999");
  EXPECT_EQ(reddened["frames"]["redshift"], 0.2);
  EXPECT_TRUE(RelativelyNear(reddened["frames"]["observed"]["temperatures"]["temperature"]["value"].get<double>(),
                             reddened["parameters"]["temperature"]["value"].get<double>() / 1.2, 1e-12));
  EXPECT_EQ(reddened["correlation"]["parameters"].size(), 3u);
  const json two = planckton::api::fit_document(with_model({{"kind", "two_temperature"}}));
  ASSERT_EQ(two["components"].size(), 2u);
  EXPECT_EQ(two["components"][0]["component"], "cooler");
  for (const auto& warning : two["warnings"]) EXPECT_TRUE(warning["code"].is_string());
}

// ---- intervals: covariance, profile, posterior (model_intervals.h) --------------------------

TEST(ApiIntervals, ProfileGivesALowerLimitOnTheRayleighJeansSide) {
  // Source: profile_likelihood.h (an open side is reported as a one-sided limit, never closed).
  json request = valid_request(40);
  json x = json::array(), y = json::array(), e = json::array();
  const auto flux = planckton::parse_flux_density_unit("W/m2/nm");
  for (int i = 0; i < 40; ++i) {
    const double nm = 30000.0 + 7000.0 * i;  // 30-300 um: x = h nu / k T < 0.06 at 8000 K
    const double v = 1e-18 * planckton::planck_radiance(flux.convention, planckton::constants::kSpeedOfLight / (nm * 1e-9), 8000.0) / flux.to_si;
    x.push_back(nm);
    y.push_back(v * (1.0 + 0.02 * std::sin(7.0 * i)));
    e.push_back(0.02 * v);
  }
  request["spectrum"]["x"] = x;
  request["spectrum"]["y"] = y;
  request["spectrum"]["y_error"] = e;
  request["options"] = {{"intervals", "profile"}};
  const json r = planckton::api::fit_document(request);
  const json& t = r["parameters"]["temperature"];
  EXPECT_EQ(t["one_sided"], "lower_limit");
  // Open at 95 % at least: the upper end is null there, the lower end a limit.
  EXPECT_TRUE(t["interval_95"][1].is_null()) << t.dump();
  EXPECT_TRUE(t["interval_95"][0].is_number()) << t.dump();
  EXPECT_EQ(r["intervals"]["method"], "profile");
  bool warned = false;
  for (const auto& w : r["warnings"]) warned = warned || w["code"] == "lower_limit_only";
  EXPECT_TRUE(warned);
}

TEST(ApiIntervals, PosteriorIsReproducibleBySeedAndCloseToTheCovarianceOnAGoodProblem) {
  // Source: ensemble_sampler.h (same seed, same draws).
  json request = valid_request(60);
  request["options"] = {{"intervals", "posterior"}, {"seed", 11}, {"posterior", {{"steps", 1500}, {"samples", 10}}}};
  const json a = planckton::api::fit_document(request);
  const json b = planckton::api::fit_document(request);
  EXPECT_EQ(a["parameters"], b["parameters"]);
  EXPECT_EQ(a["intervals"]["samples"]["draws"].size(), 10u);
  request["options"]["seed"] = 12;
  const json c = planckton::api::fit_document(request);
  EXPECT_NE(a["parameters"]["temperature"]["median"], c["parameters"]["temperature"]["median"]);
  // A nearly Gaussian problem: the posterior's 68 % interval is the covariance's to a few per cent.
  const json cov = planckton::api::fit_document(valid_request(60));
  const double width = a["parameters"]["temperature"]["interval_68"][1].get<double>() - a["parameters"]["temperature"]["interval_68"][0].get<double>();
  const double expected = cov["parameters"]["temperature"]["interval_68"][1].get<double>() - cov["parameters"]["temperature"]["interval_68"][0].get<double>();
  EXPECT_NEAR(width / expected, 1.0, 0.1);
  EXPECT_TRUE(a["peaks"]["wavelength"]["median"].is_number());
}

TEST(ApiIntervals, SamplerSettingsAreCheckedAndApplyToThePosteriorOnly) {
  // Source: fit_request.h (options.seed and options.posterior need intervals "posterior").
  json request = valid_request(20);
  request["options"] = {{"seed", 3}};
  expect_invalid_at(problem_of_document(request), "/options/seed");
  request["options"] = {{"intervals", "bootstrap"}};
  expect_invalid_at(problem_of_document(request), "/options/intervals");
  request["options"] = {{"intervals", "posterior"}, {"posterior", {{"walkers", 7}}}};
  expect_invalid_at(problem_of_document(request), "/options/posterior/walkers");
  request["options"] = {{"intervals", "posterior"}, {"posterior", {{"steps", 100}, {"burn_in", 100}}}};
  expect_invalid_at(problem_of_document(request), "/options/posterior/burn_in");
}
