// Tables of spectra: CSV, TSV or whitespace-separated columns, '#' comments, an optional header.
//
// A row is split on commas, semicolons or tabs when it has them, else on runs of whitespace. The
// first non-comment row is a header when any of its fields is not a number. Columns are chosen by
// header name or by 1-based index; by default x is the column named x (or the first), y the one
// named y (or the second) and y_error the one named y_error, error, err or sigma (or the third, if
// there is one). Numbers are read with std::from_chars. Every problem names its 1-based line.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

#include "science/spectrum.h"

namespace planckton::api {

struct Table {
  std::vector<std::string> header;             // empty when the table has none
  std::vector<std::vector<double>> columns;    // columns[c][row]
  std::vector<std::size_t> line_of_row;        // 1-based source line of each row
};

// Throws ProblemError (400, with the line) for unreadable tables.
Table read_table(std::string_view text);

struct TableRequestOptions {
  std::string x_unit;
  std::string y_unit;
  std::string x_column;      // name or 1-based index; empty = default
  std::string y_column;
  std::string error_column;  // "none" = no errors even if a third column exists
};

// The table's spectrum, with the columns and units chosen by the options.
SpectrumInput table_to_spectrum(const Table& table, const TableRequestOptions& options);

// The same as a JSON request document: {"spectrum": {x, x_unit, y, y_unit[, y_error]}}.
nlohmann::json table_to_request(const Table& table, const TableRequestOptions& options);

// Tables of band measurements: a header row whose first column is `band`, then any of the columns
// band, value, error, unit, upper_limit (true/false, yes/no, 1/0; empty = false), zero_point (Jy),
// systematic_error; an empty or '-' number is absent. Same splitting and comments as above.
bool is_photometry_table(std::string_view text);

struct PhotometryTable {
  nlohmann::json measurements;           // the request's "photometry" array
  std::vector<std::size_t> line_of_row;  // 1-based source line of each measurement
};
PhotometryTable read_photometry_table(std::string_view text);

}  // namespace planckton::api
