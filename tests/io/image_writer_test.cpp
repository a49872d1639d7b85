// Writing images: TIFF (libtiff, deflate) read back by our loader and by an
// independent reader (tifffile); PNG 16-bit and JPEG through OpenCV;
// refused overwrites and bad requests.
#include "io/image_writer.h"

#include <gtest/gtest.h>

#include <opencv2/imgproc.hpp>

#include "core/error.h"
#include "io/image.h"
#include "io_test_util.h"

namespace figura {
namespace {

namespace fs = std::filesystem;
using io_test::Pattern;

cv::Mat PatternMat(int type, int rows = 23, int cols = 37) {
  cv::Mat m(rows, cols, type);
  const int bits = CV_ELEM_SIZE1(type) == 1   ? 8
                   : CV_ELEM_SIZE1(type) == 2 ? 16
                                              : 32;
  for (int y = 0; y < rows; ++y) {
    for (int x = 0; x < cols; ++x) {
      for (int c = 0; c < m.channels(); ++c) {
        // BGR order in memory: channel c holds colour 2 - c for colour.
        const int colour = m.channels() == 3 ? 2 - c : c;
        const double v = Pattern(x, y, colour, bits);
        if (bits == 8)
          m.ptr<std::uint8_t>(y)[x * m.channels() + c] =
              static_cast<std::uint8_t>(v);
        if (bits == 16) {
          m.ptr<std::uint16_t>(y)[x * m.channels() + c] =
              static_cast<std::uint16_t>(v);
        }
        if (bits == 32)
          m.ptr<float>(y)[x * m.channels() + c] = static_cast<float>(v);
      }
    }
  }
  return m;
}

TEST(ImageWriter, TiffRoundTripsExactly) {
  const fs::path dir = io_test::ScratchDir("writer_tiff");
  for (const int type : {CV_8UC1, CV_16UC1, CV_32FC1, CV_8UC3, CV_16UC3}) {
    SCOPED_TRACE(type);
    const cv::Mat m = PatternMat(type, 300, 1001);  // several strips
    const fs::path path = dir / (std::to_string(type) + "_t.tif");
    WriteImage(path, m);
    const Image back = LoadImage(path);
    EXPECT_EQ(back.info.channels, m.channels());
    cv::Mat want;
    if (m.channels() == 3) {
      m.convertTo(want, CV_32FC3);
      cv::transform(want, want,
                    cv::Matx13f(0.114F, 0.587F, 0.299F));  // BT.601, BGR
    } else {
      m.convertTo(want, CV_32F);
    }
    EXPECT_LE(cv::norm(back.pixels, want, cv::NORM_INF),
              m.channels() == 3 ? 0.01 : 0.0);
  }
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

// tifffile (Debian python3-tifffile) reads our TIFFs: same values, deflate
// compression (TIFF tag 259 = 8), RGB photometric for colour.
TEST(ImageWriter, TiffReadByTifffile) {
  const fs::path dir = io_test::ScratchDir("writer_tifffile");
  WriteImage(dir / "g16.tif", PatternMat(CV_16UC1));
  WriteImage(dir / "f32.tif", PatternMat(CV_32FC1));
  WriteImage(dir / "rgb8.tif", PatternMat(CV_8UC3));
  const int rc = io_test::RunPython(dir, R"PY(
ok = True
for name, want in (('g16', pattern(0, 16)), ('f32', pattern(0, 32)),
                   ('rgb8', np.stack([pattern(c, 8) for c in range(3)], axis=-1))):
    with tifffile.TiffFile(f'{d}/{name}.tif') as t:
        page = t.pages[0]
        got = page.asarray()
        ok &= page.compression == 8 and got.dtype == want.dtype and np.array_equal(got, want)
        if name == 'rgb8': ok &= page.photometric == 2
sys.exit(0 if ok else 1)
)PY");
  if (rc == 77)
    GTEST_SKIP()
        << "/usr/bin/python3 with numpy, tifffile and PIL not available";
  EXPECT_EQ(rc, 0);
}

TEST(ImageWriter, PngAndJpeg) {
  const fs::path dir = io_test::ScratchDir("writer_png_jpeg");
  const cv::Mat g16 = PatternMat(CV_16UC1);
  WriteImage(dir / "g16.png", g16);
  const Image png = LoadImage(dir / "g16.png");
  EXPECT_EQ(png.info.bit_depth, 16);
  cv::Mat want;
  g16.convertTo(want, CV_32F);
  EXPECT_EQ(cv::norm(png.pixels, want, cv::NORM_INF), 0.0);
  // JPEG is lossy: a smooth image survives quality 95 within a few levels.
  cv::Mat smooth(64, 64, CV_8UC1);
  for (int y = 0; y < 64; ++y) {
    for (int x = 0; x < 64; ++x)
      smooth.at<std::uint8_t>(y, x) = static_cast<std::uint8_t>(2 * x + y);
  }
  WriteImage(dir / "s.JPG", smooth);
  const Image jpg = LoadImage(dir / "s.JPG");
  smooth.convertTo(want, CV_32F);
  EXPECT_EQ(jpg.info.format, "jpeg");
  EXPECT_LT(cv::norm(jpg.pixels, want, cv::NORM_INF), 4.0);
}

TEST(ImageWriter, RefusesBadRequests) {
  const fs::path dir = io_test::ScratchDir("writer_bad");
  const cv::Mat m = PatternMat(CV_8UC1);
  EXPECT_THROW(WriteImage(dir / "a.gif", m), OutputError);
  EXPECT_THROW(WriteImage(dir / "a.png", cv::Mat()), OutputError);
  EXPECT_THROW(WriteImage(dir / "a.jpg", PatternMat(CV_16UC1)), OutputError);
  EXPECT_THROW(WriteImage(dir / "a.png", PatternMat(CV_32FC1)), OutputError);
  EXPECT_THROW(WriteImage(dir / "a.tif", PatternMat(CV_32FC3)), OutputError);
  ImageWriteOptions bad_quality;
  bad_quality.jpeg_quality = 0;
  EXPECT_NE(bad_quality.Check(), "");
  EXPECT_THROW(WriteImage(dir / "a.jpg", m, bad_quality), OutputError);
  WriteImage(dir / "kept.png", m);
  ImageWriteOptions no_overwrite;
  no_overwrite.overwrite = false;
  try {
    WriteImage(dir / "kept.png", m, no_overwrite);
    ADD_FAILURE() << "overwrote";
  } catch (const OutputError& e) {
    EXPECT_EQ(std::string(e.what()),
              (dir / "kept.png").string() +
                  ": exists; not overwritten (use --force)");
  }
  EXPECT_THROW(WriteImage("/dev/full", m), OutputError);  // no extension
  EXPECT_THROW(WriteImage(dir / "missing" / "a.tif", m), OutputError);
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

}  // namespace
}  // namespace figura
