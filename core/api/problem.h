// Problem documents (RFC 9457, "Problem Details for HTTP APIs"): how every bad input is answered.
//
// The members are RFC 9457's type, title, status and detail, plus the extension members planckton
// adds: `pointer` (RFC 6901 JSON pointer to the offending value of the request document), `line`
// (for tables: the 1-based line of the offending value), `parameter` (a query parameter or flag) and
// `accepted` (what would have been
// accepted, e.g. the unit spellings).
#pragma once

#include <cstddef>
#include <exception>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json_fwd.hpp>

namespace planckton::api {

struct Problem {
  std::string type;   // a URI reference naming the kind of problem, e.g. "/problems/invalid-value"
  std::string title;  // short, the same for every problem of this type
  int status = 422;   // the HTTP status the service answers with
  std::string detail;
  std::optional<std::string> pointer;  // "" is the whole document (RFC 6901); absent: not about one value
  std::optional<std::size_t> line;
  std::optional<std::string> parameter;  // the query parameter or command-line flag at fault
  std::vector<std::string> accepted;

  nlohmann::ordered_json to_json() const;
  std::string one_line() const;  // for stderr
};

class ProblemError : public std::exception {
 public:
  explicit ProblemError(Problem problem) : problem_(std::move(problem)) {}
  const Problem& problem() const { return problem_; }
  Problem& problem() { return problem_; }
  const char* what() const noexcept override { return problem_.detail.c_str(); }

 private:
  Problem problem_;
};

// The kinds of problem planckton reports.
Problem malformed_document(std::string detail, std::optional<std::size_t> line = std::nullopt);
Problem invalid_value(std::optional<std::string> pointer, std::string detail, std::vector<std::string> accepted = {});
Problem unsupported_feature(std::string pointer, std::string detail, std::vector<std::string> accepted = {});
Problem invalid_parameter(std::string parameter, std::string detail, std::vector<std::string> accepted = {});
Problem payload_too_large(std::string detail);
Problem length_required();
Problem service_unavailable(std::string detail);
Problem unsupported_media_type(std::string detail, std::vector<std::string> accepted);
// 406: the Accept header allows none of the representations; `accepted` lists them.
Problem not_acceptable(std::string detail, std::vector<std::string> accepted);
Problem not_found(std::string detail);
Problem method_not_allowed(std::string detail, std::vector<std::string> allowed);
Problem unauthorized();
Problem internal_error();

}  // namespace planckton::api
