// TIFF loading: every accepted layout round-trips exact sample values;
// files written by an independent encoder (tifffile, Debian python3-tifffile)
// decode to the values it was given; damaged and oversized files are refused
// with one clear line.
#include "io/tiff_decoder.h"

#include <gtest/gtest.h>

#include <chrono>
#include <cmath>

#include "core/error.h"
#include "io/image.h"
#include "io_test_util.h"

namespace figura {
namespace {

using io_test::ExpectedGrey;
using io_test::TiffSpec;
namespace fs = std::filesystem;

void ExpectPixels(const Image& image, const TiffSpec& spec) {
  ASSERT_EQ(image.pixels.type(), CV_32FC1);
  ASSERT_EQ(image.pixels.cols, spec.width);
  ASSERT_EQ(image.pixels.rows, spec.height);
  // Grey samples are integers or exactly representable floats: exact. RGB
  // luma is rounded once to float: relative 1e-6.
  for (int y = 0; y < spec.height; ++y) {
    for (int x = 0; x < spec.width; ++x) {
      const double want = ExpectedGrey(spec, x, y);
      const auto got = static_cast<double>(image.pixels.at<float>(y, x));
      if (spec.samples == 1) {
        ASSERT_EQ(got, want) << "x=" << x << " y=" << y;
      } else {
        ASSERT_NEAR(got, want, 1e-6 * std::max(1.0, std::abs(want)))
            << "x=" << x << " y=" << y;
      }
    }
  }
}

// Every combination of depth, samples, planar configuration, strips/tiles
// and compression written with libtiff reads back exactly.
TEST(TiffDecoder, LayoutMatrixRoundTrips) {
  const fs::path dir = io_test::ScratchDir("tiff_matrix");
  int count = 0;
  for (const int bits : {8, 16, 32}) {
    for (const int samples : {1, 3, 4}) {
      for (const bool separate : {false, true}) {
        if (samples == 1 && separate) continue;
        for (const bool tiled : {false, true}) {
          for (const std::uint16_t compression :
               {COMPRESSION_NONE, COMPRESSION_LZW, COMPRESSION_ADOBE_DEFLATE}) {
            TiffSpec spec;
            spec.bits = bits;
            spec.samples = samples;
            spec.separate = separate;
            spec.tiled = tiled;
            spec.compression = compression;
            spec.photometric =
                samples >= 3 ? PHOTOMETRIC_RGB : PHOTOMETRIC_MINISBLACK;
            const std::string name = "b" + std::to_string(bits) + "_s" +
                                     std::to_string(samples) +
                                     (separate ? "_sep" : "_contig") +
                                     (tiled ? "_tiles" : "_strips") + "_c" +
                                     std::to_string(compression) + ".tif";
            SCOPED_TRACE(name);
            ASSERT_TRUE(io_test::WriteTestTiff(dir / name, spec));
            const Image image = LoadImage(dir / name);
            EXPECT_EQ(image.info.format, "tiff");
            EXPECT_EQ(image.info.width, spec.width);
            EXPECT_EQ(image.info.height, spec.height);
            EXPECT_EQ(image.info.bit_depth, bits);
            EXPECT_EQ(image.info.channels, samples);
            EXPECT_EQ(image.info.is_float, bits == 32);
            EXPECT_EQ(image.info.full_scale, bits == 8    ? 255.0
                                             : bits == 16 ? 65535.0
                                                          : 1.0);
            ExpectPixels(image, spec);
            ++count;
          }
        }
      }
    }
  }
  EXPECT_EQ(count, 3 * 5 * 2 * 3);
}

// Min-is-white grey is inverted to full_scale - value (TIFF 6.0,
// PhotometricInterpretation = 0).
TEST(TiffDecoder, MinIsWhiteIsInverted) {
  const fs::path dir = io_test::ScratchDir("tiff_miniswhite");
  for (const int bits : {8, 16}) {
    TiffSpec spec;
    spec.bits = bits;
    spec.photometric = PHOTOMETRIC_MINISWHITE;
    ASSERT_TRUE(io_test::WriteTestTiff(dir / "w.tif", spec));
    ExpectPixels(LoadImage(dir / "w.tif"), spec);
  }
}

// Strips of one row and one strip for the whole image.
TEST(TiffDecoder, StripHeights) {
  const fs::path dir = io_test::ScratchDir("tiff_strips");
  for (const int rps : {1, 23, 1000}) {
    TiffSpec spec;
    spec.bits = 16;
    spec.rows_per_strip = rps;
    spec.compression = COMPRESSION_ADOBE_DEFLATE;
    ASSERT_TRUE(io_test::WriteTestTiff(dir / "s.tif", spec));
    ExpectPixels(LoadImage(dir / "s.tif"), spec);
  }
}

// BigTIFF (libtiff "w8" mode) is recognised by its "II+" signature; of a
// multi-page file the first page is read.
TEST(TiffDecoder, BigTiffAndFirstPage) {
  const fs::path dir = io_test::ScratchDir("tiff_bigtiff");
  TIFF* tif = TIFFOpen((dir / "big.tif").c_str(), "w8");
  ASSERT_NE(tif, nullptr);
  for (int page = 0; page < 2; ++page) {
    TIFFSetField(tif, TIFFTAG_IMAGEWIDTH, 4U);
    TIFFSetField(tif, TIFFTAG_IMAGELENGTH, 2U);
    TIFFSetField(tif, TIFFTAG_BITSPERSAMPLE, 16);
    TIFFSetField(tif, TIFFTAG_SAMPLESPERPIXEL, 1);
    TIFFSetField(tif, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
    TIFFSetField(tif, TIFFTAG_ROWSPERSTRIP, 2U);
    std::uint16_t data[8];
    for (int i = 0; i < 8; ++i)
      data[i] = static_cast<std::uint16_t>(1000 * (page + 1) + i);
    ASSERT_GE(TIFFWriteEncodedStrip(tif, 0, data, sizeof data), 0);
    ASSERT_EQ(TIFFWriteDirectory(tif), 1);
  }
  TIFFClose(tif);
  EXPECT_EQ(io_test::ReadBytes(dir / "big.tif").substr(0, 4),
            std::string("II+\0", 4));
  const Image image = LoadImage(dir / "big.tif");
  ASSERT_EQ(image.pixels.cols, 4);
  EXPECT_EQ(image.pixels.at<float>(0, 0), 1000.0F);
  EXPECT_EQ(image.pixels.at<float>(1, 3), 1007.0F);
}

// NaN in float data passes through (the analysis masks it).
TEST(TiffDecoder, FloatNanPassesThrough) {
  const fs::path dir = io_test::ScratchDir("tiff_nan");
  TIFF* tif = TIFFOpen((dir / "nan.tif").c_str(), "w");
  ASSERT_NE(tif, nullptr);
  TIFFSetField(tif, TIFFTAG_IMAGEWIDTH, 3U);
  TIFFSetField(tif, TIFFTAG_IMAGELENGTH, 1U);
  TIFFSetField(tif, TIFFTAG_BITSPERSAMPLE, 32);
  TIFFSetField(tif, TIFFTAG_SAMPLESPERPIXEL, 1);
  TIFFSetField(tif, TIFFTAG_SAMPLEFORMAT, SAMPLEFORMAT_IEEEFP);
  TIFFSetField(tif, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
  TIFFSetField(tif, TIFFTAG_ROWSPERSTRIP, 1U);
  float row[3] = {0.5F, std::nanf(""), -2.0F};
  ASSERT_GE(TIFFWriteEncodedStrip(tif, 0, row, sizeof row), 0);
  TIFFClose(tif);
  const Image image = LoadImage(dir / "nan.tif");
  EXPECT_EQ(image.pixels.at<float>(0, 0), 0.5F);
  EXPECT_TRUE(std::isnan(image.pixels.at<float>(0, 1)));
  EXPECT_EQ(image.pixels.at<float>(0, 2), -2.0F);
  EXPECT_TRUE(image.info.is_float);
  EXPECT_EQ(image.info.full_scale, 1.0);
}

// JPEG-compressed TIFF in YCbCr (TIFF 6.0 with Technical Note 2): the
// codec converts back to RGB, then Rec. 601 luma. Lossy: compared within a
// few levels on a smooth image.
TEST(TiffDecoder, JpegYCbCrTiff) {
  const fs::path dir = io_test::ScratchDir("tiff_jpeg");
  const fs::path path = dir / "ycbcr.tif";
  constexpr int kW = 64;
  constexpr int kH = 48;
  const auto colour = [](int x, int y, int c) {
    return c == 0 ? 2 * x + y : c == 1 ? 50 + x : 200 - 2 * y;
  };
  TIFF* tif = TIFFOpen(path.c_str(), "w");
  ASSERT_NE(tif, nullptr);
  TIFFSetField(tif, TIFFTAG_IMAGEWIDTH, kW);
  TIFFSetField(tif, TIFFTAG_IMAGELENGTH, kH);
  TIFFSetField(tif, TIFFTAG_BITSPERSAMPLE, 8);
  TIFFSetField(tif, TIFFTAG_SAMPLESPERPIXEL, 3);
  TIFFSetField(tif, TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
  TIFFSetField(tif, TIFFTAG_COMPRESSION, COMPRESSION_JPEG);
  TIFFSetField(tif, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_YCBCR);
  TIFFSetField(tif, TIFFTAG_JPEGCOLORMODE, JPEGCOLORMODE_RGB);
  TIFFSetField(tif, TIFFTAG_JPEGQUALITY, 95);
  TIFFSetField(tif, TIFFTAG_ROWSPERSTRIP, 16);
  std::vector<std::uint8_t> row(static_cast<std::size_t>(kW) * 3);
  for (int y = 0; y < kH; ++y) {
    for (int x = 0; x < kW; ++x) {
      for (int c = 0; c < 3; ++c)
        row[x * 3 + c] = static_cast<std::uint8_t>(colour(x, y, c));
    }
    ASSERT_EQ(
        TIFFWriteScanline(tif, row.data(), static_cast<std::uint32_t>(y), 0),
        1);
  }
  TIFFClose(tif);
  const Image image = LoadImage(path);
  EXPECT_EQ(image.info.channels, 3);
  double sum = 0.0;
  double worst = 0.0;
  for (int y = 0; y < kH; ++y) {
    for (int x = 0; x < kW; ++x) {
      const double want =
          io_test::Rec601(colour(x, y, 0), colour(x, y, 1), colour(x, y, 2));
      const double err =
          std::abs(static_cast<double>(image.pixels.at<float>(y, x)) - want);
      sum += err;
      worst = std::max(worst, err);
    }
  }
  EXPECT_LT(sum / (kW * kH), 1.5);
  EXPECT_LT(worst, 6.0);
}

// Files written by tifffile (an independent TIFF writer): its IFD comes
// before the data, so truncation hits the pixel data, not the header.
class TifffileReference : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new fs::path;
    scratch_ = new fs::path(io_test::ScratchDir("tifffile_ref"));
    rc_ = io_test::CachedPython("tifffile_ref", R"PY(
import os
for bits in (8, 16, 32):
    g = pattern(0, bits)
    tifffile.imwrite(f'{d}/grey{bits}.tif', g, rowsperstrip=5)
    tifffile.imwrite(f'{d}/grey{bits}_zlib.tif', g, rowsperstrip=5, compression='zlib')
    tifffile.imwrite(f'{d}/grey{bits}_tiles.tif', g, tile=(16, 16), compression='zlib')
    rgb = np.stack([pattern(c, bits) for c in range(3)], axis=-1)
    tifffile.imwrite(f'{d}/rgb{bits}.tif', rgb, photometric='rgb', rowsperstrip=4)
    tifffile.imwrite(f'{d}/rgb{bits}_planar.tif', np.moveaxis(rgb, -1, 0), photometric='rgb',
                     planarconfig='separate', tile=(16, 16))
    tifffile.imwrite(f'{d}/bigendian{bits}.tif', rgb, photometric='rgb', byteorder='>')
# Signed 16-bit and a palette image: refused.
tifffile.imwrite(f'{d}/int16.tif', pattern(0, 16).astype(np.int16))
tifffile.imwrite(f'{d}/float64.tif', pattern(0, 32).astype(np.float64))
Image.fromarray(pattern(0, 8)).convert('P').save(f'{d}/palette.tif')
)PY",
                                dir_);
  }
  static void TearDownTestSuite() {
    delete dir_;
    delete scratch_;
  }
  void SetUp() override {
    if (rc_ == 77)
      GTEST_SKIP()
          << "/usr/bin/python3 with numpy, tifffile and PIL not available";
    ASSERT_EQ(rc_, 0) << "reference script failed";
  }
  static fs::path* dir_;      // reference files (shared, read-only)
  static fs::path* scratch_;  // this process's own files
  static int rc_;
};
fs::path* TifffileReference::dir_ = nullptr;
fs::path* TifffileReference::scratch_ = nullptr;
int TifffileReference::rc_ = -1;

TEST_F(TifffileReference, DecodesIndependentFiles) {
  for (const int bits : {8, 16, 32}) {
    TiffSpec grey;
    grey.bits = bits;
    TiffSpec rgb = grey;
    rgb.samples = 3;
    const std::string b = std::to_string(bits);
    for (const std::string& name :
         {"grey" + b, "grey" + b + "_zlib", "grey" + b + "_tiles"}) {
      SCOPED_TRACE(name);
      ExpectPixels(LoadImage(*dir_ / (name + ".tif")), grey);
    }
    for (const std::string& name :
         {"rgb" + b, "rgb" + b + "_planar", "bigendian" + b}) {
      SCOPED_TRACE(name);
      const Image image = LoadImage(*dir_ / (name + ".tif"));
      EXPECT_EQ(image.info.channels, 3);
      ExpectPixels(image, rgb);
    }
  }
}

TEST_F(TifffileReference, RefusesUnsupportedSampleFormats) {
  for (const char* name : {"int16.tif", "float64.tif", "palette.tif"}) {
    SCOPED_TRACE(name);
    try {
      LoadImage(*dir_ / name);
      ADD_FAILURE() << "loaded";
    } catch (const InputError& e) {
      const std::string what = e.what();
      EXPECT_NE(what.find(name), std::string::npos) << what;
      EXPECT_NE(what.find("not supported") + what.find("unsupported"),
                2 * std::string::npos)
          << what;
      EXPECT_EQ(what.find('\n'), std::string::npos) << what;
    }
  }
}

TEST_F(TifffileReference, TruncatedDataIsRefused) {
  for (const char* name : {"grey16.tif", "grey16_zlib.tif", "grey8_tiles.tif",
                           "rgb32_planar.tif"}) {
    SCOPED_TRACE(name);
    const std::string bytes = io_test::ReadBytes(*dir_ / name);
    const fs::path cut = *scratch_ / (std::string("cut_") + name);
    io_test::WriteBytes(cut, bytes.substr(0, bytes.size() * 3 / 4));
    // The header still reads: the probe succeeds, the load fails.
    EXPECT_EQ(ProbeImage(cut).width, 37);
    try {
      LoadImage(cut);
      ADD_FAILURE() << "loaded";
    } catch (const InputError& e) {
      const std::string what = e.what();
      EXPECT_NE(what.find(cut.string()), std::string::npos) << what;
      EXPECT_NE(what.find("truncated or corrupt TIFF"), std::string::npos)
          << what;
    }
  }
}

// A header claiming 200000 x 200000 pixels is refused from the header alone:
// quickly and without allocating the 40 GB it describes.
TEST(TiffDecoder, HugeHeaderRefusedFast) {
  const fs::path dir = io_test::ScratchDir("tiff_huge");
  // Classic little-endian TIFF (TIFF 6.0 section 2): header, one IFD with 8
  // entries (tag, type, count, value), sorted by tag.
  std::string f("II*\0\x08\0\0\0", 8);
  const auto u16 = [&f](unsigned v) {
    f.push_back(static_cast<char>(v & 0xFF));
    f.push_back(static_cast<char>(v >> 8));
  };
  const auto u32 = [&](unsigned v) {
    u16(v & 0xFFFF);
    u16(v >> 16);
  };
  const auto entry = [&](unsigned tag, unsigned type, unsigned value) {
    u16(tag);
    u16(type);
    u32(1);
    if (type == 3) {
      u16(value);
      u16(0);
    } else {
      u32(value);
    }
  };
  u16(8);
  entry(256, 4, 200000);      // ImageWidth
  entry(257, 4, 200000);      // ImageLength
  entry(258, 3, 8);           // BitsPerSample
  entry(259, 3, 1);           // Compression: none
  entry(262, 3, 1);           // Photometric: min-is-black
  entry(273, 4, 122);         // StripOffsets
  entry(278, 4, 200000);      // RowsPerStrip
  entry(279, 4, 4000000000);  // StripByteCounts
  u32(0);                     // no next IFD
  f.append(16, '\0');
  const fs::path path = dir / "huge.tif";
  io_test::WriteBytes(path, f);
  const auto start = std::chrono::steady_clock::now();
  for (int i = 0; i < 2; ++i) {
    try {
      if (i == 0) {
        LoadImage(path);
      } else {
        ProbeImage(path);
      }
      ADD_FAILURE() << "accepted";
    } catch (const InputError& e) {
      const std::string what = e.what();
      EXPECT_NE(what.find("huge.tif: image too large (200000 x 200000 pixels"),
                std::string::npos)
          << what;
    }
  }
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start)
          .count();
  EXPECT_LT(seconds, 0.5);
  // With the limit raised, the size passes but the data is not there.
  LoadOptions lax;
  lax.max_pixels = std::int64_t{1} << 40;
  EXPECT_THROW(LoadImage(path, lax), InputError);
}

// A fuzzed TIFF (tests/fuzz/corpus/image_decode_fuzz, found by
// image_decode_fuzz) whose NumberOfInks tag disagrees with SamplesPerPixel:
// libtiff's warning text breaks over two lines ("...NumberOfInks:\n  Value
// 32 ..."). The refusal must still be one line naming the file (the
// project's bad-input rule).
TEST(TiffDecoder, LibtiffMessagesStayOneLine) {
  const std::string bytes = io_test::ReadBytes(
      fs::path(FIGURA_SOURCE_DIR) /
      "tests/fuzz/corpus/image_decode_fuzz/tiff-inks-warning-two-lines.tif");
  ASSERT_FALSE(bytes.empty());
  LoadOptions options;
  options.max_pixels = std::int64_t{1} << 22;
  try {
    DecodeImage("inks.tif", bytes, options);
    FAIL() << "expected a refusal";
  } catch (const InputError& e) {
    const std::string message = e.what();
    EXPECT_EQ(message.rfind("inks.tif: ", 0), 0U) << message;
    EXPECT_EQ(message.find('\n'), std::string::npos) << message;
    EXPECT_NE(message.find("NumberOfInks: Value 32"), std::string::npos)
        << message;
  }
}

}  // namespace
}  // namespace figura
