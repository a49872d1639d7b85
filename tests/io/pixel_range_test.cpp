// io/pixel_range: the vectorised range against OpenCV's cv::minMaxLoc
// (reference library, OpenCV 4.6 core) and against std::isfinite.
#include "io/pixel_range.h"

#include <gtest/gtest.h>

#include <limits>
#include <opencv2/core.hpp>

namespace figura {
namespace {

TEST(PixelRange, EqualsMinMaxLocAtWidthsAroundTheVectorLength) {
  cv::RNG rng(20261202);  // fixed seed
  for (const int cols : {1, 3, 7, 8, 9, 15, 16, 17, 33, 1001}) {
    cv::Mat image(13, cols, CV_32FC1);
    rng.fill(image, cv::RNG::NORMAL, 0.0, 1000.0);
    // The extremes in the scalar tail of a row, where one exists.
    image.at<float>(5, cols - 1) = 1e6F;
    image.at<float>(12, cols - 1) = -1e6F;
    const PixelRange range = RangeOfPixels(image);
    double lo = 0.0;
    double hi = 0.0;
    cv::minMaxLoc(image, &lo, &hi);
    EXPECT_TRUE(range.finite) << cols;
    EXPECT_EQ(static_cast<double>(range.lo), lo) << cols;
    EXPECT_EQ(static_cast<double>(range.hi), hi) << cols;
  }
}

TEST(PixelRange, AnyNonFinitePixelMakesItNotFinite) {
  const float bad[] = {std::numeric_limits<float>::quiet_NaN(),
                       std::numeric_limits<float>::infinity(),
                       -std::numeric_limits<float>::infinity()};
  for (const int cols : {5, 8, 29}) {
    for (const float value : bad) {
      for (const int at : {0, cols / 2, cols - 1}) {
        cv::Mat image(4, cols, CV_32FC1, cv::Scalar(2.5));
        image.at<float>(3, at) = value;
        EXPECT_FALSE(RangeOfPixels(image).finite)
            << cols << " " << value << " at " << at;
      }
    }
  }
}

TEST(PixelRange, PartsMergeToTheWholeAndEmptyIsLoAboveHi) {
  const float a[] = {3.0F, -1.0F, 7.0F};
  const float b[] = {10.0F, 2.0F};
  PixelRangeAccumulator first;
  PixelRangeAccumulator second;
  first.Add(a, 3);
  second.Add(b, 2);
  first.Merge(second);
  const PixelRange range = first.Range();
  EXPECT_EQ(range.lo, -1.0F);
  EXPECT_EQ(range.hi, 10.0F);
  EXPECT_TRUE(range.finite);
  const PixelRange none = PixelRangeAccumulator().Range();
  EXPECT_GT(none.lo, none.hi);
}

}  // namespace
}  // namespace figura
