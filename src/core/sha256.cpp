#include "core/sha256.h"

#include <array>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <vector>

#include "core/error.h"

namespace figura {
namespace {

constexpr std::array<std::uint32_t, 64> kK = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1,
    0x923f82a4, 0xab1c5ed5, 0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3,
    0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174, 0xe49b69c1, 0xefbe4786,
    0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da,
    0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147,
    0x06ca6351, 0x14292967, 0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13,
    0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85, 0xa2bfe8a1, 0xa81a664b,
    0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
    0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a,
    0x5b9cca4f, 0x682e6ff3, 0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208,
    0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2};

constexpr std::uint32_t Rotr(std::uint32_t x, int n) {
  return (x >> n) | (x << (32 - n));
}

}  // namespace

Sha256::Sha256()
    : h_{0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
         0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19},
      buf_{} {}

void Sha256::Block(const std::uint8_t* p) {
  std::array<std::uint32_t, 64> w{};
  for (std::size_t i = 0; i < 16; ++i) {
    const std::uint8_t* q = p + 4 * i;
    w[i] = (std::uint32_t{q[0]} << 24) | (std::uint32_t{q[1]} << 16) |
           (std::uint32_t{q[2]} << 8) | std::uint32_t{q[3]};
  }
  for (int i = 16; i < 64; ++i) {
    const std::uint32_t s0 =
        Rotr(w[i - 15], 7) ^ Rotr(w[i - 15], 18) ^ (w[i - 15] >> 3);
    const std::uint32_t s1 =
        Rotr(w[i - 2], 17) ^ Rotr(w[i - 2], 19) ^ (w[i - 2] >> 10);
    w[i] = w[i - 16] + s0 + w[i - 7] + s1;
  }
  std::uint32_t a = h_[0], b = h_[1], c = h_[2], d = h_[3];
  std::uint32_t e = h_[4], f = h_[5], g = h_[6], h = h_[7];
  for (int i = 0; i < 64; ++i) {
    const std::uint32_t s1 = Rotr(e, 6) ^ Rotr(e, 11) ^ Rotr(e, 25);
    const std::uint32_t ch = (e & f) ^ (~e & g);
    const std::uint32_t t1 = h + s1 + ch + kK[i] + w[i];
    const std::uint32_t s0 = Rotr(a, 2) ^ Rotr(a, 13) ^ Rotr(a, 22);
    const std::uint32_t maj = (a & b) ^ (a & c) ^ (b & c);
    const std::uint32_t t2 = s0 + maj;
    h = g;
    g = f;
    f = e;
    e = d + t1;
    d = c;
    c = b;
    b = a;
    a = t1 + t2;
  }
  h_[0] += a;
  h_[1] += b;
  h_[2] += c;
  h_[3] += d;
  h_[4] += e;
  h_[5] += f;
  h_[6] += g;
  h_[7] += h;
}

void Sha256::Update(std::span<const std::uint8_t> bytes) {
  total_bytes_ += bytes.size();
  std::size_t i = 0;
  if (buf_len_ > 0) {
    const std::size_t take = std::min(bytes.size(), 64 - buf_len_);
    std::memcpy(buf_ + buf_len_, bytes.data(), take);
    buf_len_ += take;
    i = take;
    if (buf_len_ == 64) {
      Block(buf_);
      buf_len_ = 0;
    }
  }
  for (; i + 64 <= bytes.size(); i += 64) Block(bytes.data() + i);
  if (i < bytes.size()) {
    std::memcpy(buf_, bytes.data() + i, bytes.size() - i);
    buf_len_ = bytes.size() - i;
  }
}

void Sha256::Update(std::string_view text) {
  Update(std::span<const std::uint8_t>(
      reinterpret_cast<const std::uint8_t*>(text.data()), text.size()));
}

std::string Sha256::HexDigest() {
  const std::uint64_t bits = total_bytes_ * 8;
  std::array<std::uint8_t, 72> pad{};
  pad[0] = 0x80;
  const std::size_t pad_len =
      (buf_len_ < 56) ? (56 - buf_len_) : (120 - buf_len_);
  for (int i = 0; i < 8; ++i)
    pad[pad_len + i] = static_cast<std::uint8_t>(bits >> (56 - 8 * i));
  const std::uint64_t keep = total_bytes_;
  Update(std::span<const std::uint8_t>(pad.data(), pad_len + 8));
  total_bytes_ = keep;
  std::string hex(64, '0');
  static constexpr char kDigits[] = "0123456789abcdef";
  for (int i = 0; i < 8; ++i) {
    for (int k = 0; k < 8; ++k) {
      hex[8 * i + k] = kDigits[(h_[i] >> (28 - 4 * k)) & 0xF];
    }
  }
  return hex;
}

std::string Sha256Hex(std::string_view bytes) {
  Sha256 h;
  h.Update(bytes);
  return h.HexDigest();
}

std::string Sha256File(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path.string() + ": cannot open file to hash");
  Sha256 h;
  std::vector<char> buf(1 << 20);
  while (in) {
    in.read(buf.data(), static_cast<std::streamsize>(buf.size()));
    const std::streamsize got = in.gcount();
    if (got > 0)
      h.Update(std::string_view(buf.data(), static_cast<std::size_t>(got)));
  }
  if (in.bad()) throw InputError(path.string() + ": read error while hashing");
  return h.HexDigest();
}

}  // namespace figura
