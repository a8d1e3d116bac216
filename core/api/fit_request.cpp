#include "api/fit_request.h"

#include <simdjson.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <vector>

#include "api/problem.h"

namespace planckton::api {

namespace {

using simdjson::dom::element;
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

[[noreturn]] void fail(const std::string& pointer, const std::string& detail, std::vector<std::string> accepted = {}) {
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

// The members of an object, checked against the allowed names and for duplicates (RFC 8259 leaves
// duplicate names to the implementation; a request with two values for one name is ambiguous).
class Members {
 public:
  Members(const element& value, std::string pointer, std::vector<std::string> allowed)
      : pointer_(std::move(pointer)) {
    simdjson::dom::object object;
    if (value.get_object().get(object)) fail(pointer_, std::string("must be an object, is ") + type_name(value));
    for (const auto field : object) {
      const std::string_view key = field.key;
      if (std::find(allowed.begin(), allowed.end(), key) == allowed.end()) {
        fail(member_pointer(pointer_, key), "is not a known member here", allowed);
      }
      for (const auto& [seen, _] : members_) {
        if (seen == key) fail(member_pointer(pointer_, key), "appears more than once");
      }
      members_.emplace_back(key, field.value);
    }
  }

  std::optional<element> find(std::string_view key) const {
    for (const auto& [name, value] : members_) {
      if (name == key) return value;
    }
    return std::nullopt;
  }
  element require(std::string_view key) const {
    const auto value = find(key);
    if (!value) fail(member_pointer(pointer_, key), "is required");
    return *value;
  }
  std::string at(std::string_view key) const { return member_pointer(pointer_, key); }

 private:
  std::string pointer_;
  std::vector<std::pair<std::string_view, element>> members_;
};

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

void parse_loss(const element& value, FitRequest& request) {
  const Members loss(value, "/options/loss", {"kind", "scale"});
  const std::string kind = string_at(loss.require("kind"), loss.at("kind"));
  if (kind == "none") {
    request.fit_options.loss = RobustLoss::kNone;
  } else if (kind == "huber") {
    request.fit_options.loss = RobustLoss::kHuber;
  } else if (kind == "cauchy") {
    request.fit_options.loss = RobustLoss::kCauchy;
  } else {
    fail(loss.at("kind"), "is not a known loss", {"none", "huber", "cauchy"});
  }
  request.loss_name = kind;
  if (const auto scale = loss.find("scale")) request.fit_options.loss_scale = number_at(*scale, loss.at("scale"));
}

DistanceInput parse_distance(const element& value) {
  const Members d(value, "/options/distance", {"value", "unit", "error"});
  DistanceInput distance;
  distance.value = number_at(d.require("value"), d.at("value"));
  distance.unit = string_at(d.require("unit"), d.at("unit"));
  if (const auto e = d.find("error")) distance.error = number_at(*e, d.at("error"));
  if (!(distance.value > 0.0)) fail(d.at("value"), "must be positive");
  if (!(distance.error >= 0.0)) fail(d.at("error"), "must not be negative");
  return distance;
}

void parse_options(const element& value, FitRequest& request) {
  const Members o(value, "/options", {"temperature_bounds", "loss", "distance", "max_iterations", "time_budget_seconds"});
  if (const auto e = o.find("temperature_bounds")) {
    const auto [lo, hi] = pair_at(*e, o.at("temperature_bounds"));
    request.fit_options.min_temperature_k = lo;
    request.fit_options.max_temperature_k = hi;
  }
  if (const auto e = o.find("loss")) parse_loss(*e, request);
  if (const auto e = o.find("distance")) request.distance = parse_distance(*e);
  if (const auto e = o.find("max_iterations")) {
    int64_t iterations = 0;
    if (e->get_int64().get(iterations) || iterations < 1 || iterations > 100000) {
      fail(o.at("max_iterations"), "must be an integer from 1 to 100000");
    }
    request.fit_options.max_iterations = static_cast<int>(iterations);
  }
  if (const auto e = o.find("time_budget_seconds")) {
    const double budget = number_at(*e, o.at("time_budget_seconds"));
    if (!(budget > 0.0) || budget > 3600.0) fail(o.at("time_budget_seconds"), "must be in (0, 3600]");
    request.fit_options.time_budget_seconds = budget;
    request.time_budget_given = true;
  }
}

void parse_model(const element& value, FitRequest& request) {
  const Members m(value, "/model", {"kind"});
  request.model_kind = string_at(m.require("kind"), m.at("kind"));
  if (request.model_kind != "planck") fail(m.at("kind"), "is not a known model", {"planck"});
}

void parse_id(const element& value, FitRequest& request) {
  if (value.is_string()) {
    request.id = std::string(value.get_string().value_unsafe());
  } else if (value.is_int64()) {
    request.id = value.get_int64().value_unsafe();
  } else {
    fail("/id", std::string("must be a string or an integer, is ") + type_name(value));
  }
}

// One parser per thread: simdjson reuses its buffers from one document to the next.
simdjson::dom::parser& thread_parser() {
  thread_local simdjson::dom::parser parser;
  return parser;
}

// The first number in the text that a double cannot hold, to name it in the problem.
std::string first_unrepresentable_number(std::string_view text) {
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
      const std::size_t end = text.find_first_not_of("+-.0123456789eE", i);
      const std::string_view token = text.substr(i, end == std::string_view::npos ? text.size() - i : end - i);
      double value = 0.0;
      const auto result = std::from_chars(token.data(), token.data() + token.size(), value);
      if (result.ec == std::errc::result_out_of_range) return std::string(token.substr(0, 40));
      i += token.size() - 1;
    }
  }
  return "";
}

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
      const std::string number = first_unrepresentable_number(text);
      detail = "the body holds a number a double cannot represent" +
               (number.empty() ? std::string(" (beyond about 1.8e308, or an integer of more than 64 bits)") : ": " + number);
    } else if (error == simdjson::EMPTY) {
      detail = "the body is empty; send a fit request document";
    }
    throw ProblemError(malformed_document(detail));
  }
  return root;
}

void apply_members(const Members& top, FitRequest& request) {
  if (const auto e = top.find("id")) parse_id(*e, request);
  if (const auto e = top.find("model")) parse_model(*e, request);
  if (const auto e = top.find("options")) parse_options(*e, request);
}

}  // namespace

FitRequest parse_fit_request(std::string_view text) {
  const element root = parse_text(text);
  const Members top(root, "", {"id", "spectrum", "photometry", "model", "options"});
  FitRequest request;
  if (top.find("photometry")) {
    throw ProblemError(unsupported_feature("/photometry", "photometry fits are not available in this version; "
                                                          "send a spectrum", {"spectrum"}));
  }
  request.spectrum = parse_spectrum(top.require("spectrum"));
  apply_members(top, request);
  return request;
}

FitRequest parse_fit_request(const nlohmann::json& document) {
  const std::string text = document.dump();
  return parse_fit_request(std::string_view(text));
}

void apply_request_members(std::string_view object_text, FitRequest& request) {
  const element root = parse_text(object_text);
  const Members top(root, "", {"id", "spectrum", "model", "options"});
  if (const auto s = top.find("spectrum")) {
    const Members spectrum(*s, "/spectrum", {"exclude"});
    if (const auto e = spectrum.find("exclude")) request.spectrum.exclude = ranges_at(*e, spectrum.at("exclude"));
  }
  apply_members(top, request);
}

std::string pointer_for_field(const std::string& field, const std::optional<std::size_t>& index) {
  std::string pointer;
  if (field.rfind("options.", 0) == 0) {
    pointer = "/" + field;
    std::replace(pointer.begin(), pointer.end(), '.', '/');
  } else if (field == "distance.unit") {
    pointer = "/options/distance/unit";
  } else {
    pointer = "/spectrum/" + field;
  }
  if (index) pointer = index_pointer(pointer, *index);
  return pointer;
}

}  // namespace planckton::api
