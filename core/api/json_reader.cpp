#include "api/json_reader.h"

#include <algorithm>
#include <charconv>
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "api/problem.h"

namespace planckton::api::json_reading {


using simdjson::dom::element_type;

// Deeper nesting than any request needs is refused before it can exhaust memory or stack.
constexpr std::size_t kMaxNestingDepth = 64;

const char* type_name(const element& value) {
  switch (value.type()) {
    case element_type::NULL_VALUE: return "null";
    case element_type::BOOL: return "a boolean";
    case element_type::STRING: return "a string";
    case element_type::ARRAY: return "an array";
    case element_type::OBJECT: return "an object";
    default: return "a number";
  }
}

[[noreturn]] void fail(const std::string& pointer, const std::string& detail, std::vector<std::string> accepted) {
  throw ProblemError(invalid_value(pointer, detail, std::move(accepted)));
}

std::string member_pointer(const std::string& parent, std::string_view key) {
  // RFC 6901: '~' is written "~0" and '/' is written "~1".
  std::string escaped;
  for (char c : key) {
    if (c == '~') escaped += "~0";
    else if (c == '/') escaped += "~1";
    else escaped += c;
  }
  return parent + "/" + escaped;
}

std::string index_pointer(const std::string& parent, std::size_t index) {
  std::string pointer = parent;
  pointer += '/';
  pointer += std::to_string(index);
  return pointer;
}

double number_at(const element& value, const std::string& pointer) {
  double v = 0.0;
  if (!value.is_number() || value.get_double().get(v)) fail(pointer, std::string("must be a number, is ") + type_name(value));
  if (!std::isfinite(v)) fail(pointer, "must be a finite number");
  return v;
}

std::string string_at(const element& value, const std::string& pointer) {
  std::string_view s;
  if (value.get_string().get(s)) fail(pointer, std::string("must be a string, is ") + type_name(value));
  return std::string(s);
}

std::vector<double> numbers_at(const element& value, const std::string& pointer) {
  simdjson::dom::array array;
  if (value.get_array().get(array)) fail(pointer, std::string("must be an array of numbers, is ") + type_name(value));
  std::vector<double> out;
  out.reserve(array.size());
  std::size_t i = 0;
  for (const element item : array) {
    double v = 0.0;
    if (item.get_double().get(v)) fail(index_pointer(pointer, i), std::string("must be a number, is ") + type_name(item));
    out.push_back(v);
    ++i;
  }
  return out;
}

std::array<double, 2> pair_at(const element& value, const std::string& pointer) {
  simdjson::dom::array array;
  if (value.get_array().get(array) || array.size() != 2) fail(pointer, "must be an array of two numbers [lo, hi]");
  return {number_at(array.at(0).value_unsafe(), pointer + "/0"), number_at(array.at(1).value_unsafe(), pointer + "/1")};
}

std::vector<std::array<double, 2>> ranges_at(const element& value, const std::string& pointer) {
  simdjson::dom::array array;
  if (value.get_array().get(array)) fail(pointer, "must be an array of [lo, hi] ranges in x_unit");
  std::vector<std::array<double, 2>> ranges;
  std::size_t i = 0;
  for (const element item : array) ranges.push_back(pair_at(item, index_pointer(pointer, i++)));
  return ranges;
}

nlohmann::ordered_json request_id(const element& value) {
  if (value.is_string()) return std::string(value.get_string().value_unsafe());
  if (value.is_int64()) return value.get_int64().value_unsafe();
  fail("/id", std::string("must be a string or an integer, is ") + type_name(value));
}

SpectrumInput parse_spectrum(const element& value) {
  const Members s(value, "/spectrum", {"x", "x_unit", "y", "y_unit", "y_error", "exclude"});
  SpectrumInput spectrum;
  spectrum.x = numbers_at(s.require("x"), s.at("x"));
  spectrum.x_unit = string_at(s.require("x_unit"), s.at("x_unit"));
  spectrum.y = numbers_at(s.require("y"), s.at("y"));
  spectrum.y_unit = string_at(s.require("y_unit"), s.at("y_unit"));
  if (const auto e = s.find("y_error"); e && !e->is_null()) {
    spectrum.y_error = numbers_at(*e, s.at("y_error"));
    if (spectrum.y_error.empty()) fail(s.at("y_error"), "must not be empty; omit it when there are no errors");
  }
  if (const auto e = s.find("exclude")) spectrum.exclude = ranges_at(*e, s.at("exclude"));
  if (spectrum.x.empty()) fail(s.at("x"), "must not be empty");
  return spectrum;
}

namespace {

simdjson::dom::parser& thread_parser() {
  thread_local simdjson::dom::parser parser;
  return parser;
}

// RFC 8259 section 6: -?(0|[1-9][0-9]*)(.[0-9]+)?([eE][+-]?[0-9]+)?
bool is_json_number(std::string_view t) {
  std::size_t i = 0;
  const auto digits = [&] {
    const std::size_t start = i;
    while (i < t.size() && t[i] >= '0' && t[i] <= '9') ++i;
    return i > start;
  };
  if (i < t.size() && t[i] == '-') ++i;
  if (i < t.size() && t[i] == '0') ++i;
  else if (!digits()) return false;
  if (i < t.size() && t[i] == '.' && (++i, !digits())) return false;
  if (i < t.size() && (t[i] == 'e' || t[i] == 'E')) {
    ++i;
    if (i < t.size() && (t[i] == '+' || t[i] == '-')) ++i;
    if (!digits()) return false;
  }
  return i == t.size();
}

// What is wrong with the first number of the text that simdjson refused (NUMBER_ERROR): not JSON's
// number syntax (e.g. 01, 1., 1e, 0x10), beyond a double (1e999), or an integer of more than 64 bits.
std::string first_bad_number(std::string_view text) {
  bool in_string = false;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (in_string) {
      if (c == '\\') ++i;
      else if (c == '"') in_string = false;
      continue;
    }
    if (c == '"') {
      in_string = true;
    } else if (c == '-' || (c >= '0' && c <= '9')) {
      const std::size_t end = text.find_first_of(" \t\r\n,]}:", i);
      const std::string_view token = text.substr(i, end == std::string_view::npos ? text.size() - i : end - i);
      const std::string shown(token.substr(0, 40));
      if (!is_json_number(token)) return "the body holds '" + shown + "', which is not a JSON number (RFC 8259 section 6)";
      errno = 0;
      const double value = std::strtod(std::string(token).c_str(), nullptr);  // underflow to 0 or a subnormal is fine
      if (errno == ERANGE && std::isinf(value)) {
        return "the body holds a number a double cannot represent (beyond about 1.8e308): " + shown;
      }
      if (token.find_first_of(".eE") == std::string_view::npos) {
        std::int64_t i64 = 0;
        std::uint64_t u64 = 0;
        const bool fits = token[0] == '-' ? std::from_chars(token.data(), token.data() + token.size(), i64).ec == std::errc()
                                          : std::from_chars(token.data(), token.data() + token.size(), u64).ec == std::errc();
        if (!fits) {
          return "the body holds an integer of more than 64 bits: " + shown +
                 " (write it with a fraction or an exponent, e.g. 1.5e30, to send it as a double)";
        }
      }
      i += token.size() - 1;
    }
  }
  return "the body holds a number a double cannot represent (beyond about 1.8e308, or an integer of more than 64 bits)";
}

}  // namespace

element parse_text(std::string_view text) {
  simdjson::dom::parser& parser = thread_parser();
  // Buffers grow to the largest document seen and are then reused; reallocating them for every
  // request would cost more than parsing a typical one.
  if (parser.capacity() < text.size() || parser.max_depth() != kMaxNestingDepth) {
    constexpr std::size_t kMinimumCapacity = 1 << 16;
    if (parser.allocate(std::max(text.size(), kMinimumCapacity), kMaxNestingDepth)) {
      throw ProblemError(malformed_document("the document is too large to parse"));
    }
  }
  element root;
  if (const auto error = parser.parse(text.data(), text.size()).get(root)) {
    std::string detail = std::string("the body is not valid JSON: ") + simdjson::error_message(error);
    if (error == simdjson::DEPTH_ERROR) {
      detail = "the JSON nests deeper than " + std::to_string(kMaxNestingDepth) + " levels";
    } else if (error == simdjson::NUMBER_ERROR) {
      detail = first_bad_number(text);
    } else if (error == simdjson::EMPTY) {
      detail = "the body is empty; send a fit request document";
    }
    throw ProblemError(malformed_document(detail));
  }
  return root;
}

}  // namespace planckton::api::json_reading
