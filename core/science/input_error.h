// The one exception type the science library throws: the caller's input cannot be used.
//
// It names the logical field ("x", "y", "y_error", "exclude", "x_unit", "options.distance" ...) and,
// for arrays, the index of the first offending element, so that the api layer can turn it into a
// problem document with a JSON pointer or a CSV line. Anything else escaping the science library is
// a bug.
#pragma once

#include <cstddef>
#include <optional>
#include <stdexcept>
#include <string>
#include <utility>

namespace planckton {

class InputError : public std::invalid_argument {
 public:
  InputError(std::string field, std::string message, std::optional<std::size_t> index = std::nullopt)
      : std::invalid_argument(std::move(message)), field_(std::move(field)), index_(index) {}

  const std::string& field() const { return field_; }
  const std::optional<std::size_t>& index() const { return index_; }

 private:
  std::string field_;
  std::optional<std::size_t> index_;
};

}  // namespace planckton
