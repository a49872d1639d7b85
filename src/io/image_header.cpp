#include "io/image_header.h"

#include <algorithm>
#include <array>
#include <cassert>
#include <climits>
#include <cstring>
#include <initializer_list>
#include <vector>

#include "core/error.h"

namespace figura {
namespace {

// Reads exactly n bytes at offset or throws "truncated".
void ReadExact(const ByteSource& src, std::uint64_t offset, void* out,
               std::size_t n, const char* what) {
  const std::int64_t got = src.ReadAt(offset, out, n);
  if (got < 0) throw InputError(src.Name() + ": read error");
  if (static_cast<std::size_t>(got) != n) {
    throw InputError(src.Name() + ": truncated " + what + " header");
  }
}

std::uint32_t Be16(const std::uint8_t* p) {
  return static_cast<std::uint32_t>(p[0] << 8 | p[1]);
}
std::uint32_t Be32(const std::uint8_t* p) {
  return static_cast<std::uint32_t>(p[0]) << 24 |
         static_cast<std::uint32_t>(p[1]) << 16 |
         static_cast<std::uint32_t>(p[2]) << 8 | p[3];
}
std::uint32_t Le16(const std::uint8_t* p) {
  return static_cast<std::uint32_t>(p[1] << 8 | p[0]);
}
std::uint32_t Le32(const std::uint8_t* p) {
  return static_cast<std::uint32_t>(p[3]) << 24 |
         static_cast<std::uint32_t>(p[2]) << 16 |
         static_cast<std::uint32_t>(p[1]) << 8 | p[0];
}

// PNG: signature, then the IHDR chunk (ISO/IEC 15948 / W3C PNG 11.2.2).
ImageHeader ReadPngHeader(const ByteSource& src) {
  std::array<std::uint8_t, 33> b{};
  ReadExact(src, 0, b.data(), b.size(), "PNG");
  if (Be32(&b[8]) != 13 || std::memcmp(&b[12], "IHDR", 4) != 0) {
    throw InputError(src.Name() + ": corrupt PNG (no IHDR chunk first)");
  }
  ImageHeader h;
  h.width = Be32(&b[16]);
  h.height = Be32(&b[20]);
  const int depth = b[24];
  const int colour_type = b[25];
  // Colour types: 0 grey, 2 RGB, 3 palette, 4 grey+alpha, 6 RGBA.
  switch (colour_type) {
    case 0:
    case 3:
      h.channels = 1;
      break;
    case 2:
      h.channels = 3;
      break;
    case 4:
      h.channels = 2;
      break;
    case 6:
      h.channels = 4;
      break;
    default:
      throw InputError(src.Name() + ": corrupt PNG (colour type " +
                       std::to_string(colour_type) + ")");
  }
  if (depth != 1 && depth != 2 && depth != 4 && depth != 8 && depth != 16) {
    throw InputError(src.Name() + ": corrupt PNG (bit depth " +
                     std::to_string(depth) + ")");
  }
  // Depths below 8 are expanded to 0..255 by the decoder.
  h.bit_depth = depth == 16 ? 16 : 8;
  return h;
}

bool IsSof(std::uint8_t m) {
  return m >= 0xC0 && m <= 0xCF && m != 0xC4 && m != 0xC8 && m != 0xCC;
}

// JPEG: walk the marker segments (ITU-T T.81 Annex B) to the first SOFn.
ImageHeader ReadJpegHeader(const ByteSource& src) {
  std::uint64_t pos = 2;  // after SOI
  const std::uint64_t size = src.Size();
  for (int segments = 0; segments < 100000; ++segments) {
    std::array<std::uint8_t, 2> m{};
    ReadExact(src, pos, m.data(), 2, "JPEG");
    if (m[0] != 0xFF) {
      throw InputError(src.Name() + ": corrupt JPEG (marker expected)");
    }
    if (m[1] == 0xFF) {  // fill byte
      ++pos;
      continue;
    }
    const std::uint8_t marker = m[1];
    pos += 2;
    if ((marker >= 0xD0 && marker <= 0xD7) || marker == 0x01) continue;
    if (marker == 0xD9 || marker == 0xDA) {
      throw InputError(src.Name() + ": corrupt JPEG (no frame header)");
    }
    std::array<std::uint8_t, 8> seg{};
    ReadExact(src, pos, seg.data(), 2, "JPEG");
    const std::uint32_t length = Be16(seg.data());
    if (length < 2) throw InputError(src.Name() + ": corrupt JPEG segment");
    if (IsSof(marker)) {
      ReadExact(src, pos, seg.data(), seg.size(), "JPEG");
      const int precision = seg[2];
      ImageHeader h;
      h.height = Be16(&seg[3]);
      h.width = Be16(&seg[5]);
      h.channels = seg[7];
      if (marker == 0xC3 || marker == 0xC7 || marker == 0xCB ||
          marker == 0xCF) {
        throw InputError(src.Name() + ": lossless JPEG is not supported");
      }
      if (precision != 8) {
        throw InputError(src.Name() + ": " + std::to_string(precision) +
                         "-bit JPEG is not supported (8-bit only)");
      }
      if (h.height == 0) {
        throw InputError(src.Name() +
                         ": JPEG without a height in its frame header "
                         "(DNL) is not supported");
      }
      if (h.channels != 1 && h.channels != 3 && h.channels != 4) {
        throw InputError(src.Name() + ": JPEG with " +
                         std::to_string(h.channels) +
                         " components is not supported");
      }
      return h;
    }
    pos += length;
    if (pos >= size) break;
  }
  throw InputError(src.Name() + ": truncated JPEG header (no frame header)");
}

// BMP: BITMAPFILEHEADER (14 bytes) then a BITMAPCOREHEADER (12) or a
// BITMAPINFOHEADER or later (>= 40).
ImageHeader ReadBmpHeader(const ByteSource& src) {
  std::array<std::uint8_t, 30> b{};
  ReadExact(src, 0, b.data(), 18, "BMP");
  const std::uint32_t dib = Le32(&b[14]);
  ImageHeader h;
  int bpp = 0;
  if (dib == 12) {
    ReadExact(src, 0, b.data(), 26, "BMP");
    h.width = Le16(&b[18]);
    h.height = Le16(&b[20]);
    bpp = static_cast<int>(Le16(&b[24]));
  } else if (dib >= 40 && dib <= 124) {
    ReadExact(src, 0, b.data(), 30, "BMP");
    h.width = static_cast<std::int32_t>(Le32(&b[18]));
    // Negative height: rows stored top-down.
    h.height = static_cast<std::int32_t>(Le32(&b[22]));
    if (h.height < 0) h.height = -h.height;
    bpp = static_cast<int>(Le16(&b[28]));
  } else {
    throw InputError(src.Name() + ": corrupt or unsupported BMP (header size " +
                     std::to_string(dib) + ")");
  }
  if (bpp == 32) {
    h.channels = 4;
  } else if (bpp == 24 || bpp == 16 || bpp == 15) {
    h.channels = 3;
  } else if (bpp == 1 || bpp == 4 || bpp == 8) {
    h.channels = 1;  // palette index
  } else {
    throw InputError(src.Name() + ": unsupported BMP (" + std::to_string(bpp) +
                     " bits per pixel)");
  }
  h.bit_depth = 8;
  return h;
}

}  // namespace

const char* ImageFormatName(ImageFormat format) {
  switch (format) {
    case ImageFormat::kTiff:
      return "tiff";
    case ImageFormat::kPng:
      return "png";
    case ImageFormat::kJpeg:
      return "jpeg";
    case ImageFormat::kBmp:
      return "bmp";
  }
  return "unknown";
}

ImageFormat DetectImageFormat(const ByteSource& source) {
  std::array<std::uint8_t, 8> b{};
  const std::int64_t got = source.ReadAt(0, b.data(), b.size());
  if (got < 0) throw InputError(source.Name() + ": read error");
  const auto n = static_cast<std::size_t>(got);
  const auto starts = [&](std::initializer_list<std::uint8_t> sig) {
    return n >= sig.size() && std::equal(sig.begin(), sig.end(), b.begin());
  };
  if (starts({'I', 'I', 42, 0}) || starts({'M', 'M', 0, 42}) ||
      starts({'I', 'I', 43, 0}) || starts({'M', 'M', 0, 43})) {
    return ImageFormat::kTiff;
  }
  if (starts({0x89, 'P', 'N', 'G', '\r', '\n', 0x1A, '\n'})) {
    return ImageFormat::kPng;
  }
  if (starts({0xFF, 0xD8, 0xFF})) return ImageFormat::kJpeg;
  if (starts({'B', 'M'})) return ImageFormat::kBmp;
  throw InputError(source.Name() + ": not a TIFF, PNG, JPEG or BMP image");
}

ImageHeader ReadImageHeader(const ByteSource& source, ImageFormat format) {
  ImageHeader h;
  switch (format) {
    case ImageFormat::kPng:
      h = ReadPngHeader(source);
      break;
    case ImageFormat::kJpeg:
      h = ReadJpegHeader(source);
      break;
    case ImageFormat::kBmp:
      h = ReadBmpHeader(source);
      break;
    case ImageFormat::kTiff:
      assert(false && "TIFF headers are read by libtiff");
      break;
  }
  if (h.width <= 0 || h.height <= 0) {
    throw InputError(source.Name() + ": corrupt " + ImageFormatName(format) +
                     " header (size " + std::to_string(h.width) + " x " +
                     std::to_string(h.height) + ")");
  }
  return h;
}

bool JpegIsComplete(const ByteSource& source) {
  const std::string_view d = source.Memory();
  assert(!d.empty());
  const auto at = [&](std::size_t i) {
    return static_cast<std::uint8_t>(d[i]);
  };
  std::size_t pos = 2;
  while (pos + 1 < d.size()) {
    if (at(pos) != 0xFF) return false;
    const std::uint8_t marker = at(pos + 1);
    if (marker == 0xFF) {
      ++pos;
      continue;
    }
    pos += 2;
    if (marker == 0xD9) return true;  // EOI
    if ((marker >= 0xD0 && marker <= 0xD7) || marker == 0x01) continue;
    if (pos + 2 > d.size()) return false;
    const std::size_t length =
        static_cast<std::size_t>(at(pos)) << 8 | at(pos + 1);
    pos += length;
    if (marker != 0xDA) continue;
    // Entropy-coded data after SOS: ends at an FF not followed by 00
    // (stuffing) or a restart marker.
    while (true) {
      const void* ff = pos < d.size()
                           ? std::memchr(d.data() + pos, 0xFF, d.size() - pos)
                           : nullptr;
      if (ff == nullptr) return false;
      pos = static_cast<std::size_t>(static_cast<const char*>(ff) - d.data());
      if (pos + 1 >= d.size()) return false;
      const std::uint8_t next = at(pos + 1);
      if (next == 0x00 || (next >= 0xD0 && next <= 0xD7) || next == 0xFF) {
        pos += next == 0xFF ? 1 : 2;
        continue;
      }
      break;
    }
  }
  return false;
}

bool PngIsComplete(const ByteSource& source) {
  const std::string_view d = source.Memory();
  const auto at = [&](std::size_t i) {
    return static_cast<std::uint32_t>(static_cast<std::uint8_t>(d[i]));
  };
  std::size_t pos = 8;  // after the signature
  while (pos + 12 <= d.size()) {
    const std::uint32_t length =
        at(pos) << 24 | at(pos + 1) << 16 | at(pos + 2) << 8 | at(pos + 3);
    if (length > 0x7FFFFFFFU) return false;  // ISO/IEC 15948: < 2^31
    if (d.substr(pos + 4, 4) == "IEND") return true;
    pos += 12 + static_cast<std::size_t>(length);
  }
  return false;
}

void CheckPixelLimit(const std::string& name, std::int64_t width,
                     std::int64_t height, std::int64_t max_pixels) {
  const bool too_wide = width > INT_MAX || height > INT_MAX;
  // Both sides are below 2^32, so the product fits in 64 bits.
  if (too_wide || width * height > max_pixels) {
    throw InputError(name + ": image too large (" + std::to_string(width) +
                     " x " + std::to_string(height) + " pixels, limit " +
                     std::to_string(max_pixels) + " pixels)");
  }
}

}  // namespace figura
