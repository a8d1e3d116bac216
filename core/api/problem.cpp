#include "api/problem.h"

#include <nlohmann/json.hpp>

namespace planckton::api {

nlohmann::ordered_json Problem::to_json() const {
  nlohmann::ordered_json doc = {{"type", type}, {"title", title}, {"status", status}, {"detail", detail}};
  if (pointer) doc["pointer"] = *pointer;
  if (line) doc["line"] = *line;
  if (!accepted.empty()) doc["accepted"] = accepted;
  return doc;
}

std::string Problem::one_line() const {
  std::string text = title + ": " + detail;
  if (line) text += " (line " + std::to_string(*line) + ")";
  if (pointer) text += " (at " + (pointer->empty() ? std::string("the document root") : *pointer) + ")";
  return text;
}

Problem malformed_document(std::string detail, std::optional<std::size_t> line) {
  return {"/problems/malformed-document", "The request document cannot be read", 400, std::move(detail), std::nullopt,
          line, {}};
}

Problem invalid_argument(std::string detail, std::vector<std::string> accepted) {
  return invalid_value(std::nullopt, std::move(detail), std::move(accepted));
}

Problem invalid_value(std::optional<std::string> pointer, std::string detail, std::vector<std::string> accepted) {
  return {"/problems/invalid-value", "A value in the request is not acceptable", 422, std::move(detail),
          std::move(pointer), std::nullopt, std::move(accepted)};
}

Problem unsupported_feature(std::string pointer, std::string detail, std::vector<std::string> accepted) {
  return {"/problems/unsupported", "The request asks for something this version does not do", 422,
          std::move(detail), std::move(pointer), std::nullopt, std::move(accepted)};
}

Problem fit_failed(std::string detail) {
  return {"/problems/fit-failed", "The fit could not be carried out", 422, std::move(detail), std::nullopt,
          std::nullopt, {}};
}

}  // namespace planckton::api
