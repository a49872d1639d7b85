#include "io/tiff_decoder.h"

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <vector>

#include "core/error.h"
#include "io/huge_pages.h"
#include "io/image_header.h"
#include "io/luminance.h"
#include "io/tiff_io.h"

namespace figura {
namespace {

// What the decoder needs to know about the first directory.
struct Layout {
  std::uint32_t width = 0;
  std::uint32_t height = 0;
  int bits = 0;
  int samples = 0;        // samples per pixel in the file
  int used = 1;           // samples used: 1 (grey) or 3 (RGB)
  bool separate = false;  // PLANARCONFIG_SEPARATE
  bool is_float = false;
  bool min_is_white = false;
};

[[noreturn]] void Fail(const ByteSource& src, const std::string& what,
                       const TiffMessages& messages) {
  std::string text = src.Name() + ": " + what;
  if (!messages.first_error.empty()) text += " (" + messages.first_error + ")";
  throw InputError(text);
}

Layout ReadLayout(TIFF* tif, const ByteSource& src,
                  const TiffMessages& messages, std::int64_t max_pixels) {
  Layout l;
  if (TIFFGetField(tif, TIFFTAG_IMAGEWIDTH, &l.width) != 1 ||
      TIFFGetField(tif, TIFFTAG_IMAGELENGTH, &l.height) != 1 || l.width == 0 ||
      l.height == 0) {
    Fail(src, "corrupt TIFF (no image size)", messages);
  }
  CheckPixelLimit(src.Name(), l.width, l.height, max_pixels);

  std::uint16_t bits = 1;
  std::uint16_t samples = 1;
  std::uint16_t planar = PLANARCONFIG_CONTIG;
  std::uint16_t format = SAMPLEFORMAT_UINT;
  std::uint16_t photometric = 0;
  std::uint16_t compression = COMPRESSION_NONE;
  TIFFGetFieldDefaulted(tif, TIFFTAG_BITSPERSAMPLE, &bits);
  TIFFGetFieldDefaulted(tif, TIFFTAG_SAMPLESPERPIXEL, &samples);
  TIFFGetFieldDefaulted(tif, TIFFTAG_PLANARCONFIG, &planar);
  TIFFGetFieldDefaulted(tif, TIFFTAG_SAMPLEFORMAT, &format);
  TIFFGetFieldDefaulted(tif, TIFFTAG_COMPRESSION, &compression);
  if (TIFFGetField(tif, TIFFTAG_PHOTOMETRIC, &photometric) != 1) {
    photometric = samples >= 3 ? PHOTOMETRIC_RGB : PHOTOMETRIC_MINISBLACK;
  }
  l.bits = bits;
  l.samples = samples;
  l.separate = planar == PLANARCONFIG_SEPARATE;

  const bool uint_ok = (bits == 8 || bits == 16) && format == SAMPLEFORMAT_UINT;
  const bool float_ok = bits == 32 && format == SAMPLEFORMAT_IEEEFP;
  if (!uint_ok && !float_ok) {
    const char* kind = format == SAMPLEFORMAT_IEEEFP ? "float"
                       : format == SAMPLEFORMAT_INT  ? "signed integer"
                       : format == SAMPLEFORMAT_UINT ? "unsigned integer"
                                                     : "other";
    throw InputError(src.Name() + ": unsupported TIFF sample format (" +
                     std::to_string(bits) + "-bit " + kind +
                     "; need 8/16-bit unsigned or 32-bit float)");
  }
  l.is_float = float_ok;

  switch (photometric) {
    case PHOTOMETRIC_MINISWHITE:
      l.min_is_white = true;
      [[fallthrough]];
    case PHOTOMETRIC_MINISBLACK:
      l.used = 1;
      break;
    case PHOTOMETRIC_RGB:
      l.used = 3;
      break;
    case PHOTOMETRIC_YCBCR:
      if (compression == COMPRESSION_JPEG && bits == 8) {
        // Let the JPEG codec convert to RGB (upsampling chroma).
        TIFFSetField(tif, TIFFTAG_JPEGCOLORMODE, JPEGCOLORMODE_RGB);
        l.used = 3;
        break;
      }
      throw InputError(src.Name() +
                       ": unsupported TIFF colour model (YCbCr without JPEG)");
    case PHOTOMETRIC_PALETTE:
      throw InputError(src.Name() +
                       ": palette (indexed colour) TIFF is not supported");
    default:
      throw InputError(src.Name() +
                       ": unsupported TIFF colour model (photometric " +
                       std::to_string(photometric) + "; need grey or RGB)");
  }
  if (samples < l.used) {
    throw InputError(src.Name() + ": corrupt TIFF (" + std::to_string(samples) +
                     " samples per pixel for " +
                     (l.used == 3 ? "RGB" : "grey") + ")");
  }
  return l;
}

void FillInfo(const Layout& l, ImageInfo* info) {
  info->format = "tiff";
  info->width = static_cast<int>(l.width);
  info->height = static_cast<int>(l.height);
  info->bit_depth = l.bits;
  info->channels = l.samples;
  info->is_float = l.is_float;
  info->full_scale = l.is_float ? 1.0 : l.bits == 8 ? 255.0 : 65535.0;
}

// Converts `count` pixels of one buffer row into the output row.
// `stride` is the number of samples between pixels in the buffer, `first`
// the index of the first sample used, `channels` how many are used (1: the
// value; 3: RGB luma), and `weight` scales a single plane's contribution
// when planes are separate (accumulated into `out`).
template <typename T>
void ConvertRow(const std::uint8_t* row, std::size_t count, int stride,
                int channels, double weight, bool accumulate, float* out) {
  const auto load = [row](std::size_t index) {
    T v;
    std::memcpy(&v, row + index * sizeof(T), sizeof(T));
    return static_cast<double>(v);
  };
  const auto s = static_cast<std::size_t>(stride);
  if (channels == 1 && stride == 1 && weight == 1.0 && !accumulate) {
    // Plain grey samples (the common camera case): a loop the compiler
    // vectorises; same values as the general loop below.
    for (std::size_t x = 0; x < count; ++x)
      out[x] = static_cast<float>(load(x));
    return;
  }
  for (std::size_t x = 0; x < count; ++x) {
    double value = 0.0;
    if (channels == 1) {
      value = weight * load(x * s);
    } else {
      value = kRec601Red * load(x * s) + kRec601Green * load(x * s + 1) +
              kRec601Blue * load(x * s + 2);
    }
    out[x] = accumulate
                 ? static_cast<float>(static_cast<double>(out[x]) + value)
                 : static_cast<float>(value);
  }
}

void ConvertRowAny(const Layout& l, const std::uint8_t* row, std::size_t count,
                   int stride, int channels, double weight, bool accumulate,
                   float* out) {
  if (l.is_float) {
    ConvertRow<float>(row, count, stride, channels, weight, accumulate, out);
  } else if (l.bits == 16) {
    ConvertRow<std::uint16_t>(row, count, stride, channels, weight, accumulate,
                              out);
  } else {
    ConvertRow<std::uint8_t>(row, count, stride, channels, weight, accumulate,
                             out);
  }
}

std::vector<std::uint8_t> Allocate(const ByteSource& src, std::uint64_t bytes) {
  if (bytes == 0 || bytes > kTiffMaxChunkBytes) {
    throw InputError(src.Name() + ": TIFF strip or tile too large (" +
                     std::to_string(bytes) + " bytes, limit " +
                     std::to_string(kTiffMaxChunkBytes) + ")");
  }
  try {
    return std::vector<std::uint8_t>(bytes);
  } catch (const std::bad_alloc&) {
    throw InputError(src.Name() +
                     ": not enough memory for a TIFF strip or tile of " +
                     std::to_string(bytes) + " bytes");
  }
}

cv::Mat ReadPixels(TIFF* tif, const ByteSource& src,
                   const TiffMessages& messages, const Layout& l) {
  const std::uint64_t bytes_per_sample = static_cast<std::uint64_t>(l.bits) / 8;
  std::uint16_t compression = COMPRESSION_NONE;
  TIFFGetFieldDefaulted(tif, TIFFTAG_COMPRESSION, &compression);
  const std::uint64_t raw_bytes = std::uint64_t{l.width} * l.height *
                                  static_cast<std::uint64_t>(l.samples) *
                                  bytes_per_sample;
  if (compression == COMPRESSION_NONE && raw_bytes > src.Size()) {
    // Uncompressed pixels cannot be larger than the file: refuse before
    // allocating the image.
    throw InputError(src.Name() + ": truncated or corrupt TIFF (" +
                     std::to_string(raw_bytes) +
                     " bytes of pixel data described, file has " +
                     std::to_string(src.Size()) + ")");
  }
  cv::Mat out;
  try {
    out.create(static_cast<int>(l.height), static_cast<int>(l.width), CV_32FC1);
    AdviseHugePages(out.datastart,
                    static_cast<std::size_t>(out.dataend - out.datastart));
  } catch (const cv::Exception&) {
    throw InputError(src.Name() + ": not enough memory for a " +
                     std::to_string(l.width) + " x " +
                     std::to_string(l.height) + " image");
  }
  out.setTo(cv::Scalar(0));
  // Samples per pixel inside one strip/tile buffer.
  const int stride = l.separate ? 1 : l.samples;
  const int planes = l.separate ? l.used : 1;
  // Per plane: its weight in the grey value (separate RGB planes are
  // accumulated; interleaved pixels are converted in one go).
  const double plane_weight[3] = {l.used == 3 ? kRec601Red : 1.0, kRec601Green,
                                  kRec601Blue};
  const int channels_per_pass = l.separate ? 1 : l.used;

  if (TIFFIsTiled(tif) != 0) {
    std::uint32_t tw = 0;
    std::uint32_t th = 0;
    if (TIFFGetField(tif, TIFFTAG_TILEWIDTH, &tw) != 1 ||
        TIFFGetField(tif, TIFFTAG_TILELENGTH, &th) != 1 || tw == 0 || th == 0) {
      Fail(src, "corrupt TIFF (no tile size)", messages);
    }
    const std::uint64_t row_bytes = std::uint64_t{tw} *
                                    static_cast<std::uint64_t>(stride) *
                                    bytes_per_sample;
    const std::uint64_t tile_bytes = row_bytes * th;
    std::vector<std::uint8_t> buf = Allocate(src, tile_bytes);
    for (int p = 0; p < planes; ++p) {
      for (std::uint32_t y0 = 0; y0 < l.height; y0 += th) {
        for (std::uint32_t x0 = 0; x0 < l.width; x0 += tw) {
          const std::uint32_t tile =
              TIFFComputeTile(tif, x0, y0, 0, static_cast<std::uint16_t>(p));
          const tmsize_t got = TIFFReadEncodedTile(
              tif, tile, buf.data(), static_cast<tmsize_t>(tile_bytes));
          if (got < 0 || static_cast<std::uint64_t>(got) < tile_bytes) {
            Fail(
                src,
                "truncated or corrupt TIFF (tile " + std::to_string(tile) + ")",
                messages);
          }
          const std::uint32_t rows = std::min(th, l.height - y0);
          const std::uint32_t cols = std::min(tw, l.width - x0);
          for (std::uint32_t r = 0; r < rows; ++r) {
            ConvertRowAny(l, buf.data() + r * row_bytes, cols, stride,
                          channels_per_pass, plane_weight[p], p > 0,
                          out.ptr<float>(static_cast<int>(y0 + r)) + x0);
          }
        }
      }
    }
  } else {
    std::uint32_t rows_per_strip = l.height;
    TIFFGetFieldDefaulted(tif, TIFFTAG_ROWSPERSTRIP, &rows_per_strip);
    rows_per_strip = std::clamp<std::uint32_t>(rows_per_strip, 1, l.height);
    const std::uint64_t row_bytes = std::uint64_t{l.width} *
                                    static_cast<std::uint64_t>(stride) *
                                    bytes_per_sample;
    std::vector<std::uint8_t> buf = Allocate(src, row_bytes * rows_per_strip);
    for (int p = 0; p < planes; ++p) {
      for (std::uint32_t y0 = 0; y0 < l.height; y0 += rows_per_strip) {
        const std::uint32_t rows = std::min(rows_per_strip, l.height - y0);
        const std::uint32_t strip =
            TIFFComputeStrip(tif, y0, static_cast<std::uint16_t>(p));
        const std::uint64_t want = row_bytes * rows;
        const tmsize_t got = TIFFReadEncodedStrip(tif, strip, buf.data(),
                                                  static_cast<tmsize_t>(want));
        if (got < 0 || static_cast<std::uint64_t>(got) < want) {
          Fail(
              src,
              "truncated or corrupt TIFF (strip " + std::to_string(strip) + ")",
              messages);
        }
        for (std::uint32_t r = 0; r < rows; ++r) {
          ConvertRowAny(l, buf.data() + r * row_bytes, l.width, stride,
                        channels_per_pass, plane_weight[p], p > 0,
                        out.ptr<float>(static_cast<int>(y0 + r)));
        }
      }
    }
  }
  if (l.min_is_white) {
    const double full = l.is_float ? 1.0 : l.bits == 8 ? 255.0 : 65535.0;
    out = full - out;
  }
  return out;
}

}  // namespace

void ProbeTiff(const ByteSource& source, std::int64_t max_pixels,
               ImageInfo* info) {
  TiffMessages messages;
  TiffReadClient client;
  const TiffHandle tif = OpenTiffForReading(source, &client, &messages);
  if (!tif) Fail(source, "truncated or corrupt TIFF", messages);
  FillInfo(ReadLayout(tif.get(), source, messages, max_pixels), info);
}

cv::Mat DecodeTiff(const ByteSource& source, std::int64_t max_pixels,
                   ImageInfo* info) {
  TiffMessages messages;
  TiffReadClient client;
  const TiffHandle tif = OpenTiffForReading(source, &client, &messages);
  if (!tif) Fail(source, "truncated or corrupt TIFF", messages);
  const Layout layout = ReadLayout(tif.get(), source, messages, max_pixels);
  FillInfo(layout, info);
  return ReadPixels(tif.get(), source, messages, layout);
}

}  // namespace figura
