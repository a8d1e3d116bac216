// Inputs the fuzz targets (tests/fuzz) found to crash the service, each fed to the entry point the
// server calls for it and checked to be refused with its documented problem. The inputs are kept in
// the fuzz corpus (tests/fuzz/corpus/<target>/regression-*), read from there.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <utility>

#include "api/fit_service.h"
#include "api/problem.h"

namespace {

using planckton::api::Problem;
using planckton::api::ProblemError;

std::string corpus_file(const std::string& target, const std::string& name) {
  const std::filesystem::path path =
      std::filesystem::path(__FILE__).parent_path().parent_path() / "fuzz" / "corpus" / target / name;
  std::ifstream in(path, std::ios::binary);
  EXPECT_TRUE(in.good()) << "missing " << path;
  return std::string(std::istreambuf_iterator<char>(in), {});
}

// A fuzz_table input: "?name=value&..." (percent-encoded, as in a URL) on the first line, then the body.
std::pair<planckton::api::TableParameters, std::string> query_and_body(const std::string& input) {
  const auto decoded = [](const std::string& text) {
    std::string out;
    for (std::size_t i = 0; i < text.size(); ++i) {
      if (text[i] == '%' && i + 2 < text.size()) {
        out += static_cast<char>(std::stoi(text.substr(i + 1, 2), nullptr, 16));
        i += 2;
      } else {
        out += text[i];
      }
    }
    return out;
  };
  const std::size_t newline = input.find('\n');
  const std::string query = input.substr(1, newline - 1);
  planckton::api::TableParameters parameters;
  for (std::size_t start = 0; start < query.size();) {
    std::size_t end = query.find('&', start);
    if (end == std::string::npos) end = query.size();
    const std::string pair = query.substr(start, end - start);
    const std::size_t equals = pair.find('=');
    if (!pair.empty()) parameters.emplace_back(decoded(pair.substr(0, equals)), equals == std::string::npos ? "" : decoded(pair.substr(equals + 1)));
    start = end + 1;
  }
  return {parameters, input.substr(newline + 1)};
}

// Runs the call; returns its problem, or fails the test when it answers or throws anything else.
template <class Call>
Problem problem_of(Call&& call) {
  try {
    call();
  } catch (const ProblemError& e) {
    return e.problem();
  } catch (const std::exception& e) {
    ADD_FAILURE() << "threw something other than ProblemError (a 500 in the service): " << e.what();
    return {};
  }
  ADD_FAILURE() << "answered instead of refusing";
  return {};
}

// fuzz_fits: a photometry table whose UNIT holds a byte that is not UTF-8 ("Veg\xe1mag"). Its request
// document could not be written as JSON (nlohmann type_error 316: a 500); now the unit is refused.
TEST(FuzzRegressions, FitsPhotometryUnitThatIsNotUtf8IsAnUnknownUnit) {
  const std::string bytes = corpus_file("fits", "regression-photometry-unit-not-utf8.fits");
  const Problem problem = problem_of([&] { planckton::api::fit_fits(bytes, {}); });
  EXPECT_EQ(problem.status, 422);
  ASSERT_TRUE(problem.pointer.has_value());
  EXPECT_EQ(problem.pointer->rfind("/photometry/", 0), 0u) << *problem.pointer;
  EXPECT_NE(problem.detail.find("unknown symbol"), std::string::npos) << problem.detail;
}

// fuzz_inline_passband: an inline curve in GHz with a coordinate of 2.5e-317 GHz, positive and
// finite but a wavelength of infinity; the band quadrature cast ln(infinity) to int (undefined
// behaviour). Now the sample is refused where it is given.
TEST(FuzzRegressions, InlineCurveCoordinateBeyondTheDoubleRangeIsRefused) {
  const std::string curve = corpus_file("inline_passband", "regression-wavelength-converts-to-infinity.json");
  // As fuzz_inline_passband places the curve: the first of two measurements.
  const std::string request = "{\"photometry\": [{\"band\": " + curve +
                              "\n, \"value\": 1.5, \"error\": 0.1, \"unit\": \"mJy\"},"
                              " {\"band\": \"2mass-j\", \"value\": 2.5, \"error\": 0.1, \"unit\": \"mJy\"}]}";
  const Problem problem = problem_of([&] { planckton::api::fit_json_text(request); });
  EXPECT_EQ(problem.status, 422);
  EXPECT_EQ(problem.pointer.value_or(""), "/photometry/0/band/wavelength/3");
  EXPECT_NE(problem.detail.find("representable"), std::string::npos) << problem.detail;
}

// fuzz_table: a column chosen by a number of more than 64 bits; std::stoul threw out_of_range (a 500).
TEST(FuzzRegressions, TableColumnNumberBeyond64BitsIsAColumnThatDoesNotExist) {
  const auto input = query_and_body(corpus_file("table", "regression-column-number-beyond-64-bits.csv"));
  const Problem problem = problem_of([&] { planckton::api::fit_table_text(input.second, input.first); });
  EXPECT_EQ(problem.status, 422);
  EXPECT_EQ(problem.parameter.value_or(""), "x_column");
  EXPECT_NE(problem.detail.find("does not exist"), std::string::npos) << problem.detail;
}

// The same defect as the FITS one, through a table's query: model=%FF could not be written into the
// request's JSON (type_error 316); now it is an unknown model, named by its parameter.
TEST(FuzzRegressions, TableQueryValueThatIsNotUtf8IsRefusedByItsParameter) {
  const auto input = query_and_body(corpus_file("table", "regression-query-model-not-utf8.csv"));
  ASSERT_EQ(input.first.size(), 3u);  // x_unit, y_unit, model
  const Problem problem = problem_of([&] { planckton::api::fit_table_text(input.second, input.first); });
  EXPECT_EQ(problem.status, 422);
  EXPECT_EQ(problem.parameter.value_or(""), "model");
}

// And through a photometry table: a band name that is not UTF-8 is an unknown band, with its line.
TEST(FuzzRegressions, PhotometryTableBandThatIsNotUtf8IsAnUnknownBandOnItsLine) {
  const auto input = query_and_body(corpus_file("table", "regression-photometry-band-not-utf8.csv"));
  const Problem problem = problem_of([&] { planckton::api::fit_table_text(input.second, input.first); });
  EXPECT_EQ(problem.status, 422);
  EXPECT_EQ(problem.line.value_or(0), 2u);
  EXPECT_NE(problem.detail.find("not a shipped band"), std::string::npos) << problem.detail;
}

// A distance with blanks after the number and no unit: substr at npos threw out_of_range (a 500).
// Now it takes the default unit, parsec, as "5" does (found by tests/fuzz/fuzz_table in CI).
TEST(FuzzRegressions, TableDistanceWithTrailingBlanksTakesTheDefaultUnit) {
  const std::string body = "x,y\n400,1e-12\n500,1.2e-12\n600,1.1e-12\n700,0.9e-12\n";
  const planckton::api::TableParameters with_blank = {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"distance", "5 \t"}};
  const planckton::api::TableParameters without = {{"x_unit", "nm"}, {"y_unit", "W/m2/nm"}, {"distance", "5"}};
  nlohmann::ordered_json a, b;
  EXPECT_NO_THROW(a = planckton::api::fit_table_text(body, with_blank));
  EXPECT_NO_THROW(b = planckton::api::fit_table_text(body, without));
  EXPECT_EQ(a.dump(), b.dump());
}

}  // namespace
