// API keys: `Authorization: Bearer <key>` checked in constant time against the configured keys.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace planckton::server {

// True when `given` equals `key`. The time taken depends only on key.size(): not on the given value,
// its length, or how many leading bytes match (so timing reveals neither the key nor its length).
bool keys_equal(std::string_view given, std::string_view key);

class ApiKeys {
 public:
  explicit ApiKeys(std::vector<std::string> keys) : keys_(std::move(keys)) {}
  bool enabled() const { return !keys_.empty(); }
  // True when the header carries one of the keys. The comparison takes the same time whatever the
  // key and whichever key matches, so its timing reveals nothing about the keys.
  bool accepts(std::string_view authorization_header) const;

 private:
  std::vector<std::string> keys_;
};

}  // namespace planckton::server
