// Reading request documents: a simdjson DOM walked with strict checks and RFC 6901 pointers.
//
// Shared by the readers of every request document (fit_request.cpp, lab_documents.cpp). Internal to
// core/api: the front ends see only the documents' own headers.
#pragma once

#include <simdjson.h>

#include <array>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "science/spectrum.h"

namespace planckton::api {
struct FitRequest;
}

namespace planckton::api::json_reading {

using simdjson::dom::element;

// Parses the text (nesting limited, UTF-8 checked); malformed JSON throws a 400 ProblemError. The
// element is valid until the next parse on this thread.
element parse_text(std::string_view text);

const char* type_name(const element& value);
[[noreturn]] void fail(const std::string& pointer, const std::string& detail, std::vector<std::string> accepted = {});
std::string member_pointer(const std::string& parent, std::string_view key);
std::string index_pointer(const std::string& parent, std::size_t index);

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

double number_at(const element& value, const std::string& pointer);
std::string string_at(const element& value, const std::string& pointer);
std::vector<double> numbers_at(const element& value, const std::string& pointer);
std::array<double, 2> pair_at(const element& value, const std::string& pointer);
std::vector<std::array<double, 2>> ranges_at(const element& value, const std::string& pointer);

// A request's "id": a string or an integer, echoed in the response.
nlohmann::ordered_json request_id(const element& value);

// {"x", "x_unit", "y", "y_unit", "y_error", "exclude"} at pointer "/spectrum".
SpectrumInput parse_spectrum(const element& value);

// The "options" object of a fit request (fit_request.cpp), for documents that take the same options.
void parse_fit_options(const element& value, FitRequest& request);

}  // namespace planckton::api::json_reading
