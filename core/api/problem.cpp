#include "api/problem.h"

#include <nlohmann/json.hpp>

namespace planckton::api {

nlohmann::ordered_json Problem::to_json() const {
  nlohmann::ordered_json doc = {{"type", type}, {"title", title}, {"status", status}, {"detail", detail}};
  if (pointer) doc["pointer"] = *pointer;
  if (line) doc["line"] = *line;
  if (parameter) doc["parameter"] = *parameter;
  if (!accepted.empty()) doc["accepted"] = accepted;
  return doc;
}

std::string Problem::one_line() const {
  std::string text = title + ": " + (parameter ? *parameter + " " : std::string()) + detail;
  if (line) text += " (line " + std::to_string(*line) + ")";
  if (pointer) text += " (at " + (pointer->empty() ? std::string("the document root") : *pointer) + ")";
  return text;
}

Problem malformed_document(std::string detail, std::optional<std::size_t> line) {
  return {"/problems/malformed-document", "The request document cannot be read", 400, std::move(detail), std::nullopt,
          line, std::nullopt, {}};
}

Problem invalid_value(std::optional<std::string> pointer, std::string detail, std::vector<std::string> accepted) {
  return {"/problems/invalid-value", "A value in the request is not acceptable", 422, std::move(detail),
          std::move(pointer), std::nullopt, std::nullopt, std::move(accepted)};
}

Problem unsupported_feature(std::string pointer, std::string detail, std::vector<std::string> accepted) {
  return {"/problems/unsupported", "The request asks for something this version does not do", 422,
          std::move(detail), std::move(pointer), std::nullopt, std::nullopt, std::move(accepted)};
}

Problem invalid_parameter(std::string parameter, std::string detail, std::vector<std::string> accepted) {
  Problem problem = invalid_value(std::nullopt, std::move(detail), std::move(accepted));
  problem.parameter = std::move(parameter);
  return problem;
}

Problem payload_too_large(std::string detail) {
  return {"/problems/payload-too-large", "The request is larger than this service accepts", 413, std::move(detail),
          std::nullopt, std::nullopt, std::nullopt, {}};
}

Problem length_required() {
  return {"/problems/length-required", "The request must state its length", 411,
          "send the body with a Content-Length header; chunked request bodies are not accepted", std::nullopt,
          std::nullopt, std::nullopt, {}};
}

Problem service_unavailable(std::string detail) {
  return {"/problems/service-unavailable", "The service cannot take the request now", 503, std::move(detail),
          std::nullopt, std::nullopt, std::nullopt, {}};
}

Problem unsupported_media_type(std::string detail, std::vector<std::string> accepted) {
  return {"/problems/unsupported-media-type", "The request's content type is not accepted here", 415,
          std::move(detail), std::nullopt, std::nullopt, std::nullopt, std::move(accepted)};
}

Problem not_acceptable(std::string detail, std::vector<std::string> accepted) {
  return {"/problems/not-acceptable", "The request asks for a representation this endpoint does not give", 406,
          std::move(detail), std::nullopt, std::nullopt, std::nullopt, std::move(accepted)};
}

Problem not_found(std::string detail) {
  return {"/problems/not-found", "There is nothing at this path", 404, std::move(detail), std::nullopt,
          std::nullopt, std::nullopt, {}};
}

Problem method_not_allowed(std::string detail, std::vector<std::string> allowed) {
  return {"/problems/method-not-allowed", "This path does not take this method", 405, std::move(detail),
          std::nullopt, std::nullopt, std::nullopt, std::move(allowed)};
}

// Deliberately says nothing about which keys exist or why the one given failed.
Problem unauthorized() {
  return {"/problems/unauthorized", "Authentication required", 401,
          "send a valid API key as 'Authorization: Bearer <key>'", std::nullopt, std::nullopt, std::nullopt, {}};
}

Problem internal_error() {
  return {"/problems/internal-error", "The service failed to handle the request", 500,
          "this is a defect in planckton, not a problem with the request; please report it", std::nullopt,
          std::nullopt, std::nullopt, {}};
}

}  // namespace planckton::api
