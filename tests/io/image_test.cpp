// Loading PNG, JPEG and BMP (through OpenCV) and the checks every load makes:
// signature-based format detection, file and pixel limits, one-line errors,
// and the SHA-256 of the bytes decoded.
#include "io/image.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <chrono>
#include <cmath>
#include <random>

#include "core/error.h"
#include "core/sha256.h"
#include "io_test_util.h"

namespace figura {
namespace {

using io_test::Pattern;
using io_test::Rec601;
namespace fs = std::filesystem;

// Expects LoadImage(path, options) to throw InputError with one line that
// names the file and contains `fragment`.
void ExpectRefused(const fs::path& path, const std::string& fragment,
                   const LoadOptions& options = {}) {
  for (int probe = 0; probe < 2; ++probe) {
    try {
      if (probe == 0) {
        LoadImage(path, options);
      } else {
        ProbeImage(path, options);
      }
      ADD_FAILURE() << path << " accepted (probe=" << probe << ")";
    } catch (const InputError& e) {
      const std::string what = e.what();
      EXPECT_NE(what.find(path.string()), std::string::npos) << what;
      EXPECT_NE(what.find(fragment), std::string::npos) << what;
      EXPECT_EQ(what.find('\n'), std::string::npos) << what;
    }
  }
}

// Reference files from Debian's python3-pil and a hand-made PNG encoder
// (zlib + CRC-32 per the PNG specification, ISO/IEC 15948), all filled with
// io_test::Pattern; JPEG reference luma decoded by PIL.
class PilReference : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new fs::path;
    scratch_ = new fs::path(io_test::ScratchDir("pil_ref"));
    rc_ = io_test::CachedPython("pil_ref", R"PY(
import struct, zlib
g8 = pattern(0, 8)
rgb8 = np.stack([pattern(c, 8) for c in range(3)], axis=-1)
Image.fromarray(g8).save(f'{d}/grey8.png')
Image.fromarray(rgb8).save(f'{d}/rgb8.png')
Image.fromarray(np.dstack([rgb8, np.full((h, w), 99, np.uint8)])).save(f'{d}/rgba8.png')
Image.fromarray(pattern(0, 16)).save(f'{d}/grey16.png')
Image.fromarray(g8).save(f'{d}/grey8.bmp')
Image.fromarray(rgb8).save(f'{d}/rgb8.bmp')
Image.fromarray(g8).save(f'{d}/grey8.jpg', quality=95)
Image.fromarray(rgb8).save(f'{d}/rgb8.jpg', quality=95)
# A PNG named .tif: the signature decides.
Image.fromarray(g8).save(f'{d}/png_named.tif', format='PNG')
# EXIF orientation 6 (rotate 90 on display): the stored layout is kept.
exif = Image.Exif()
exif[0x0112] = 6
Image.fromarray(g8).save(f'{d}/rotated.jpg', quality=95, exif=exif.tobytes())
# Luma of the decoded JPEGs, BT.601 weights, float32 raw.
(np.asarray(Image.open(f'{d}/grey8.jpg'), np.float64)).astype(np.float32).tofile(f'{d}/grey8.jpg.f32')
r, g, b = np.moveaxis(np.asarray(Image.open(f'{d}/rgb8.jpg').convert('RGB'), np.float64), -1, 0)
(0.299 * r + 0.587 * g + 0.114 * b).astype(np.float32).tofile(f'{d}/rgb8.jpg.f32')
# 16-bit RGB PNG by hand: IHDR, one IDAT (filter 0 rows), IEND.
def chunk(kind, data):
    return struct.pack('>I', len(data)) + kind + data + struct.pack('>I', zlib.crc32(kind + data))
rgb16 = np.stack([pattern(c, 16) for c in range(3)], axis=-1).astype('>u2')
raw = b''.join(b'\0' + rgb16[j].tobytes() for j in range(h))
png = (b'\x89PNG\r\n\x1a\n' + chunk(b'IHDR', struct.pack('>IIBBBBB', w, h, 16, 2, 0, 0, 0)) +
       chunk(b'IDAT', zlib.compress(raw)) + chunk(b'IEND', b''))
open(f'{d}/rgb16.png', 'wb').write(png)
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
  static cv::Mat RawFloats(const fs::path& path) {
    const std::string bytes = io_test::ReadBytes(path);
    cv::Mat m(23, 37, CV_32FC1);
    EXPECT_EQ(bytes.size(), m.total() * sizeof(float));
    std::memcpy(m.data, bytes.data(),
                std::min(bytes.size(), m.total() * sizeof(float)));
    return m;
  }
  static fs::path* dir_;      // reference files (shared, read-only)
  static fs::path* scratch_;  // this process's own files
  static int rc_;
};
fs::path* PilReference::dir_ = nullptr;
fs::path* PilReference::scratch_ = nullptr;
int PilReference::rc_ = -1;

TEST_F(PilReference, GreyPngAndBmpExact) {
  for (const char* name : {"grey8.png", "grey8.bmp", "png_named.tif"}) {
    SCOPED_TRACE(name);
    const Image image = LoadImage(*dir_ / name);
    EXPECT_EQ(
        image.info.format,
        std::string(name).find("bmp") != std::string::npos ? "bmp" : "png");
    EXPECT_EQ(image.info.bit_depth, 8);
    EXPECT_EQ(image.info.full_scale, 255.0);
    EXPECT_EQ(image.info.channels, 1);
    for (int y = 0; y < 23; ++y) {
      for (int x = 0; x < 37; ++x)
        ASSERT_EQ(image.pixels.at<float>(y, x), Pattern(x, y, 0, 8));
    }
  }
}

TEST_F(PilReference, SixteenBitPngKeepsDepth) {
  const Image grey = LoadImage(*dir_ / "grey16.png");
  EXPECT_EQ(grey.info.bit_depth, 16);
  EXPECT_EQ(grey.info.full_scale, 65535.0);
  const Image rgb = LoadImage(*dir_ / "rgb16.png");
  EXPECT_EQ(rgb.info.bit_depth, 16);
  EXPECT_EQ(rgb.info.channels, 3);
  for (int y = 0; y < 23; ++y) {
    for (int x = 0; x < 37; ++x) {
      ASSERT_EQ(grey.pixels.at<float>(y, x), Pattern(x, y, 0, 16));
      const double want = Rec601(Pattern(x, y, 0, 16), Pattern(x, y, 1, 16),
                                 Pattern(x, y, 2, 16));
      ASSERT_NEAR(rgb.pixels.at<float>(y, x), want, 1e-6 * want + 1e-3);
    }
  }
}

// Colour reduces to Rec. 601 luma (ITU-R BT.601-7 2.5.1), alpha ignored.
TEST_F(PilReference, ColourIsRec601Luma) {
  for (const char* name : {"rgb8.png", "rgba8.png", "rgb8.bmp"}) {
    SCOPED_TRACE(name);
    const Image image = LoadImage(*dir_ / name);
    EXPECT_EQ(image.info.channels, std::string(name) == "rgba8.png" ? 4 : 3);
    for (int y = 0; y < 23; ++y) {
      for (int x = 0; x < 37; ++x) {
        const double want = Rec601(Pattern(x, y, 0, 8), Pattern(x, y, 1, 8),
                                   Pattern(x, y, 2, 8));
        ASSERT_NEAR(image.pixels.at<float>(y, x), want, 1e-4) << x << "," << y;
      }
    }
  }
}

// JPEG decodes like PIL's decoder (same libjpeg family; upsampling may
// differ by a level).
TEST_F(PilReference, JpegMatchesPilDecode) {
  for (const char* name : {"grey8.jpg", "rgb8.jpg"}) {
    SCOPED_TRACE(name);
    const Image image = LoadImage(*dir_ / name);
    EXPECT_EQ(image.info.format, "jpeg");
    EXPECT_EQ(image.info.channels, std::string(name) == "grey8.jpg" ? 1 : 3);
    const cv::Mat ref = RawFloats(*dir_ / (std::string(name) + ".f32"));
    cv::Mat diff;
    cv::absdiff(image.pixels, ref, diff);
    double max_diff = 0.0;
    cv::minMaxLoc(diff, nullptr, &max_diff);
    EXPECT_LT(cv::mean(diff)[0], 0.5);
    EXPECT_LE(max_diff, 3.0);
  }
}

TEST_F(PilReference, ExifOrientationIgnored) {
  const Image image = LoadImage(*dir_ / "rotated.jpg");
  EXPECT_EQ(image.pixels.cols, 37);
  EXPECT_EQ(image.pixels.rows, 23);
}

TEST_F(PilReference, ProbeAgreesWithLoad) {
  for (const char* name : {"grey8.png", "rgb16.png", "rgb8.bmp", "rgb8.jpg"}) {
    SCOPED_TRACE(name);
    const ImageInfo probe = ProbeImage(*dir_ / name);
    const ImageInfo load = LoadImage(*dir_ / name).info;
    EXPECT_EQ(probe.format, load.format);
    EXPECT_EQ(probe.width, load.width);
    EXPECT_EQ(probe.height, load.height);
    EXPECT_EQ(probe.bit_depth, load.bit_depth);
    EXPECT_EQ(probe.channels, load.channels);
    EXPECT_EQ(probe.full_scale, load.full_scale);
    EXPECT_TRUE(probe.sha256.empty());
  }
}

TEST_F(PilReference, TruncatedFilesRefused) {
  for (const char* name :
       {"rgb8.png", "grey16.png", "rgb8.jpg", "grey8.jpg", "rgb8.bmp"}) {
    SCOPED_TRACE(name);
    const std::string bytes = io_test::ReadBytes(*dir_ / name);
    const fs::path cut = *scratch_ / (std::string("cut_") + name);
    io_test::WriteBytes(cut, bytes.substr(0, bytes.size() * 2 / 3));
    try {
      LoadImage(cut);
      ADD_FAILURE() << "loaded";
    } catch (const InputError& e) {
      const std::string what = e.what();
      EXPECT_NE(what.find(cut.string() + ": truncated or corrupt"),
                std::string::npos)
          << what;
    }
  }
}

TEST_F(PilReference, Sha256OfTheBytes) {
  const fs::path path = *dir_ / "rgb8.png";
  EXPECT_EQ(LoadImage(path).info.sha256, Sha256Hex(io_test::ReadBytes(path)));
}

// A small committed fixture: 16-bit grey PNG, 5 x 4, value x*1000 +
// y*10000 + 7 (written once with python3-pil). Its digest was computed with
// coreutils `sha256sum tests/fixtures/io/grey16_5x4.png`.
TEST(Image, FixtureDigestAndValues) {
  const fs::path path =
      fs::path(FIGURA_SOURCE_DIR) / "tests/fixtures/io/grey16_5x4.png";
  const Image image = LoadImage(path);
  EXPECT_EQ(image.info.sha256,
            "e4c49bc0b720564e45bb7dd3ed4c4facccefda4d1dfef1c6f4410a23cd7e021d");
  EXPECT_EQ(image.info.bit_depth, 16);
  ASSERT_EQ(image.pixels.cols, 5);
  ASSERT_EQ(image.pixels.rows, 4);
  for (int y = 0; y < 4; ++y) {
    for (int x = 0; x < 5; ++x)
      EXPECT_EQ(image.pixels.at<float>(y, x), x * 1000 + y * 10000 + 7);
  }
}

TEST(Image, FileProblemsRefused) {
  const fs::path dir = io_test::ScratchDir("image_errors");
  ExpectRefused(dir / "missing.png", "no such file");
  ExpectRefused(dir, "is a directory");
  io_test::WriteBytes(dir / "empty.tif", "");
  ExpectRefused(dir / "empty.tif", "empty file");
  fs::create_symlink("loop_b", dir / "loop_a");
  fs::create_symlink("loop_a", dir / "loop_b");
  ExpectRefused(dir / "loop_a", "symbolic links");
  ASSERT_EQ(::mkfifo((dir / "fifo.png").c_str(), 0600), 0);
  ExpectRefused(dir / "fifo.png", "not a regular file");
  // Random bytes (fixed seed) and text are not images.
  std::mt19937 rng(20260101);
  std::string noise(4096, '\0');
  for (char& c : noise) c = static_cast<char>(rng() & 0xFF);
  noise[0] = 'x';  // make sure no signature matches by chance
  io_test::WriteBytes(dir / "noise.png", noise);
  ExpectRefused(dir / "noise.png", "not a TIFF, PNG, JPEG or BMP image");
  io_test::WriteBytes(dir / "text.jpg", "hello\n");
  ExpectRefused(dir / "text.jpg", "not a TIFF, PNG, JPEG or BMP image");
  // File-size limit.
  LoadOptions small;
  small.max_file_bytes = 100;
  ExpectRefused(dir / "noise.png", "file too large (4096 bytes, limit 100)",
                small);
}

TEST(Image, PixelLimitOption) {
  const fs::path dir = io_test::ScratchDir("image_pixel_limit");
  io_test::TiffSpec spec;  // 37 x 23 = 851 pixels
  ASSERT_TRUE(io_test::WriteTestTiff(dir / "a.tif", spec));
  LoadOptions options;
  options.max_pixels = 851;
  EXPECT_EQ(LoadImage(dir / "a.tif", options).pixels.total(), 851U);
  options.max_pixels = 850;
  ExpectRefused(dir / "a.tif",
                "image too large (37 x 23 pixels, limit 850 pixels)", options);
  options.max_pixels = 0;
  EXPECT_NE(options.Check(), "");
  EXPECT_THROW(LoadImage(dir / "a.tif", options), InputError);
}

// Headers of every format claiming huge sizes are refused from the header,
// before a decoder allocates anything.
TEST(Image, HugeHeadersRefusedFast) {
  const fs::path dir = io_test::ScratchDir("image_huge");
  // PNG: signature + IHDR 200000 x 200000, 8-bit grey (CRC not checked).
  std::string png(
      "\x89PNG\r\n\x1a\n\0\0\0\x0dIHDR\0\x03\x0d\x40\0\x03\x0d\x40\x08\0\0\0\0",
      29);
  png.append(64, '\0');
  io_test::WriteBytes(dir / "huge.png", png);
  // JPEG: SOI, SOF0 65535 x 65535, 3 components (ITU-T T.81 B.2.2).
  std::string jpg("\xFF\xD8\xFF\xC0\x00\x11\x08\xFF\xFF\xFF\xFF\x03", 12);
  jpg.append(64, '\0');
  io_test::WriteBytes(dir / "huge.jpg", jpg);
  // BMP: BITMAPFILEHEADER + BITMAPINFOHEADER 200000 x -200000, 24 bpp.
  std::string bmp(
      "BM\0\0\0\0\0\0\0\0\x36\0\0\0\x28\0\0\0\x40\x0d\x03\0\xc0\xf2\xfc\xff\x01"
      "\0\x18\0",
      30);
  bmp.append(64, '\0');
  io_test::WriteBytes(dir / "huge.bmp", bmp);
  const auto start = std::chrono::steady_clock::now();
  ExpectRefused(dir / "huge.png", "image too large (200000 x 200000 pixels");
  ExpectRefused(dir / "huge.jpg", "image too large (65535 x 65535 pixels");
  ExpectRefused(dir / "huge.bmp", "image too large (200000 x 200000 pixels");
  EXPECT_LT(
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start)
          .count(),
      0.5);
}

TEST(Image, UnsupportedJpegKinds) {
  const fs::path dir = io_test::ScratchDir("image_jpeg_kinds");
  // SOF1 with 12-bit precision, and SOF3 (lossless).
  std::string j12("\xFF\xD8\xFF\xC1\x00\x11\x0C\x00\x10\x00\x10\x01", 12);
  j12.append(32, '\0');
  io_test::WriteBytes(dir / "p12.jpg", j12);
  ExpectRefused(dir / "p12.jpg", "12-bit JPEG is not supported");
  std::string jl("\xFF\xD8\xFF\xC3\x00\x11\x08\x00\x10\x00\x10\x01", 12);
  jl.append(32, '\0');
  io_test::WriteBytes(dir / "lossless.jpg", jl);
  ExpectRefused(dir / "lossless.jpg", "lossless JPEG is not supported");
}

}  // namespace
}  // namespace figura
