// Damaged files of every accepted format (bytes flipped, cut, or overwritten
// at random with a fixed seed) load or are refused with an InputError: never
// a crash, a hang, or another exception type. Run under the sanitizer build
// (FIGURA_SANITIZE) this also checks our header parsers and libtiff client
// for memory errors. [practice: mutation testing of file parsers]
#include <gtest/gtest.h>

#include <random>

#include "core/error.h"
#include "io/image.h"
#include "io/image_writer.h"
#include "io_test_util.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

TEST(CorruptInput, MutatedFilesLoadOrRefuseCleanly) {
  const fs::path dir = io_test::ScratchDir("corrupt");
  // Seed files: a smooth 48 x 40 grey and colour image in every format.
  cv::Mat grey(40, 48, CV_16UC1);
  for (int y = 0; y < grey.rows; ++y) {
    for (int x = 0; x < grey.cols; ++x)
      grey.at<std::uint16_t>(y, x) =
          static_cast<std::uint16_t>(500 * x + 300 * y);
  }
  cv::Mat grey8;
  grey.convertTo(grey8, CV_8U, 1.0 / 256);
  cv::Mat colour;
  cv::merge(std::vector<cv::Mat>{grey8, 255 - grey8, grey8 / 2}, colour);
  std::vector<std::string> seeds;
  WriteImage(dir / "a.tif", grey);
  WriteImage(dir / "b.tif", colour);
  WriteImage(dir / "c.png", grey);
  WriteImage(dir / "d.jpg", colour);
  io_test::WriteBytes(dir / "e.bmp", io_test::EncodeTestBmp(colour));
  io_test::TiffSpec tiled;
  tiled.tiled = true;
  tiled.samples = 3;
  tiled.separate = true;
  tiled.photometric = PHOTOMETRIC_RGB;
  tiled.compression = COMPRESSION_LZW;
  ASSERT_TRUE(io_test::WriteTestTiff(dir / "f.tif", tiled));
  for (const char* name :
       {"a.tif", "b.tif", "c.png", "d.jpg", "e.bmp", "f.tif"}) {
    seeds.push_back(io_test::ReadBytes(dir / name));
  }
  LoadOptions options;
  options.max_pixels = 1'000'000;  // keeps absurd decoded sizes cheap
  std::mt19937 rng(424242);
  int loaded = 0;
  int refused = 0;
  for (std::size_t s = 0; s < seeds.size(); ++s) {
    for (int trial = 0; trial < 60; ++trial) {
      std::string bytes = seeds[s];
      const int kind = trial % 3;
      if (kind == 0) {  // flip a few bytes, mostly in the header region
        for (int k = 0; k < 4; ++k) {
          const std::size_t limit =
              std::min<std::size_t>(bytes.size(), k < 2 ? 512 : bytes.size());
          bytes[rng() % limit] = static_cast<char>(rng() & 0xFF);
        }
      } else if (kind == 1) {  // cut
        bytes.resize(1 + rng() % (bytes.size() - 1));
      } else {  // overwrite a run with random bytes after the signature
        const std::size_t at = 8 + rng() % (bytes.size() - 8);
        for (std::size_t k = at; k < std::min(bytes.size(), at + 64); ++k)
          bytes[k] = static_cast<char>(rng() & 0xFF);
      }
      std::string name = std::to_string(s);
      name += '_';
      name += std::to_string(trial);
      const fs::path path = dir / name;
      io_test::WriteBytes(path, bytes);
      try {
        const Image image = LoadImage(path, options);
        EXPECT_EQ(image.pixels.type(), CV_32FC1);
        EXPECT_EQ(image.pixels.cols, image.info.width);
        EXPECT_EQ(image.pixels.rows, image.info.height);
        ++loaded;
      } catch (const InputError& e) {
        const std::string what = e.what();
        EXPECT_EQ(what.rfind(path.string(), 0), 0U) << what;
        EXPECT_EQ(what.find('\n'), std::string::npos) << what;
        ++refused;
      }
      fs::remove(path);
    }
  }
  // Both outcomes occur (most damaged files are refused).
  EXPECT_GT(refused, 100);
  EXPECT_GT(loaded, 0);
}

}  // namespace
}  // namespace figura
