#include "api/table_reader.h"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cstdlib>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "api/problem.h"

namespace planckton::api {

namespace {

std::string_view trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

std::vector<std::string_view> split_fields(std::string_view row) {
  std::vector<std::string_view> fields;
  const bool delimited = row.find_first_of(",;\t") != std::string_view::npos;
  if (delimited) {
    std::size_t start = 0;
    while (true) {
      const std::size_t end = row.find_first_of(",;\t", start);
      fields.push_back(trim(row.substr(start, end == std::string_view::npos ? std::string_view::npos : end - start)));
      if (end == std::string_view::npos) break;
      start = end + 1;
    }
    return fields;
  }
  std::size_t i = 0;
  while (i < row.size()) {
    while (i < row.size() && std::isspace(static_cast<unsigned char>(row[i]))) ++i;
    const std::size_t start = i;
    while (i < row.size() && !std::isspace(static_cast<unsigned char>(row[i]))) ++i;
    if (i > start) fields.push_back(row.substr(start, i - start));
  }
  return fields;
}

std::optional<double> parse_number(std::string_view field) {
  if (!field.empty() && field.front() == '+') field.remove_prefix(1);
  double value = 0.0;
  const auto [end, error] = std::from_chars(field.data(), field.data() + field.size(), value);
  if (error == std::errc::result_out_of_range && end == field.data() + field.size() && !field.empty()) {
    // A decimal number beyond a double is a number still: rounded as IEEE 754 rounds it (as the JSON
    // reader does), to +-0 below the smallest subnormal and to +-inf above the largest double, which
    // is then refused as not finite with its line, like "inf".
    return std::strtod(std::string(field).c_str(), nullptr);
  }
  if (error != std::errc() || end != field.data() + field.size() || field.empty()) return std::nullopt;
  return value;
}

std::string quoted(std::string_view field) {
  constexpr std::size_t kShown = 40;
  std::string shown(field.substr(0, kShown));
  for (char& c : shown) {
    if (!std::isprint(static_cast<unsigned char>(c))) c = '?';
  }
  return "'" + shown + (field.size() > kShown ? "...'" : "'");
}

// role names the column and the setting that chose it ("x" -> x_column, "y_error" -> error_column).
std::optional<std::size_t> find_column(const Table& table, const std::string& wanted, const char* role) {
  const std::string parameter = std::string(role) == "y_error" ? "error_column" : std::string(role) + "_column";
  if (wanted.empty()) return std::nullopt;
  if (std::all_of(wanted.begin(), wanted.end(), [](char c) { return std::isdigit(static_cast<unsigned char>(c)); })) {
    // More digits than any table has columns is a column that does not exist; std::stoul would throw
    // out_of_range past 2^64 (a 500; found by tests/fuzz/fuzz_table).
    const std::size_t index = wanted.size() > 9 ? 0 : std::stoul(wanted);
    if (index < 1 || index > table.columns.size()) {
      throw ProblemError(invalid_parameter(parameter, std::string(role) + " column " + wanted + " does not exist; the table has " +
                                               std::to_string(table.columns.size()) + " columns"));
    }
    return index - 1;
  }
  const auto it = std::find(table.header.begin(), table.header.end(), wanted);
  if (it == table.header.end()) {
    throw ProblemError(invalid_parameter(parameter, std::string(role) + " column '" + wanted + "' is not in the header", table.header));
  }
  return static_cast<std::size_t>(it - table.header.begin());
}

std::optional<std::size_t> find_named(const Table& table, std::initializer_list<const char*> names) {
  for (const char* name : names) {
    const auto it = std::find(table.header.begin(), table.header.end(), name);
    if (it != table.header.end()) return static_cast<std::size_t>(it - table.header.begin());
  }
  return std::nullopt;
}

}  // namespace

namespace {

// Calls row(line_number, fields) for each non-empty row, comments ('#' to the end of the line) removed.
template <class Row>
void for_each_row(std::string_view text, Row&& row) {
  std::size_t line_number = 0;
  std::size_t position = 0;
  while (position <= text.size()) {
    const std::size_t end = std::min(text.find('\n', position), text.size());
    std::string_view line = text.substr(position, end - position);
    position = end + 1;
    ++line_number;
    if (const std::size_t hash = line.find('#'); hash != std::string_view::npos) line = line.substr(0, hash);
    line = trim(line);
    if (!line.empty()) row(line_number, split_fields(line));
  }
}

std::string lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

}  // namespace

Table read_table(std::string_view text) {
  Table table;
  std::size_t width = 0;
  for_each_row(text, [&](std::size_t line_number, const std::vector<std::string_view>& fields) {
    if (width == 0) {
      width = fields.size();
      table.columns.resize(width);
      const bool is_header = std::any_of(fields.begin(), fields.end(),
                                         [](std::string_view f) { return !parse_number(f).has_value(); });
      if (is_header) {
        for (std::string_view f : fields) table.header.emplace_back(f);
        return;
      }
    }
    if (fields.size() != width) {
      throw ProblemError(malformed_document("the row has " + std::to_string(fields.size()) + " fields, expected " +
                                                std::to_string(width), line_number));
    }
    for (std::size_t c = 0; c < width; ++c) {
      const auto value = parse_number(fields[c]);
      if (!value) {
        throw ProblemError(malformed_document("field " + std::to_string(c + 1) + " " + quoted(fields[c]) +
                                                  " is not a number", line_number));
      }
      table.columns[c].push_back(*value);
    }
    table.line_of_row.push_back(line_number);
  });
  if (table.line_of_row.empty()) throw ProblemError(malformed_document("the table has no data rows"));
  if (width < 2) throw ProblemError(malformed_document("the table needs at least two columns (x and y)"));
  return table;
}

bool is_photometry_table(std::string_view text) {
  bool answer = false, seen = false;
  for_each_row(text, [&](std::size_t, const std::vector<std::string_view>& fields) {
    if (!seen) answer = lower(fields.front()) == "band";
    seen = true;
  });
  return answer;
}

PhotometryTable read_photometry_table(std::string_view text) {
  static const std::vector<std::string> kColumns = {"band", "value", "error", "unit", "upper_limit", "zero_point",
                                                    "systematic_error"};
  PhotometryTable table;
  table.measurements = nlohmann::json::array();
  std::vector<std::string> header;
  for_each_row(text, [&](std::size_t line_number, const std::vector<std::string_view>& fields) {
    if (header.empty()) {
      for (std::string_view f : fields) {
        header.push_back(lower(f));
        if (std::find(kColumns.begin(), kColumns.end(), header.back()) == kColumns.end()) {
          throw ProblemError(malformed_document("column " + quoted(f) + " is not a photometry column (band, value, error, "
                                                "unit, upper_limit, zero_point, systematic_error)", line_number));
        }
      }
      for (const char* required : {"value", "unit"}) {
        if (std::find(header.begin(), header.end(), required) == header.end()) {
          throw ProblemError(malformed_document(std::string("a photometry table needs a '") + required + "' column", line_number));
        }
      }
      return;
    }
    if (fields.size() != header.size()) {
      throw ProblemError(malformed_document("the row has " + std::to_string(fields.size()) + " fields, expected " +
                                                std::to_string(header.size()), line_number));
    }
    nlohmann::json measurement = nlohmann::json::object();
    for (std::size_t c = 0; c < header.size(); ++c) {
      const std::string& column = header[c];
      const std::string_view field = fields[c];
      if (column == "band" || column == "unit") {
        measurement[column] = std::string(field);
      } else if (column == "upper_limit") {
        const std::string flag = lower(field);
        if (flag == "true" || flag == "yes" || flag == "1") {
          measurement[column] = true;
        } else if (!(flag.empty() || flag == "false" || flag == "no" || flag == "0")) {
          throw ProblemError(malformed_document("upper_limit " + quoted(field) + " is not true/false, yes/no or 1/0", line_number));
        }
      } else if (!field.empty() && field != "-") {
        const auto value = parse_number(field);
        if (!value) throw ProblemError(malformed_document(column + " " + quoted(field) + " is not a number", line_number));
        measurement[column] = *value;
      }
    }
    table.measurements.push_back(std::move(measurement));
    table.line_of_row.push_back(line_number);
  });
  if (table.line_of_row.empty()) throw ProblemError(malformed_document("the photometry table has no rows"));
  return table;
}

SpectrumInput table_to_spectrum(const Table& table, const TableRequestOptions& options) {
  const std::size_t x = find_column(table, options.x_column, "x").value_or(find_named(table, {"x"}).value_or(0));
  const std::size_t y = find_column(table, options.y_column, "y").value_or(find_named(table, {"y"}).value_or(1));
  std::optional<std::size_t> error;
  if (options.error_column != "none") {
    error = find_column(table, options.error_column, "y_error");
    if (!error) error = find_named(table, {"y_error", "error", "err", "sigma"});
    if (!error && table.columns.size() >= 3 && x != 2 && y != 2) error = 2;
  }
  SpectrumInput spectrum;
  spectrum.x = table.columns[x];
  spectrum.x_unit = options.x_unit;
  spectrum.y = table.columns[y];
  spectrum.y_unit = options.y_unit;
  if (error) spectrum.y_error = table.columns[*error];
  return spectrum;
}

nlohmann::json table_to_request(const Table& table, const TableRequestOptions& options) {
  const SpectrumInput s = table_to_spectrum(table, options);
  nlohmann::json spectrum = {{"x", s.x}, {"x_unit", s.x_unit}, {"y", s.y}, {"y_unit", s.y_unit}};
  if (!s.y_error.empty()) spectrum["y_error"] = s.y_error;
  return {{"spectrum", spectrum}};
}

}  // namespace planckton::api
