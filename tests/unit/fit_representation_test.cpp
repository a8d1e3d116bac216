// The representations of a fit (core/api/fit_representation.h, fit_plot.h, fit_csv_out.h): Accept
// negotiation (RFC 9110 section 12.5.1), the format parameter, the outcome of a table, the CSV's
// model column and the SVG's determinism and finiteness.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "api/fit_csv_out.h"
#include "api/fit_plot.h"
#include "api/fit_representation.h"
#include "api/fit_request.h"
#include "api/fit_service.h"
#include "api/problem.h"
#include "science/constants.h"
#include "science/planck.h"
#include "science/units.h"
#include "test_support.h"

namespace {

namespace api = planckton::api;
using api::FitRepresentation;
using nlohmann::json;
using planckton::testing::RelativelyNear;

std::optional<FitRepresentation> accept(const char* header) { return api::representation_of_accept(header); }

TEST(FitRepresentation, AcceptWithoutPreferenceIsJson) {
  EXPECT_EQ(accept(""), FitRepresentation::kJson);
  EXPECT_EQ(accept("*/*"), FitRepresentation::kJson);
  EXPECT_EQ(accept("application/json"), FitRepresentation::kJson);
  EXPECT_EQ(accept("application/*"), FitRepresentation::kJson);
  EXPECT_EQ(accept("image/svg+xml, application/json, text/csv"), FitRepresentation::kJson);  // a tie: JSON first
  EXPECT_EQ(accept("  ,  "), FitRepresentation::kJson);
  EXPECT_EQ(accept("garbage"), FitRepresentation::kJson);  // unreadable: as if not sent
}

TEST(FitRepresentation, AcceptChoosesTheTypeAsked) {
  EXPECT_EQ(accept("image/svg+xml"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("text/csv"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("image/*"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("text/*"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("TEXT/CSV"), FitRepresentation::kCsv);  // case-insensitive (RFC 9110 section 8.3.1)
  EXPECT_EQ(accept("text/csv; charset=utf-8; header=present"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("text/html, image/svg+xml"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("image/svg+xml, text/csv"), FitRepresentation::kSvg);  // a tie: SVG before CSV
}

TEST(FitRepresentation, AcceptWeighsQValues) {
  EXPECT_EQ(accept("application/json;q=0.5, image/svg+xml"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("image/svg+xml;q=0.2, text/csv;q=0.3"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("text/csv;q=0.9, image/svg+xml;q=0.95, application/json;q=0.1"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("*/*;q=0.1, text/csv"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("application/json;q=0, */*"), FitRepresentation::kSvg);  // json refused, the rest by */*
  EXPECT_EQ(accept("text/*;q=0.5, text/csv;q=0.9, image/svg+xml;q=0.8"), FitRepresentation::kCsv);
  // The most specific range decides: text/csv;q=0 wins over text/*.
  EXPECT_EQ(accept("text/csv;q=0, text/*, image/svg+xml;q=0.5"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("image/svg+xml ; Q=0.4 , text/csv ; q=0.3"), FitRepresentation::kSvg);
  EXPECT_EQ(accept("text/csv;q=1.000"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("text/csv;q=0.001, image/svg+xml;q=0.000"), FitRepresentation::kCsv);
  // An element that cannot be read is skipped (q out of range or malformed, a parameter without
  // a value, */subtype).
  EXPECT_EQ(accept("image/svg+xml;q=2, text/csv;q=0.5"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("image/svg+xml;q=0.5x, text/csv;q=0.4"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("image/svg+xml;q, text/csv;q=0.4"), FitRepresentation::kCsv);
  EXPECT_EQ(accept("*/csv, image/svg+xml;q=0.3"), FitRepresentation::kSvg);
  // Quoted parameter values may hold commas and semicolons.
  EXPECT_EQ(accept("text/csv;note=\"a, b; c\";q=0.7, image/svg+xml;q=0.6"), FitRepresentation::kCsv);
}

TEST(FitRepresentation, AcceptThatAllowsNoneIsNotAcceptable) {
  EXPECT_EQ(accept("text/html"), std::nullopt);
  EXPECT_EQ(accept("application/problem+json"), std::nullopt);
  EXPECT_EQ(accept("application/json;q=0, image/svg+xml;q=0, text/csv;q=0"), std::nullopt);
  EXPECT_EQ(accept("*/*;q=0"), std::nullopt);
  try {
    api::choose_fit_representation(std::nullopt, "text/html");
    FAIL() << "no problem";
  } catch (const api::ProblemError& e) {
    EXPECT_EQ(e.problem().status, 406);
    EXPECT_EQ(e.problem().type, "/problems/not-acceptable");
    EXPECT_EQ(e.problem().accepted, (std::vector<std::string>{"application/json", "image/svg+xml", "text/csv"}));
    EXPECT_NE(e.problem().detail.find("text/html"), std::string::npos);
  }
}

TEST(FitRepresentation, FormatParameterWinsOverAccept) {
  EXPECT_EQ(api::choose_fit_representation("svg", "application/json"), FitRepresentation::kSvg);
  EXPECT_EQ(api::choose_fit_representation("csv", "text/html"), FitRepresentation::kCsv);  // no 406
  EXPECT_EQ(api::choose_fit_representation("json", "image/svg+xml"), FitRepresentation::kJson);
  EXPECT_EQ(api::choose_fit_representation(std::nullopt, ""), FitRepresentation::kJson);
  for (const char* bad : {"png", "", "SVG", "svg "}) {
    try {
      api::choose_fit_representation(std::string(bad), "");
      ADD_FAILURE() << "no problem for '" << bad << "'";
    } catch (const api::ProblemError& e) {
      EXPECT_EQ(e.problem().status, 422);
      EXPECT_EQ(e.problem().parameter, "format");
      EXPECT_EQ(e.problem().accepted, (std::vector<std::string>{"json", "svg", "csv"}));
    }
  }
}

TEST(FitRepresentation, MediaTypes) {
  EXPECT_STREQ(api::media_type_of(FitRepresentation::kJson), "application/json");
  EXPECT_STREQ(api::media_type_of(FitRepresentation::kSvg), "image/svg+xml");
  EXPECT_STREQ(api::media_type_of(FitRepresentation::kCsv), "text/csv; charset=utf-8");
}

// ---- outcomes ------------------------------------------------------------------------------

// A black body in the given units from lo to hi (x_unit), 1 % errors, seeded noise; CODATA 2018
// constants through planck_radiance (checked against astropy in tests/reference).
std::string spectrum_table(double temperature, double scale, double lo, double hi, int n, const char* x_unit,
                           const char* y_unit, bool errors = true, unsigned seed = 7) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  const auto axis = planckton::parse_spectral_axis_unit(x_unit);
  const auto flux = planckton::parse_flux_density_unit(y_unit);
  std::ostringstream out;
  out.precision(17);
  out << (errors ? "x,y,y_error\n" : "x,y\n");
  for (int i = 0; i < n; ++i) {
    const double x = lo * std::pow(hi / lo, static_cast<double>(i) / (n - 1));
    const double y = scale * planckton::planck_radiance(flux.convention, planckton::to_frequency(axis, x), temperature) / flux.to_si;
    out << x << "," << y * (1.0 + 0.01 * normal(rng));
    if (errors) out << "," << 0.01 * y;
    out << "\n";
  }
  return out.str();
}

constexpr const char* kPhotometryTable =
    "band,value,error,unit\n"
    "johnson-b,9.965,0.025,ABmag\n"
    "johnson-v,9.399,0.020,ABmag\n"
    "cousins-i,9.054,0.020,ABmag\n"
    "2mass-j,8.247,0.020,Vegamag\n"
    "2mass-ks,7.807,0.020,Vegamag\n";

// The outcome of a table is the fit fit_table_text gives, for every table parameter.
TEST(FitRepresentation, TableOutcomeIsTheTableFit) {
  const std::string table = spectrum_table(5800.0, 1e-18, 350.0, 1000.0, 80, "nm", "W/m2/nm");
  const std::vector<api::TableParameters> cases = {
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"exclude", "400:420"}, {"exclude", "+600:650.5"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"loss", "cauchy"}, {"loss_scale", "2"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"loss", "huber"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"distance", "120 pc"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"distance", "0.12\tkpc"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"distance", "120"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"temperature_min", "1000"}, {"temperature_max", "20000"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"temperature_max", "30000"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"time_budget_seconds", "5"}, {"model", "planck"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"x_column", "x"}, {"y_column", "2"}, {"error_column", "y_error"}},
      {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"error_column", "none"}},
  };
  for (const auto& parameters : cases) {
    SCOPED_TRACE(json(parameters).dump());
    const nlohmann::ordered_json expected = api::fit_table_text(table, parameters);
    const api::FitOutcome outcome = api::fit_table_outcome(table, parameters);
    EXPECT_EQ(outcome.response.dump(), expected.dump());
  }
  for (const api::TableParameters& parameters :
       std::vector<api::TableParameters>{{}, {{"distance", "85 pc"}}, {{"systematic_error", "0.02"}, {"temperature_max", "1e5"}}}) {
    SCOPED_TRACE(json(parameters).dump());
    EXPECT_EQ(api::fit_table_outcome(kPhotometryTable, parameters).response.dump(),
              api::fit_table_text(kPhotometryTable, parameters).dump());
  }
}

// A table's problems are fit_table_text's own, with their line or parameter.
TEST(FitRepresentation, TableOutcomeProblemsAreTheTableProblems) {
  const std::string table = spectrum_table(5800.0, 1e-18, 350.0, 1000.0, 20, "nm", "W/m2/nm");
  std::string bad_row = table;
  bad_row.insert(bad_row.find('\n', bad_row.find('\n') + 1) + 1, "500,abc,1\n");
  const std::vector<std::pair<std::string, api::TableParameters>> cases = {
      {table, {{"x_unit", "nm"}}},                                            // y_unit missing
      {table, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"colour", "red"}}},  // unknown
      {table, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"loss_scale", "2"}}},
      {table, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"exclude", "400-420"}}},
      {table, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"temperature_min", "abc"}}},
      {table, {{"x_unit", "nm"}, {"y_unit", "furlong"}}},
      {table, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"systematic_error", "0.1"}}},
      {bad_row, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}}},
      {kPhotometryTable, {{"x_unit", "nm"}}},
      {"band,value,unit\nnot-a-band,1,Jy\njohnson-v,2,Jy\n", {}},
  };
  for (const auto& [text, parameters] : cases) {
    SCOPED_TRACE(json(parameters).dump());
    std::string expected, got;
    try {
      api::fit_table_text(text, parameters);
    } catch (const api::ProblemError& e) {
      expected = e.problem().to_json().dump();
    }
    try {
      api::fit_table_outcome(text, parameters);
    } catch (const api::ProblemError& e) {
      got = e.problem().to_json().dump();
    }
    EXPECT_FALSE(expected.empty());
    EXPECT_EQ(got, expected);
  }
}

TEST(FitRepresentation, JsonOutcomeIsTheJsonFit) {
  const std::string text = R"({"spectrum": {"x": [400, 500, 600, 700, 800], "x_unit": "nm",
      "y": [1.1, 1.3, 1.25, 1.1, 0.95], "y_unit": "W/m2/nm"}})";
  EXPECT_EQ(api::fit_json_outcome(text).response.dump(), api::fit_json_text(text).dump());
  EXPECT_EQ(api::represent(api::fit_json_outcome(text), FitRepresentation::kJson), api::fit_json_text(text).dump());
}

std::vector<std::vector<std::string>> csv_rows(const std::string& text) {
  std::vector<std::vector<std::string>> rows;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> fields;
    std::size_t start = 0;
    for (std::size_t comma; (comma = line.find(',', start)) != std::string::npos; start = comma + 1) {
      fields.push_back(line.substr(start, comma - start));
    }
    fields.push_back(line.substr(start));
    rows.push_back(fields);
  }
  return rows;
}

// The model column is the fitted curve at each x: scale * B(T) in the data's convention, from the
// response's temperature and scale (Planck's law through planck_radiance, checked against astropy).
TEST(FitRepresentation, CsvModelIsTheFittedCurveAtEachPoint) {
  const std::string table = spectrum_table(4200.0, 3e-18, 20.0, 500.0, 60, "THz", "mJy");
  const api::TableParameters parameters = {{"x_unit", "THz"}, {"y_unit", "mJy"}, {"exclude", "100:120"}};
  const api::FitOutcome outcome = api::fit_table_outcome(table, parameters);
  const std::string csv = api::fit_csv(outcome);
  EXPECT_EQ(csv.find('\r'), std::string::npos);
  const auto rows = csv_rows(csv);
  ASSERT_EQ(rows.size(), 61u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"x", "y", "y_error", "model", "residual", "excluded"}));
  const double t = outcome.response["parameters"]["temperature"]["value"].get<double>();
  const double scale = outcome.response["parameters"]["scale"]["value"].get<double>();
  std::size_t excluded = 0;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const double x = std::stod(rows[i][0]), y = std::stod(rows[i][1]), e = std::stod(rows[i][2]);
    const double model = scale * planckton::planck_per_frequency(x * 1e12, t) / 1e-29;  // mJy = 1e-29 W m^-2 Hz^-1
    EXPECT_TRUE(RelativelyNear(std::stod(rows[i][3]), model, 1e-12));
    EXPECT_TRUE(RelativelyNear(std::stod(rows[i][4]), (y - model) / e, 1e-9));
    const bool inside = x >= 100.0 && x <= 120.0;
    EXPECT_EQ(rows[i][5], inside ? "1" : "0");
    excluded += inside ? 1 : 0;
  }
  EXPECT_GT(excluded, 0u);
  EXPECT_NE(csv.find("# residual: (y - model) / y_error"), std::string::npos);
  EXPECT_NE(csv.find("not CRLF"), std::string::npos);
}

TEST(FitRepresentation, CsvWithoutErrorsGivesDifferences) {
  const std::string table = spectrum_table(5800.0, 1e-18, 350.0, 1000.0, 40, "nm", "W/m2/nm", false);
  const api::FitOutcome outcome = api::fit_table_outcome(table, {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}});
  const std::string csv = api::fit_csv(outcome);
  EXPECT_NE(csv.find("# residual: y - model, in W/m2/nm"), std::string::npos);
  for (const auto& row : csv_rows(csv)) {
    if (row[0] == "x") continue;
    EXPECT_EQ(row[2], "");
    EXPECT_TRUE(RelativelyNear(std::stod(row[4]), std::stod(row[1]) - std::stod(row[3]), 1e-9) ||
                std::abs(std::stod(row[4])) < 1e-20);
  }
}

TEST(FitRepresentation, CsvOfPhotometryHasOneRowPerBand) {
  const api::FitOutcome outcome = api::fit_table_outcome(kPhotometryTable, {});
  const auto rows = csv_rows(api::fit_csv(outcome));
  ASSERT_EQ(rows.size(), 6u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"band", "pivot_wavelength_nm", "unit", "value", "error", "upper_limit", "model",
                                               "residual"}));
  const auto& bands = outcome.response["bands"];
  for (std::size_t b = 0; b < bands.size(); ++b) {
    EXPECT_EQ(rows[b + 1][0], bands[b]["band"].get<std::string>());
    EXPECT_EQ(std::stod(rows[b + 1][6]), bands[b]["model"].get<double>());  // shortest round trip: exact
    EXPECT_EQ(rows[b + 1][5], "0");
  }
}

std::size_t count(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (auto at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
  return n;
}

// Wide spans (log axes), a steep Wien side, negative noisy values and a fit without covariance
// still give finite numbers; the same outcome gives the same bytes.
TEST(FitRepresentation, SvgIsFiniteAndDeterministic) {
  const std::vector<std::pair<std::string, api::TableParameters>> cases = {
      {spectrum_table(300.0, 1e-12, 1.0, 3000.0, 120, "um", "Jy"), {{"x_unit", "um"}, {"y_unit", "Jy"}}},
      {spectrum_table(20000.0, 1e-20, 100.0, 5000.0, 50, "nm", "erg/s/cm2/Angstrom"),
       {{"x_unit", "nm"}, {"y_unit", "erg/s/cm2/Angstrom"}}},
      {"x,y\n400,1\n500,-0.2\n600,1.5\n700,1.2\n", {{"x_unit", "nm"}, {"y_unit", "relative/nm"}}},
      {spectrum_table(3000.0, 1.0, 1.0, 10.0, 30, "eV", "photon/s/cm2/Angstrom"), {{"x_unit", "eV"}, {"y_unit", "photon/s/cm2/Angstrom"}}},
      {spectrum_table(1500.0, 0.3, 1000.0, 4000.0, 30, "cm-1", "W/m2/sr/um"), {{"x_unit", "cm-1"}, {"y_unit", "W/m2/sr/um"}}},
      {kPhotometryTable, {}},
  };
  for (const auto& [text, parameters] : cases) {
    SCOPED_TRACE(json(parameters).dump());
    const api::FitOutcome outcome = api::fit_table_outcome(text, parameters);
    const std::string svg = api::fit_svg(outcome);
    EXPECT_EQ(svg, api::fit_svg(outcome));
    EXPECT_EQ(svg.find("nan"), std::string::npos);
    EXPECT_EQ(svg.find("inf"), std::string::npos);
    EXPECT_EQ(svg.rfind("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\"", 0), 0u);
    EXPECT_EQ(count(svg, "<title"), 1u);
    EXPECT_EQ(count(svg, "<desc"), 1u);
    EXPECT_EQ(count(svg, "class=\"model\""), 1u);
    EXPECT_EQ(count(svg, "class=\"model-band\""), 1u);
    EXPECT_EQ(svg.find("href"), std::string::npos);  // nothing from elsewhere
    EXPECT_EQ(svg.find("<script"), std::string::npos);
    EXPECT_EQ(svg.find("<style"), std::string::npos);
    const std::size_t points = outcome.photometry ? outcome.photometry->bands.size() : outcome.request.spectrum.x.size();
    EXPECT_EQ(count(svg, "class=\"point\"") + count(svg, "class=\"point excluded\"") + count(svg, "class=\"upper-limit\""), points);
  }
}

// A caller's text (an inline band id) is escaped in the document.
TEST(FitRepresentation, SvgEscapesTheCallersText) {
  json request = {{"photometry", json::array()}};
  request["photometry"].push_back({{"band", "johnson-v"}, {"value", 9.4}, {"error", 0.02}, {"unit", "ABmag"}});
  request["photometry"].push_back({{"band", {{"id", "my <band> & \"co\""}, {"wavelength", {500.0, 550.0, 600.0, 650.0}},
                                             {"wavelength_unit", "nm"}, {"response", {0.0, 1.0, 1.0, 0.0}}, {"detector", "photon_counting"}}},
                                   {"value", 2.0},
                                   {"error", 0.1},
                                   {"unit", "Jy"}});
  request["photometry"].push_back({{"band", "cousins-i"}, {"value", 9.05}, {"error", 0.02}, {"unit", "ABmag"}});
  const api::FitOutcome outcome = api::fit_outcome(api::parse_fit_request(request));
  const std::string svg = api::fit_svg(outcome);
  EXPECT_NE(svg.find("my &lt;band&gt; &amp; &quot;co&quot;"), std::string::npos);
  EXPECT_EQ(svg.find("my <band>"), std::string::npos);
  const std::string csv = api::fit_csv(outcome);
  EXPECT_NE(csv.find("\n\"my <band> & \"\"co\"\"\","), std::string::npos);  // RFC 4180: quoted, quotes doubled
}

}  // namespace
