// SHA-256 (FIPS 180-4) of bytes and files, for tracing every result to the
// exact input it was computed from.
#pragma once

#include <cstdint>
#include <filesystem>
#include <span>
#include <string>
#include <string_view>

namespace figura {

// Incremental SHA-256 (FIPS 180-4).
class Sha256 {
 public:
  Sha256();
  // Adds bytes to the message.
  void Update(std::span<const std::uint8_t> bytes);
  // Adds the bytes of a string.
  void Update(std::string_view text);
  // Finishes and returns the digest as 64 lowercase hex digits. The object
  // must not be updated afterwards.
  std::string HexDigest();

 private:
  void Block(const std::uint8_t* p);
  std::uint32_t h_[8];
  std::uint8_t buf_[64];
  std::size_t buf_len_ = 0;
  std::uint64_t total_bytes_ = 0;
};

// SHA-256 of a string, hex.
std::string Sha256Hex(std::string_view bytes);

// SHA-256 of a file's bytes, hex. Throws InputError naming the file if it
// cannot be read.
std::string Sha256File(const std::filesystem::path& path);

}  // namespace figura
