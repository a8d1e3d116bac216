// The API-key comparison (server/api_keys.*): what it accepts and refuses. Behaviour only: the
// constant-time property is a matter of the code's shape (a loop over the configured key's bytes,
// differences folded with OR, no early exit; see the review in the README's threat model), which a
// timing test on a shared machine could not establish.
#include <gtest/gtest.h>

#include <string>

#include "api_keys.h"

namespace planckton::server {
namespace {

const std::string kKey = "pk-7f3a9c2e51d04b86a1e0";  // invented for the test

TEST(KeysEqual, AcceptsTheExactKeyOnly) {
  EXPECT_TRUE(keys_equal(kKey, kKey));
  EXPECT_FALSE(keys_equal("", kKey));
  EXPECT_FALSE(keys_equal(kKey.substr(0, kKey.size() - 1), kKey));   // a prefix
  EXPECT_FALSE(keys_equal(kKey + "0", kKey));                         // the key and more
  EXPECT_FALSE(keys_equal(kKey + std::string(1, '\0'), kKey));        // a trailing NUL
  EXPECT_FALSE(keys_equal(kKey.substr(1), kKey));                     // a suffix
  EXPECT_FALSE(keys_equal(std::string(kKey.size(), 'x'), kKey));      // same length, all different
  EXPECT_FALSE(keys_equal(kKey + kKey, kKey));                        // twice the key
}

TEST(KeysEqual, EveryByteCounts) {
  for (std::size_t i = 0; i < kKey.size(); ++i) {
    for (unsigned char flip : {0x01, 0x20, 0x80}) {
      std::string given = kKey;
      given[i] = static_cast<char>(static_cast<unsigned char>(given[i]) ^ flip);
      EXPECT_FALSE(keys_equal(given, kKey)) << "byte " << i << " flipped by " << int(flip);
    }
  }
}

TEST(KeysEqual, BytesAboveAsciiAndEmbeddedNul) {
  const std::string key("a\0b\xff", 4);
  EXPECT_TRUE(keys_equal(std::string("a\0b\xff", 4), key));
  EXPECT_FALSE(keys_equal(std::string("a\0b\xfe", 4), key));
  EXPECT_FALSE(keys_equal(std::string("a", 1), key));  // what a C-string comparison would see
}

TEST(ApiKeys, BearerSchemeAndAnyConfiguredKey) {
  const ApiKeys keys({"first-key-1111", kKey});
  EXPECT_TRUE(keys.enabled());
  EXPECT_TRUE(keys.accepts("Bearer " + kKey));
  EXPECT_TRUE(keys.accepts("Bearer first-key-1111"));
  EXPECT_TRUE(keys.accepts("bearer " + kKey));    // the scheme is case-insensitive (RFC 9110, 11.1)
  EXPECT_TRUE(keys.accepts("BEARER   " + kKey));  // one or more spaces
  EXPECT_FALSE(keys.accepts(kKey));               // no scheme
  EXPECT_FALSE(keys.accepts("Basic " + kKey));
  EXPECT_FALSE(keys.accepts("Bearer" + kKey));    // no space
  EXPECT_FALSE(keys.accepts("Bearer "));
  EXPECT_FALSE(keys.accepts(""));
  EXPECT_FALSE(keys.accepts("Bearer first-key-111"));
  EXPECT_FALSE(keys.accepts("Bearer first-key-11111"));
  EXPECT_FALSE(keys.accepts("Bearer " + kKey + " "));  // the key must be the whole credential
  EXPECT_FALSE(keys.accepts("Bearer first-key-1111," + kKey));
}

TEST(ApiKeys, NoKeysMeansDisabled) {
  const ApiKeys keys({});
  EXPECT_FALSE(keys.enabled());
  EXPECT_FALSE(keys.accepts("Bearer anything"));
}

}  // namespace
}  // namespace planckton::server
