// The image codec module (io/codec_module.h): PNG, JPEG and BMP still round
// trip through it; reading a TIFF does not load it (nor OpenCV's imgcodecs);
// in-memory encode/decode and 8-bit pictures; a missing or broken module
// gives one line naming the file and the folders looked in.
#include "io/codec_module.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <iostream>
#include <sstream>

#include "core/error.h"
#include "io/image.h"
#include "io/image_writer.h"
#include "io_test_util.h"

namespace figura {
namespace {

namespace fs = std::filesystem;
using io_test::Pattern;

// True when a file whose name contains `name` is mapped into this process
// (/proc/self/maps lists every loaded shared object).
bool Mapped(const std::string& name) {
  std::ifstream maps("/proc/self/maps");
  std::string line;
  while (std::getline(maps, line)) {
    if (line.find(name) != std::string::npos) return true;
  }
  return false;
}

// A grey or BGR image filled with io_test::Pattern (BGR: channel c in memory
// holds colour 2 - c).
cv::Mat PatternMat(int type, int rows, int cols) {
  cv::Mat m(rows, cols, type);
  const int bits = CV_ELEM_SIZE1(type) == 1 ? 8 : 16;
  for (int y = 0; y < rows; ++y) {
    for (int x = 0; x < cols; ++x) {
      for (int c = 0; c < m.channels(); ++c) {
        const int colour = m.channels() == 3 ? 2 - c : c;
        const double v = Pattern(x, y, colour, bits);
        if (bits == 8) {
          m.ptr<std::uint8_t>(y)[x * m.channels() + c] =
              static_cast<std::uint8_t>(v);
        } else {
          m.ptr<std::uint16_t>(y)[x * m.channels() + c] =
              static_cast<std::uint16_t>(v);
        }
      }
    }
  }
  return m;
}

// The grey image the loader must give for `m`: the samples themselves, or
// Rec. 601 luma of B, G, R (ITU-R BT.601-7, 2.5.1).
cv::Mat ExpectedGrey(const cv::Mat& m) {
  cv::Mat grey(m.rows, m.cols, CV_32FC1);
  for (int y = 0; y < m.rows; ++y) {
    for (int x = 0; x < m.cols; ++x) {
      double v = 0.0;
      const auto at = [&](int c) {
        return m.depth() == CV_8U
                   ? static_cast<double>(
                         m.ptr<std::uint8_t>(y)[x * m.channels() + c])
                   : static_cast<double>(
                         m.ptr<std::uint16_t>(y)[x * m.channels() + c]);
      };
      v = m.channels() == 3 ? io_test::Rec601(at(2), at(1), at(0)) : at(0);
      grey.at<float>(y, x) = static_cast<float>(v);
    }
  }
  return grey;
}

double MaxAbsDiff(const cv::Mat& a, const cv::Mat& b) {
  return cv::norm(a, b, cv::NORM_INF);
}

TEST(CodecModule, ReadingTiffDoesNotLoadIt) {
  // A fresh process (re-executed, not forked), so that earlier tests in this
  // program have not loaded the module yet.
  GTEST_FLAG_SET(death_test_style, "threadsafe");
  const fs::path dir = io_test::ScratchDir("codec_tiff");
  const cv::Mat grey = PatternMat(CV_16UC1, 40, 60);
  WriteImage(dir / "grey.tif", grey);  // libtiff only
  EXPECT_EXIT(
      {
        int failures = 0;
        const auto fail = [&failures](const char* what) {
          std::cerr << what << '\n';
          ++failures;
        };
        const Image tiff = LoadImage(dir / "grey.tif");
        if (MaxAbsDiff(tiff.pixels, ExpectedGrey(grey)) != 0.0)
          fail("TIFF pixels differ");
        if (CodecModuleLoaded()) fail("module loaded by a TIFF read");
        if (Mapped(CodecModuleFileName())) fail("module mapped by a TIFF read");
        if (Mapped("libopencv_imgcodecs"))
          fail("libopencv_imgcodecs mapped by a TIFF read");
        // The first PNG loads it.
        WriteImage(dir / "grey.png", grey);
        const Image png = LoadImage(dir / "grey.png");
        if (MaxAbsDiff(png.pixels, tiff.pixels) != 0.0)
          fail("PNG pixels differ from TIFF pixels");
        if (!CodecModuleLoaded()) fail("module not loaded by a PNG write");
        if (!Mapped(CodecModuleFileName())) fail("module not mapped");
        if (!Mapped("libopencv_imgcodecs")) fail("imgcodecs not mapped");
        std::exit(failures);
      },
      testing::ExitedWithCode(0), "");
}

TEST(CodecModule, PngRoundTripsExactly) {
  const fs::path dir = io_test::ScratchDir("codec_png");
  for (const int type : {CV_8UC1, CV_16UC1, CV_8UC3, CV_16UC3}) {
    SCOPED_TRACE(type);
    const cv::Mat m = PatternMat(type, 31, 57);
    const fs::path path = dir / (std::to_string(type) + ".png");
    WriteImage(path, m);
    const Image back = LoadImage(path);
    EXPECT_EQ(back.info.format, "png");
    EXPECT_EQ(back.info.bit_depth, m.depth() == CV_16U ? 16 : 8);
    EXPECT_EQ(back.info.channels, m.channels());
    // PNG is lossless (ISO/IEC 15948, deflate): exact samples back.
    EXPECT_EQ(MaxAbsDiff(back.pixels, ExpectedGrey(m)), 0.0);
  }
  EXPECT_TRUE(CodecModuleLoaded());
  EXPECT_TRUE(Mapped(CodecModuleFileName()));
}

TEST(CodecModule, BmpDecodesExactly) {
  // Bytes written by hand to the BMP layout (io_test::EncodeTestBmp), an odd
  // width so that rows are padded.
  const fs::path dir = io_test::ScratchDir("codec_bmp");
  const cv::Mat m = PatternMat(CV_8UC3, 19, 33);
  io_test::WriteBytes(dir / "rgb.bmp", io_test::EncodeTestBmp(m));
  const Image back = LoadImage(dir / "rgb.bmp");
  EXPECT_EQ(back.info.format, "bmp");
  EXPECT_EQ(back.info.channels, 3);
  EXPECT_LE(MaxAbsDiff(back.pixels, ExpectedGrey(m)), 1e-4);
}

TEST(CodecModule, JpegRoundTripsClosely) {
  const fs::path dir = io_test::ScratchDir("codec_jpeg");
  // A smooth 8-bit gradient: JPEG at quality 95 keeps it within a few
  // levels [practice: quality 90+ is visually lossless on smooth images].
  cv::Mat m(48, 64, CV_8UC1);
  for (int y = 0; y < m.rows; ++y) {
    for (int x = 0; x < m.cols; ++x)
      m.at<std::uint8_t>(y, x) = static_cast<std::uint8_t>(2 * x + y);
  }
  ImageWriteOptions options;
  options.jpeg_quality = 95;
  WriteImage(dir / "grey.jpg", m, options);
  const std::string bytes = io_test::ReadBytes(dir / "grey.jpg");
  ASSERT_GE(bytes.size(), 4U);
  // JPEG SOI and EOI markers (ITU-T T.81, B.1.1.3).
  EXPECT_EQ(bytes.substr(0, 2), "\xFF\xD8");
  EXPECT_EQ(bytes.substr(bytes.size() - 2), "\xFF\xD9");
  const Image back = LoadImage(dir / "grey.jpg");
  EXPECT_EQ(back.info.format, "jpeg");
  cv::Mat want;
  m.convertTo(want, CV_32F);
  EXPECT_LE(MaxAbsDiff(back.pixels, want), 4.0);
  EXPECT_LT(
      cv::norm(back.pixels, want, cv::NORM_L1) / static_cast<double>(m.total()),
      1.0);
  // A lower quality gives a smaller file: the option reaches the encoder.
  options.jpeg_quality = 20;
  WriteImage(dir / "low.jpg", m, options);
  EXPECT_LT(fs::file_size(dir / "low.jpg"), fs::file_size(dir / "grey.jpg"));
}

TEST(CodecModule, InMemoryEncodeAndDecodeMatchTheFiles) {
  const fs::path dir = io_test::ScratchDir("codec_memory");
  const cv::Mat m = PatternMat(CV_16UC3, 21, 34);
  for (const char* name : {"m.png", "m.tif"}) {
    SCOPED_TRACE(name);
    WriteImage(dir / name, m);
    const std::string bytes = EncodeImage(dir / name, m);
    EXPECT_EQ(bytes, io_test::ReadBytes(dir / name));
    const Image from_file = LoadImage(dir / name);
    const Image from_memory = DecodeImage("memory", bytes);
    EXPECT_EQ(from_memory.info.path, "memory");
    EXPECT_EQ(from_memory.info.sha256, from_file.info.sha256);
    EXPECT_EQ(MaxAbsDiff(from_memory.pixels, from_file.pixels), 0.0);
  }
  EXPECT_THROW((void)DecodeImage("nothing", ""), InputError);
}

TEST(CodecModule, PicturesAreEightBitBgr) {
  const fs::path dir = io_test::ScratchDir("codec_picture");
  const cv::Mat colour16 = PatternMat(CV_16UC3, 12, 17);
  WriteImage(dir / "c16.png", colour16);
  const cv::Mat picture = LoadPicture(dir / "c16.png");
  ASSERT_EQ(picture.type(), CV_8UC3);
  // 16 to 8 bits: v * 255 / 65535 = v / 257, rounded.
  for (int y = 0; y < picture.rows; ++y) {
    for (int x = 0; x < picture.cols * 3; ++x) {
      const double want = std::round(colour16.ptr<std::uint16_t>(y)[x] / 257.0);
      ASSERT_EQ(picture.ptr<std::uint8_t>(y)[x], want) << y << ' ' << x;
    }
  }
  const cv::Mat grey8 = PatternMat(CV_8UC1, 12, 17);
  for (const char* name : {"g8.png", "g8.tif"}) {
    SCOPED_TRACE(name);
    WriteImage(dir / name, grey8);
    const cv::Mat p = LoadPicture(dir / name);
    ASSERT_EQ(p.type(), CV_8UC3);
    std::vector<cv::Mat> planes;
    cv::split(p, planes);
    for (const cv::Mat& plane : planes)
      EXPECT_EQ(cv::norm(plane, grey8, cv::NORM_INF), 0.0);
  }
}

TEST(CodecModule, SharedModuleComesFromTheBuild) {
  const CodecModule& module = CodecModule::Shared();
  ASSERT_TRUE(module.loaded()) << module.problem();
  EXPECT_TRUE(module.problem().empty());
  EXPECT_EQ(module.path().filename(), CodecModuleFileName());
  const std::vector<fs::path> folders = CodecModuleFolders();
  ASSERT_EQ(folders.size(), 4U);
  // First the folder of the running program, then the install folder
  // relative to it (a moved or packaged tree).
  const fs::path exe_dir = fs::read_symlink("/proc/self/exe").parent_path();
  EXPECT_EQ(folders[0], exe_dir);
  EXPECT_EQ(folders[1].filename(), "figura");
  EXPECT_TRUE(fs::exists(module.path()));
}

// A packaged binary must not look into the folder it was built in (found by
// the fresh-root .deb check: the "not found" message listed the build tree).
TEST(CodecModule, InstalledBinarySkipsTheBuildFolder) {
  const std::vector<fs::path> installed =
      CodecModuleFoldersFor("/usr/bin/figura");
  ASSERT_EQ(installed.size(), 3U);
  EXPECT_EQ(installed[0], fs::path("/usr/bin"));
  // From inside the build tree (this test program) the build folder comes
  // last, and an installed binary's list does not hold it.
  const std::vector<fs::path> here =
      CodecModuleFoldersFor(fs::read_symlink("/proc/self/exe"));
  ASSERT_EQ(here.size(), 4U);
  EXPECT_EQ(std::count(installed.begin(), installed.end(), here.back()), 0);
  EXPECT_TRUE(fs::exists(here.back() / CodecModuleFileName()));
}

TEST(CodecModule, MissingModuleNamesFileAndFolders) {
  const fs::path dir = io_test::ScratchDir("codec_missing");
  const CodecModule missing({dir / "a", dir / "b"});
  EXPECT_FALSE(missing.loaded());
  const std::string where = "image codec module " +
                            std::string(CodecModuleFileName()) +
                            " not found (looked in " + (dir / "a").string() +
                            ", " + (dir / "b").string() + ")";
  EXPECT_EQ(missing.problem(), where);
  try {
    (void)missing.Decode("photo.png", "png", "\x89PNG");
    ADD_FAILURE() << "no InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()), "photo.png: cannot decode png: " + where);
  }
  try {
    (void)missing.Encode("out.jpg", cv::Mat(4, 4, CV_8UC1, cv::Scalar(1)),
                         EncodedFormat::kJpeg, 90);
    ADD_FAILURE() << "no OutputError";
  } catch (const OutputError& e) {
    EXPECT_EQ(std::string(e.what()), "out.jpg: cannot encode jpeg: " + where);
  }
}

TEST(CodecModule, BrokenModuleIsSkippedWithItsReason) {
  // A file of the module's name that is not a shared object, then the real
  // module's folder: the second is used.
  const fs::path dir = io_test::ScratchDir("codec_broken");
  io_test::WriteBytes(dir / CodecModuleFileName(), "not an ELF file\n");
  const CodecModule broken({dir});
  EXPECT_FALSE(broken.loaded());
  EXPECT_NE(broken.problem().find(" not loaded (looked in " + dir.string()),
            std::string::npos)
      << broken.problem();
  EXPECT_NE(broken.problem().find((dir / CodecModuleFileName()).string()),
            std::string::npos)
      << broken.problem();
  EXPECT_EQ(broken.problem().find('\n'), std::string::npos);

  const CodecModule fallback({dir, CodecModule::Shared().path().parent_path()});
  ASSERT_TRUE(fallback.loaded()) << fallback.problem();
  const cv::Mat m = PatternMat(CV_16UC1, 5, 7);
  const std::string png = fallback.Encode("x.png", m, EncodedFormat::kPng, 95);
  const DecodedPixels back = fallback.Decode("x.png", "png", png);
  ASSERT_EQ(back.pixels().type(), CV_16UC1);
  EXPECT_EQ(cv::norm(back.pixels(), m, cv::NORM_INF), 0.0);
}

TEST(CodecModule, CutPngIsReportedAsCorrupt) {
  // The decoder's empty answer comes back as kFiguraCodecCorrupt.
  const CodecModule& module = CodecModule::Shared();
  ASSERT_TRUE(module.loaded()) << module.problem();
  const cv::Mat m = PatternMat(CV_8UC1, 8, 8);
  std::string png = module.Encode("y.png", m, EncodedFormat::kPng, 95);
  png.resize(png.size() / 2);
  try {
    (void)module.Decode("y.png", "png", png);
    ADD_FAILURE() << "no InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()), "y.png: truncated or corrupt png");
  }
}

}  // namespace
}  // namespace figura
