#include "fringe/disc_closing.h"

#include <gtest/gtest.h>

#include <opencv2/imgproc.hpp>
#include <random>

namespace figura {
namespace {

// Reference: OpenCV's own closing with the same elliptic element and its
// default border (pixels outside ignored).
cv::Mat OpenCvClosing(const cv::Mat& image, int radius) {
  const cv::Mat disc = cv::getStructuringElement(
      cv::MORPH_ELLIPSE, cv::Size(2 * radius + 1, 2 * radius + 1));
  cv::Mat out;
  cv::morphologyEx(image, out, cv::MORPH_CLOSE, disc);
  return out;
}

cv::Mat RandomImage(int rows, int cols, unsigned seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<float> value(-3.0F, 5.0F);
  cv::Mat image(rows, cols, CV_32FC1);
  for (int y = 0; y < rows; ++y) {
    for (int x = 0; x < cols; ++x) image.at<float>(y, x) = value(rng);
  }
  return image;
}

// Value-for-value equality with cv::morphologyEx (reference library:
// OpenCV 4.6 imgproc, Debian 12) over disc radii and image shapes,
// including images narrower and shorter than the disc.
TEST(DiscClosing, EqualsOpenCvMorphologyEx) {
  const int shapes[][2] = {{48, 64}, {31, 17}, {5, 40}, {40, 3}, {1, 9}};
  unsigned seed = 11;
  for (const auto& shape : shapes) {
    for (const int radius : {1, 2, 3, 7, 13}) {
      const cv::Mat image = RandomImage(shape[0], shape[1], seed++);
      const cv::Mat ours = CloseWithDisc(image, radius);
      const cv::Mat reference = OpenCvClosing(image, radius);
      ASSERT_EQ(ours.size(), reference.size());
      EXPECT_EQ(cv::norm(ours, reference, cv::NORM_INF), 0.0)
          << shape[0] << "x" << shape[1] << " radius " << radius;
    }
  }
}

// A dark ring narrower than the disc is filled; a bright disc larger than
// the element keeps its edge (closing is extensive and idempotent).
TEST(DiscClosing, FillsNarrowDarkRingsAndIsIdempotent) {
  cv::Mat image(101, 101, CV_32FC1, cv::Scalar(1.0));
  cv::circle(image, {50, 50}, 30, cv::Scalar(0.0), 2);
  const cv::Mat closed = CloseWithDisc(image, 5);
  double lo = 0.0;
  double hi = 0.0;
  cv::minMaxLoc(closed, &lo, &hi);
  EXPECT_EQ(lo, 1.0);
  cv::Mat diff = closed - image;
  double dlo = 0.0;
  cv::minMaxLoc(diff, &dlo, nullptr);
  EXPECT_GE(dlo, 0.0);  // extensive
  EXPECT_EQ(cv::norm(CloseWithDisc(closed, 5), closed, cv::NORM_INF), 0.0);
}

}  // namespace
}  // namespace figura
