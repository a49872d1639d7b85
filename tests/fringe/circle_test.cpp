// Tests of the circle fits: exact recovery, Thales' theorem as an external
// check, and the degenerate inputs (too few, collinear, coincident and
// non-finite points) that must give "not ok" rather than a made-up circle.
#include "fringe/circle.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <numbers>
#include <vector>

namespace figura {
namespace {

std::vector<cv::Point2d> OnCircle(cv::Point2d c, double r, int n) {
  std::vector<cv::Point2d> p;
  for (int i = 0; i < n; ++i) {
    const double t = 2.0 * std::numbers::pi * i / n + 0.1;
    p.emplace_back(c.x + r * std::cos(t), c.y + r * std::sin(t));
  }
  return p;
}

// Thales' theorem (Euclid, Elements III.31): the hypotenuse of a right
// triangle is a diameter of its circumcircle. (0,0), (2,0), (0,2): centre
// (1,1), radius sqrt(2).
TEST(Circle, ThreePointsOfARightTriangle) {
  const std::vector<cv::Point2d> p = {{0, 0}, {2, 0}, {0, 2}};
  for (const CircleFit& fit : {FitCircleAlgebraic(p), FitCircleRobust(p)}) {
    ASSERT_TRUE(fit.ok);
    EXPECT_NEAR(fit.circle.centre.x, 1.0, 1e-12);
    EXPECT_NEAR(fit.circle.centre.y, 1.0, 1e-12);
    EXPECT_NEAR(fit.circle.radius, std::sqrt(2.0), 1e-12);
  }
}

TEST(Circle, RobustFitDropsOutliers) {
  std::vector<cv::Point2d> p = OnCircle({120.5, 80.25}, 40.0, 36);
  p.emplace_back(120.5, 80.25);  // dust at the centre
  p.emplace_back(200.0, 10.0);
  p.emplace_back(121.0, 125.0);  // 4.75 px outside
  const CircleFit fit = FitCircleRobust(p);
  ASSERT_TRUE(fit.ok);
  EXPECT_EQ(fit.inliers, 36);
  EXPECT_NEAR(fit.circle.centre.x, 120.5, 1e-9);
  EXPECT_NEAR(fit.circle.centre.y, 80.25, 1e-9);
  EXPECT_NEAR(fit.circle.radius, 40.0, 1e-9);
  EXPECT_TRUE(std::isfinite(fit.centre_sigma_px));
}

TEST(Circle, TooFewPointsAreNotAFit) {
  const std::vector<cv::Point2d> two = {{0, 0}, {3, 4}};
  EXPECT_FALSE(FitCircleAlgebraic(two).ok);
  EXPECT_FALSE(FitCircleRobust(two).ok);
  EXPECT_FALSE(FitCircleRobust({}).ok);
}

// Collinear points have no circle (the normal matrix of the Kasa fit is
// singular): not ok, never an enormous radius.
TEST(Circle, CollinearPointsAreNotAFit) {
  std::vector<cv::Point2d> line;
  for (int i = 0; i < 20; ++i) line.emplace_back(3.0 + i, 1.0 + 2.0 * i);
  EXPECT_FALSE(FitCircleAlgebraic(line).ok);
  EXPECT_FALSE(FitCircleRobust(line).ok);
  // Along an image axis too.
  std::vector<cv::Point2d> row;
  for (int i = 0; i < 20; ++i) row.emplace_back(10.0 * i, 7.0);
  EXPECT_FALSE(FitCircleAlgebraic(row).ok);
  EXPECT_FALSE(FitCircleRobust(row).ok);
}

TEST(Circle, CoincidentPointsAreNotAFit) {
  const std::vector<cv::Point2d> same(10, cv::Point2d(5.0, 6.0));
  EXPECT_FALSE(FitCircleAlgebraic(same).ok);
  EXPECT_FALSE(FitCircleRobust(same).ok);
}

// A non-finite coordinate (a failed sub-pixel estimate upstream) makes the
// fit not ok rather than spreading NaN into the result.
TEST(Circle, NonFinitePointsAreNotAFit) {
  for (const double bad : {std::numeric_limits<double>::quiet_NaN(),
                           std::numeric_limits<double>::infinity()}) {
    std::vector<cv::Point2d> p = OnCircle({50.0, 60.0}, 20.0, 12);
    p[4].x = bad;
    const CircleFit a = FitCircleAlgebraic(p);
    const CircleFit r = FitCircleRobust(p);
    EXPECT_FALSE(a.ok);
    EXPECT_FALSE(r.ok);
  }
}

}  // namespace
}  // namespace figura
