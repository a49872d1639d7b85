// The surface-map picture: colour map against matplotlib's viridis (Debian
// python3-matplotlib, test-only, via /usr/bin/python3), layout checks on a
// rendered picture, bad input, and a PNG written to disk.
#include "report/surface_picture.h"

#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <opencv2/imgcodecs.hpp>
#include <string>

#include "core/error.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

fs::path Scratch(const std::string& name) {
  fs::path dir = fs::path(FIGURA_TEST_TMP) / "report" /
                 (name + "-" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// A tilted map (x only, so every map column is one colour) inside a circle
// of radius 140 px, NaN outside.
const Circle kAperture{{150.0, 150.0}, 140.0};
cv::Mat TiltMap() {
  cv::Mat map(301, 301, CV_32FC1);
  for (int y = 0; y < map.rows; ++y) {
    for (int x = 0; x < map.cols; ++x) {
      const double r = std::hypot(x - 150.0, y - 150.0);
      map.at<float>(y, x) = r <= 140.0
                                ? static_cast<float>((x - 150.0) * 1e-9)
                                : std::numeric_limits<float>::quiet_NaN();
    }
  }
  return map;
}

// Index of a BGR pixel in the viridis table, -1 when it is not one.
int ViridisIndex(const cv::Vec3b& bgr) {
  static const std::map<int, int> table = [] {
    std::map<int, int> t;
    for (int i = 0; i < 256; ++i) {
      const auto c = ViridisRgb(i / 255.0);
      t[(c[0] << 16) | (c[1] << 8) | c[2]] = i;
    }
    return t;
  }();
  const auto it = table.find((bgr[2] << 16) | (bgr[1] << 8) | bgr[0]);
  return it == table.end() ? -1 : it->second;
}

int CountColour(const cv::Mat& bgr, const cv::Vec3b& colour) {
  int n = 0;
  for (int y = 0; y < bgr.rows; ++y) {
    for (int x = 0; x < bgr.cols; ++x) n += bgr.at<cv::Vec3b>(y, x) == colour;
  }
  return n;
}

// Every entry equals matplotlib's _viridis_data rounded to 8 bits (the
// published table, van der Walt & Smith, CC0).
TEST(SurfacePicture, ViridisMatchesMatplotlib) {
  if (!fs::exists("/usr/bin/python3")) GTEST_SKIP() << "no /usr/bin/python3";
  const fs::path dir = Scratch("viridis");
  const std::string cmd =
      "/usr/bin/python3 -c \"import sys\ntry:\n"
      "    from matplotlib._cm_listed import _viridis_data as d\n"
      "except ImportError:\n    sys.exit(77)\n"
      "print('\\n'.join('%d %d %d' % tuple(round(v * 255) for v in e) "
      "for e in d))\" > '" +
      (dir / "viridis.txt").string() + "'";
  const int rc = std::system(cmd.c_str());
  if (WIFEXITED(rc) && WEXITSTATUS(rc) == 77) GTEST_SKIP() << "no matplotlib";
  ASSERT_EQ(rc, 0);
  std::ifstream in(dir / "viridis.txt");
  for (int i = 0; i < 256; ++i) {
    int r = 0;
    int g = 0;
    int b = 0;
    ASSERT_TRUE(in >> r >> g >> b) << i;
    const auto c = ViridisRgb(i / 255.0);
    EXPECT_EQ(c[0], r) << i;
    EXPECT_EQ(c[1], g) << i;
    EXPECT_EQ(c[2], b) << i;
  }
  fs::remove_all(dir);
}

// The ends: #440154 and #fde725 [memory: viridis' published end colours].
TEST(SurfacePicture, ViridisEnds) {
  EXPECT_EQ(ViridisRgb(0.0), (std::array<unsigned char, 3>{0x44, 0x01, 0x54}));
  EXPECT_EQ(ViridisRgb(1.0), (std::array<unsigned char, 3>{0xfd, 0xe7, 0x25}));
  EXPECT_EQ(ViridisRgb(-3.0), ViridisRgb(0.0));  // clamped
  EXPECT_EQ(ViridisRgb(7.0), ViridisRgb(1.0));
  EXPECT_EQ(ViridisRgb(std::nan("")), ViridisRgb(0.0));
}

TEST(SurfacePicture, RendersSizeGreyAndColourBar) {
  const cv::Mat map = TiltMap();
  const cv::Mat picture =
      RenderSurfacePicture(map, cv::Mat(), kAperture, 632.8e-9, "tilt");
  ASSERT_EQ(picture.type(), CV_8UC3);
  EXPECT_EQ(picture.cols, 1200);
  EXPECT_EQ(picture.rows, 900);
  // NaN outside the aperture: the corners of the square map are grey.
  EXPECT_GT(CountColour(picture, cv::Vec3b(160, 160, 160)), 10000);
  // No unreliable pixels flagged: no magenta.
  EXPECT_EQ(CountColour(picture, cv::Vec3b(255, 0, 255)), 0);
  // The colour bar: a column whose viridis pixels run from the top of the
  // scale (255) down to its bottom (0) over a tall run.
  int bar_columns = 0;
  for (int x = 0; x < picture.cols; ++x) {
    int count = 0;
    int first = -1;
    int last = -1;
    bool monotone = true;
    for (int y = 0; y < picture.rows; ++y) {
      const int i = ViridisIndex(picture.at<cv::Vec3b>(y, x));
      if (i < 0) continue;
      if (last >= 0 && i > last) monotone = false;
      if (first < 0) first = i;
      last = i;
      ++count;
    }
    if (monotone && count > 300 && first >= 250 && last <= 5) ++bar_columns;
  }
  EXPECT_GE(bar_columns, 15);  // the bar is 22 px wide
  // The map spans the whole scale (x tilt): both ends occur beside the bar.
  int low = 0;
  int high = 0;
  for (int y = 0; y < picture.rows; ++y) {
    for (int x = 0; x < picture.cols; ++x) {
      const int i = ViridisIndex(picture.at<cv::Vec3b>(y, x));
      low += i >= 0 && i <= 8 ? 1 : 0;
      high += i >= 247 ? 1 : 0;
    }
  }
  EXPECT_GT(low, 300);
  EXPECT_GT(high, 300);
}

TEST(SurfacePicture, UnreliablePixelsInMagenta) {
  const cv::Mat map = TiltMap();
  cv::Mat unreliable(map.size(), CV_8UC1, cv::Scalar(0));
  unreliable(cv::Rect(100, 100, 30, 30)).setTo(255);
  const cv::Mat picture = RenderSurfacePicture(
      map, unreliable, kAperture, 632.8e-9, "with unreliable pixels",
      {.width = 800, .height = 600, .pixel_pitch_m = 25e-6});
  EXPECT_EQ(picture.cols, 800);
  EXPECT_EQ(picture.rows, 600);
  EXPECT_GT(CountColour(picture, cv::Vec3b(255, 0, 255)), 20);
}

// Non-finite heights are "no data": an infinity renders like a NaN and
// does not stretch the colour scale.
TEST(SurfacePicture, OnlyFiniteHeightsCount) {
  cv::Mat with_nan = TiltMap();
  with_nan.at<float>(150, 40) = std::numeric_limits<float>::quiet_NaN();
  cv::Mat with_inf = TiltMap();
  with_inf.at<float>(150, 40) = std::numeric_limits<float>::infinity();
  const cv::Mat a =
      RenderSurfacePicture(with_nan, cv::Mat(), kAperture, 632.8e-9, "t");
  const cv::Mat b =
      RenderSurfacePicture(with_inf, cv::Mat(), kAperture, 632.8e-9, "t");
  EXPECT_EQ(cv::norm(a, b, cv::NORM_INF), 0.0);
  // An all-NaN map still renders (grey map, no data line).
  const cv::Mat empty(50, 50, CV_32FC1,
                      cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  EXPECT_NO_THROW(RenderSurfacePicture(empty, cv::Mat(), {{25, 25}, 20},
                                       632.8e-9, "nothing"));
}

TEST(SurfacePicture, BadInput) {
  const cv::Mat map = TiltMap();
  EXPECT_THROW(
      RenderSurfacePicture(cv::Mat(), cv::Mat(), kAperture, 632.8e-9, "x"),
      InputError);
  EXPECT_THROW(RenderSurfacePicture(map, cv::Mat(10, 10, CV_8UC1), kAperture,
                                    632.8e-9, "x"),
               InputError);
  EXPECT_THROW(RenderSurfacePicture(map, cv::Mat(), kAperture, 0.0, "x"),
               InputError);
  EXPECT_THROW(
      RenderSurfacePicture(map, cv::Mat(), {{0, 0}, 0.0}, 632.8e-9, "x"),
      InputError);
  EXPECT_THROW(RenderSurfacePicture(map, cv::Mat(), kAperture, 632.8e-9, "x",
                                    {.width = 100}),
               InputError);
  EXPECT_NE(SurfacePictureOptions{.pixel_pitch_m = -1.0}.Check(), "");
  EXPECT_EQ(SurfacePictureOptions{}.Check(), "");
}

// Smoke: a PNG on disk that reads back as the rendered picture.
TEST(SurfacePicture, WritesPng) {
  const fs::path dir = Scratch("png");
  const fs::path path = dir / "map.png";
  const cv::Mat map = TiltMap();
  WriteSurfacePicture(path, map, cv::Mat(), kAperture, 589.3e-9,
                      "demo map (invented part 4711)");
  const cv::Mat back = cv::imread(path.string(), cv::IMREAD_COLOR);
  ASSERT_FALSE(back.empty());
  const cv::Mat direct = RenderSurfacePicture(
      map, cv::Mat(), kAperture, 589.3e-9, "demo map (invented part 4711)");
  EXPECT_EQ(cv::norm(back, direct, cv::NORM_INF), 0.0);
  fs::remove_all(dir);
}

}  // namespace
}  // namespace figura
