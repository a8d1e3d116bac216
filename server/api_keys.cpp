#include "api_keys.h"

#include <cctype>

namespace planckton::server {

// Runs over the configured key's bytes only and folds the differences with OR, with no early exit:
// the time depends on the key's length (fixed by the configuration), never on the given value or on
// how much of it matches. (A loop over the longer of the two, as before, let a caller find the key's
// length by timing ever longer guesses.)
bool keys_equal(std::string_view given, std::string_view key) {
  unsigned char difference = given.size() == key.size() ? 0 : 1;
  for (std::size_t i = 0; i < key.size(); ++i) {
    const unsigned char a = i < given.size() ? static_cast<unsigned char>(given[i]) : 0;
    difference |= static_cast<unsigned char>(a ^ static_cast<unsigned char>(key[i]));
  }
  return difference == 0;
}

bool ApiKeys::accepts(std::string_view header) const {
  // The scheme name is case-insensitive (RFC 9110, section 11.1); one or more spaces follow it.
  constexpr std::string_view kScheme = "bearer";
  if (header.size() <= kScheme.size() + 1) return false;
  for (std::size_t i = 0; i < kScheme.size(); ++i) {
    if (std::tolower(static_cast<unsigned char>(header[i])) != kScheme[i]) return false;
  }
  std::size_t start = kScheme.size();
  if (header[start] != ' ') return false;
  while (start < header.size() && header[start] == ' ') ++start;
  const std::string_view given = header.substr(start);
  bool accepted = false;
  for (const std::string& key : keys_) accepted |= keys_equal(given, key);
  return accepted;
}

}  // namespace planckton::server
