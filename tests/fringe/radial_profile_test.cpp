// Sector profiles (fringe/radial_profile.h): the sector of every pixel is
// found per row from the crossings of the sector boundary rays, not per
// pixel. External check: the definition itself, sector k holding the
// azimuths atan2(y - cy, x - cx) in [2 pi (k - 1/2) / S, 2 pi (k + 1/2) / S),
// evaluated per pixel with std::atan2 (C++ standard library).
#include "fringe/radial_profile.h"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <opencv2/core.hpp>
#include <vector>

namespace figura {
namespace {

struct Case {
  cv::Point2d centre;
  int sectors;
};

TEST(SectorProfiles, EveryPixelInTheSectorOfItsAzimuth) {
  const cv::Size size(161, 143);
  const Circle region{{80.0, 71.0}, 68.0};
  cv::Mat image(size, CV_32FC1);
  cv::RNG rng(11);  // fixed seed
  rng.fill(image, cv::RNG::UNIFORM, 0.0, 1.0);
  const double bin = 1e6;  // one r^2 bin: only the sectors are compared
  // Off-pixel and on-pixel centres (the row through an integer centre has
  // azimuth pi left of it and 0 right of it); odd and even sector counts.
  for (const Case c : {Case{{83.37, 69.81}, 36}, Case{{80.0, 71.0}, 36},
                       Case{{80.0, 71.0}, 7}, Case{{20.5, 30.25}, 72}}) {
    const SectorProfiles profiles =
        AccumulateSectorProfiles(image, region, c.centre, bin, c.sectors);
    std::vector<double> count(static_cast<std::size_t>(c.sectors), 0.0);
    std::vector<double> sum(static_cast<std::size_t>(c.sectors), 0.0);
    std::vector<double> sum_dx(static_cast<std::size_t>(c.sectors), 0.0);
    const double width = 2.0 * std::numbers::pi / c.sectors;
    for (int y = 0; y < size.height; ++y) {
      int x0 = 0;
      int x1 = -1;
      RowSpan(region, y, size.width, x0, x1);
      for (int x = x0; x <= x1; ++x) {
        double angle = std::atan2(y - c.centre.y, x - c.centre.x) + 0.5 * width;
        if (angle < 0.0) angle += 2.0 * std::numbers::pi;
        const auto k = static_cast<std::size_t>(
            std::min(static_cast<int>(angle / width), c.sectors - 1));
        count[k] += 1.0;
        sum[k] += static_cast<double>(image.at<float>(y, x));
        sum_dx[k] += x - c.centre.x;
      }
    }
    for (int k = 0; k < c.sectors; ++k) {
      const auto kk = static_cast<std::size_t>(k);
      double got_count = 0.0;
      double got_sum = 0.0;
      double got_dx = 0.0;
      for (int b = 0; b < profiles.bins; ++b) {
        got_count += profiles.count[profiles.At(k, b)];
        got_sum += profiles.sum[profiles.At(k, b)];
        got_dx += profiles.sum_dx[profiles.At(k, b)];
      }
      EXPECT_EQ(got_count, count[kk]) << "sector " << k << " of " << c.sectors;
      EXPECT_NEAR(got_sum, sum[kk], 1e-9 * (1.0 + count[kk]));
      EXPECT_NEAR(got_dx, sum_dx[kk], 1e-9 * (1.0 + count[kk]));
    }
  }
}

}  // namespace
}  // namespace figura
