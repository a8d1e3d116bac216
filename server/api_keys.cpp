#include "api_keys.h"

#include <algorithm>

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
  constexpr std::string_view kScheme = "Bearer ";
  if (header.size() <= kScheme.size() || header.substr(0, kScheme.size()) != kScheme) return false;
  const std::string_view given = header.substr(kScheme.size());
  bool accepted = false;
  for (const std::string& key : keys_) accepted |= equal_in_constant_time(given, key);
  return accepted;
}

}  // namespace planckton::server
