// The working-size reduction of the aperture and centre steps
// (fringe/aperture.h). External check: OpenCV's own area resampling
// (cv::resize with cv::INTER_AREA, "resampling using pixel area relation",
// OpenCV imgproc documentation), which ReduceToWorkingSize reproduces with
// a faster separable sum.
#include "fringe/aperture.h"

#include <gtest/gtest.h>

#include <limits>
#include <opencv2/core.hpp>
#include <opencv2/imgproc.hpp>

namespace figura {
namespace {

// Largest |ours - OpenCV| over the image, relative to the value range.
double RelativeDifferenceToOpenCv(const cv::Mat& image, int working_size) {
  const cv::Mat ours = ReduceToWorkingSize(image, working_size);
  cv::Mat reference;
  cv::resize(image, reference, ours.size(), 0, 0, cv::INTER_AREA);
  double difference = 0.0;
  cv::minMaxLoc(cv::abs(ours - reference), nullptr, &difference);
  double lo = 0.0;
  double hi = 0.0;
  cv::minMaxLoc(image, &lo, &hi);
  return difference / (hi - lo);
}

TEST(ReduceToWorkingSize, EqualsOpenCvAreaResamplingAtNonIntegerFactor) {
  cv::Mat image(750, 1000, CV_32FC1);
  cv::RNG rng(20261202);  // fixed seed
  rng.fill(image, cv::RNG::UNIFORM, 0.0, 65535.0);
  // 1000 x 750 -> 640 x 480: 1.5625 pixels per reduced pixel.
  const cv::Mat ours = ReduceToWorkingSize(image, 640);
  EXPECT_EQ(ours.cols, 640);
  EXPECT_EQ(ours.rows, 480);
  // Float sums in a different order: agreement to float rounding.
  EXPECT_LT(RelativeDifferenceToOpenCv(image, 640), 1e-6);
}

TEST(ReduceToWorkingSize, EqualsOpenCvAreaResamplingAtOddSizes) {
  // An integer factor (3), and an odd size whose rounding leaves a partial
  // last cell.
  for (const cv::Size size : {cv::Size(1920, 1440), cv::Size(1001, 637)}) {
    cv::Mat image(size, CV_32FC1);
    cv::RNG rng(7);  // fixed seed
    rng.fill(image, cv::RNG::NORMAL, 1000.0, 300.0);
    EXPECT_LT(RelativeDifferenceToOpenCv(image, 640), 1e-6) << size;
  }
}

TEST(ReduceToWorkingSize, SmallImageIsReturnedAsItIs) {
  const cv::Mat image(300, 400, CV_32FC1, cv::Scalar(5.0));
  const cv::Mat same = ReduceToWorkingSize(image, 640);
  EXPECT_EQ(same.data, image.data);
}

// The range from the reduction pass equals cv::minMaxLoc over the full image
// (reference: OpenCV core), for reduced and for small (returned as is)
// images; a NaN or an infinity anywhere makes it not finite.
TEST(ReduceToWorkingSize, RangeOfTheFullImage) {
  for (const cv::Size size : {cv::Size(1001, 637), cv::Size(300, 200)}) {
    cv::Mat image(size, CV_32FC1);
    cv::RNG rng(99);  // fixed seed
    rng.fill(image, cv::RNG::NORMAL, 1000.0, 300.0);
    // Extremes in single pixels that the area averaging would hide.
    image.at<float>(size.height - 1, 3) = -12345.0F;
    image.at<float>(0, size.width - 1) = 98765.0F;
    PixelRange range;
    ReduceToWorkingSize(image, 640, &range);
    double lo = 0.0;
    double hi = 0.0;
    cv::minMaxLoc(image, &lo, &hi);
    EXPECT_TRUE(range.finite) << size;
    EXPECT_EQ(static_cast<double>(range.lo), lo) << size;
    EXPECT_EQ(static_cast<double>(range.hi), hi) << size;
    for (const float bad : {std::numeric_limits<float>::quiet_NaN(),
                            std::numeric_limits<float>::infinity()}) {
      cv::Mat spoiled = image.clone();
      spoiled.at<float>(size.height / 2, size.width - 2) = bad;
      PixelRange spoiled_range;
      ReduceToWorkingSize(spoiled, 640, &spoiled_range);
      EXPECT_FALSE(spoiled_range.finite) << size << " " << bad;
    }
  }
}

}  // namespace
}  // namespace figura
