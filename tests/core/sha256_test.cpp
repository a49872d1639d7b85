#include "core/sha256.h"

#include <gtest/gtest.h>

#include <string>

namespace figura {
namespace {

// Test vectors from FIPS 180-4 examples (NIST CSRC "SHA256.pdf" example
// values) and the empty-string digest.
TEST(Sha256, NistVectors) {
  EXPECT_EQ(Sha256Hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
  EXPECT_EQ(Sha256Hex("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(Sha256Hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  EXPECT_EQ(Sha256Hex(std::string(1000000, 'a')),
            "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
}

TEST(Sha256, IncrementalEqualsOneShot) {
  const std::string text(1000, 'x');
  Sha256 h;
  for (std::size_t i = 0; i < text.size(); i += 7) h.Update(std::string_view(text).substr(i, 7));
  EXPECT_EQ(h.HexDigest(), Sha256Hex(text));
}

}  // namespace
}  // namespace figura
