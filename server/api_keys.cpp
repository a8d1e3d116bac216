#include "api_keys.h"

#include <algorithm>
#include <cctype>

namespace planckton::server {

namespace {

// Compares every byte of the longer of the two (so the time depends only on the lengths) and folds
// the differences with OR, with no early exit.
bool equal_in_constant_time(std::string_view given, std::string_view key) {
  const std::size_t length = std::max(given.size(), key.size());
  unsigned char difference = given.size() == key.size() ? 0 : 1;
  for (std::size_t i = 0; i < length; ++i) {
    const unsigned char a = i < given.size() ? static_cast<unsigned char>(given[i]) : 0;
    const unsigned char b = i < key.size() ? static_cast<unsigned char>(key[i]) : 0;
    difference |= static_cast<unsigned char>(a ^ b);
  }
  return difference == 0;
}

}  // namespace

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
  for (const std::string& key : keys_) accepted |= equal_in_constant_time(given, key);
  return accepted;
}

}  // namespace planckton::server
