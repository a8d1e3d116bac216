// The representations of a fit: the JSON response document, the SVG picture (fit_plot.h) or the CSV
// table (fit_csv_out.h), and how a request chooses one. POST /v1/fit and `planckton fit` call these.
//
// Choosing. The `format` query parameter (json, svg or csv) wins; otherwise the Accept header
// (RFC 9110 section 12.5.1): each media range with its weight q (default 1; "q=0" means "not
// acceptable"), the most specific range that matches a type giving its weight (type/subtype before
// type/* before */*). The representation with the highest weight is answered; a tie goes to JSON,
// then SVG, then CSV. No Accept header, or one that cannot be read at all, means JSON; an Accept
// that allows none of the three is a 406 problem (problem.h not_acceptable). Problems themselves
// are always application/problem+json, whatever was asked.
//
// Example:
//   auto representation = planckton::api::choose_fit_representation(std::nullopt, "image/svg+xml;q=0.9, */*;q=0.1");
//   // FitRepresentation::kSvg
//   std::string body = planckton::api::represent(planckton::api::fit_json_outcome(text), representation);
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "api/fit_service.h"

namespace planckton::api {

enum class FitRepresentation { kJson, kSvg, kCsv };

// "application/json", "image/svg+xml" or "text/csv; charset=utf-8" (for Content-Type).
const char* media_type_of(FitRepresentation representation);

// The format parameter's value -> a representation; anything but json, svg or csv is a 422 problem
// naming the parameter `format`.
FitRepresentation representation_of_format(std::string_view format);

// An Accept header's value -> the preferred representation, or nullopt when it allows none of them.
std::optional<FitRepresentation> representation_of_accept(std::string_view accept);

// Both together: the format parameter when given, else the Accept header (empty: JSON); throws the
// 422 (format) or 406 (Accept) problem.
FitRepresentation choose_fit_representation(const std::optional<std::string>& format, std::string_view accept);

// The body of a representation: the JSON document (compact), the SVG or the CSV.
std::string represent(const FitOutcome& outcome, FitRepresentation representation);

// Everything a fit produced, from a JSON request text (as fit_json_text). Tables and FITS files:
// fit_table_outcome and fit_fits_outcome in fit_service.h.
FitOutcome fit_json_outcome(std::string_view text, const ServiceLimits& limits = {});

}  // namespace planckton::api
