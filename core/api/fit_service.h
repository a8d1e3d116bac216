// The fit, from request document to response document: what POST /v1/fit and `planckton fit` do.
//
// Both front ends call these and only these, so the CLI and the service answer the same document
// for the same input. Bad input throws ProblemError; nothing else is expected to escape.
#pragma once

#include <string_view>

#include <nlohmann/json_fwd.hpp>

#include "api/table_reader.h"

namespace planckton::api {

// JSON request document -> JSON response document.
nlohmann::ordered_json fit_document(const nlohmann::json& request);

// Request text (JSON) -> response; malformed JSON becomes a 400 problem.
nlohmann::ordered_json fit_json_text(std::string_view text);

// A table with its units -> response; problems with a row carry the table's line number.
// extra_request_members are merged into the request (members of "spectrum" into the spectrum).
nlohmann::ordered_json fit_table_text(std::string_view text, const TableRequestOptions& options,
                              const nlohmann::json& extra_request_members);

}  // namespace planckton::api
