// Ring detection against synthetic photographs rendered from the exact Airy
// response and sphere sag (ring_scene.h). External checks: the Newton's-ring
// law r_m^2 = m lambda R / n_gap and the half-wave rule (dark contact in
// reflection between glasses), references.md "Newton's rings and test
// plates".
#include "fringe/ring_detection.h"

#include <gtest/gtest.h>

#include <chrono>
#include <cmath>
#include <cstdio>

#include "fringe/ring_scene.h"

namespace figura {
namespace {

using test::RenderRings;
using test::RingScene;

// Fringe order relative to the point's own number: for a correctly located
// and numbered point, 2 n t / lambda - index / 2 is the same for all points
// (the dark-fringe condition 2 n t = m lambda, references.md).
double OrderResidual(const RingScene& scene, const FringePoint& p) {
  return scene.OrderAt(p.x_px, p.y_px) - 0.5 * p.index;
}

TEST(RingDetection, CleanSixteenBitCentrePeriodAndCircles) {
  const RingScene scene;
  const cv::Mat image = RenderRings(scene);
  const auto start = std::chrono::steady_clock::now();
  const RingDetectionResult result = DetectRings(image, {});
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start)
          .count();
  std::printf(
      "detect 1000x1000: %.3f s, centre error (%.4f, %.4f) px, sigma %.4f px, "
      "period %.3f "
      "(truth %.3f) px^2, %zu points, visibility %.3f\n",
      seconds, result.centre_px.x - scene.ring_centre.x,
      result.centre_px.y - scene.ring_centre.y, result.centre_sigma_px,
      result.period_r2_px2, scene.PeriodR2(), result.points.size(),
      result.visibility);
  for (const auto& m : result.messages) std::printf("message: %s\n", m.c_str());
  ASSERT_NE(result.status, Status::kError);
  EXPECT_TRUE(result.aperture_detected);
  // Where a dark fringe meets the part edge, the edge is invisible against
  // the dark surround: the aperture is known to within about half the
  // fringe spacing at the edge, P / (2 r) (spacing from r^2 = m P).
  const double edge_spacing =
      scene.PeriodR2() / (2.0 * scene.aperture_radius_px);
  EXPECT_NEAR(result.aperture_centre_px.x, scene.aperture_centre.x,
              0.5 * edge_spacing);
  EXPECT_NEAR(result.aperture_centre_px.y, scene.aperture_centre.y,
              0.5 * edge_spacing);
  EXPECT_NEAR(result.aperture_radius_px, 0.95 * scene.aperture_radius_px,
              0.5 * edge_spacing);
  // Centre to 0.1 px on a clean 16-bit photo (the brief's requirement).
  EXPECT_NEAR(result.centre_px.x, scene.ring_centre.x, 0.1);
  EXPECT_NEAR(result.centre_px.y, scene.ring_centre.y, 0.1);
  EXPECT_GT(result.centre_sigma_px, 0.0);
  EXPECT_LT(result.centre_sigma_px, 0.1);
  // Period in r^2 within 0.05 % of lambda R / (n p^2).
  EXPECT_NEAR(result.period_r2_px2 / scene.PeriodR2(), 1.0, 5e-4);
  // Contact is dark in reflection between two glasses (half-wave rule).
  EXPECT_EQ(result.centre_observed, FringeState::kDark);
  // Two-beam visibility of a glass/air/glass gap is close to 1 (references.md);
  // vignetting and the background offset lower it a little.
  EXPECT_GT(result.visibility, 0.8);
  // Every sector has points, and all points sit on the true fringes with one
  // consistent numbering.
  ASSERT_GT(result.points.size(), static_cast<std::size_t>(36 * 25));
  const double reference = OrderResidual(scene, result.points.front());
  EXPECT_NEAR(reference, std::round(reference), 0.02);
  double worst = 0.0;
  double sum_pull2 = 0.0;
  for (const auto& p : result.points) {
    EXPECT_EQ(p.kind,
              p.index % 2 == 0 ? FringeState::kDark : FringeState::kBright);
    const double residual = OrderResidual(scene, p) - reference;
    worst = std::max(worst, std::abs(residual));
    // Radial error in px from the order error: dr = d(order) * P / (2 r)
    // (order ~ r^2 / P).
    const double dr = residual * scene.PeriodR2() / (2.0 * p.radius_px);
    sum_pull2 += (dr / p.sigma_px) * (dr / p.sigma_px);
  }
  std::printf("worst order residual %.4f fringe, rms pull %.2f\n", worst,
              std::sqrt(sum_pull2 / static_cast<double>(result.points.size())));
  EXPECT_LT(worst, 0.03);
  EXPECT_LT(seconds, 5.0);
}

TEST(RingDetection, DustOffsetGivesBrightCentreAndOddShift) {
  RingScene scene;
  scene.gap_offset_m =
      0.25 * scene.wavelength_m;  // quarter wave of gap: bright centre
  scene.ring_centre = {487.9, 512.4};
  const RingDetectionResult result = DetectRings(RenderRings(scene), {});
  ASSERT_NE(result.status, Status::kError) << result.messages.front();
  EXPECT_EQ(result.centre_observed, FringeState::kBright);
  EXPECT_NEAR(result.first_dark_r2_px2 / result.period_r2_px2, 0.5, 0.05);
  EXPECT_NEAR(result.centre_px.x, scene.ring_centre.x, 0.1);
  EXPECT_NEAR(result.centre_px.y, scene.ring_centre.y, 0.1);
  const double reference = OrderResidual(scene, result.points.front());
  for (const auto& p : result.points)
    EXPECT_NEAR(OrderResidual(scene, p), reference, 0.03);
}

TEST(RingDetection, CentreNearTheApertureEdge) {
  RingScene scene;
  scene.ring_centre = {880.4, 470.3};  // tilted plate: rings off to one side
  scene.radius_m = 1.0;
  const RingDetectionResult result = DetectRings(RenderRings(scene), {});
  ASSERT_NE(result.status, Status::kError) << result.messages.front();
  EXPECT_NEAR(result.centre_px.x, scene.ring_centre.x, 0.15);
  EXPECT_NEAR(result.centre_px.y, scene.ring_centre.y, 0.15);
  const double reference = OrderResidual(scene, result.points.front());
  for (const auto& p : result.points)
    EXPECT_NEAR(OrderResidual(scene, p), reference, 0.05);
}

TEST(RingDetection, NoisyEightBitPhoto) {
  RingScene scene;
  scene.level = 200.0;
  scene.background = 6.0;
  scene.noise = 6.0;
  scene.full_scale = 255.0;
  scene.vignetting = 0.4;
  RingDetectionOptions options;
  options.full_scale = 255.0;
  const RingDetectionResult result = DetectRings(RenderRings(scene), options);
  ASSERT_NE(result.status, Status::kError) << result.messages.front();
  EXPECT_NEAR(result.centre_px.x, scene.ring_centre.x, 0.3);
  EXPECT_NEAR(result.centre_px.y, scene.ring_centre.y, 0.3);
  EXPECT_NEAR(result.period_r2_px2 / scene.PeriodR2(), 1.0, 2e-3);
}

// Error statuses: a clear reason, never made-up points.
void ExpectError(const cv::Mat& image, const char* word,
                 const RingDetectionOptions& options = {}) {
  const RingDetectionResult result = DetectRings(image, options);
  EXPECT_EQ(result.status, Status::kError);
  EXPECT_TRUE(result.points.empty());
  ASSERT_FALSE(result.messages.empty());
  EXPECT_NE(result.messages.back().find(word), std::string::npos)
      << result.messages.back();
}

TEST(RingDetection, UniformImageIsAnError) {
  ExpectError(cv::Mat(600, 800, CV_32FC1, cv::Scalar(30000.0)), "uniform");
}

TEST(RingDetection, UniformPartIsAnError) {
  RingScene scene;
  scene.radius_m = 1e9;  // a perfect flat on a flat: one fringe over the part
  scene.gap_offset_m = 0.1e-6;
  ExpectError(RenderRings(scene), "fringes");
}

TEST(RingDetection, NoiseOnlyIsAnError) {
  cv::Mat image(800, 800, CV_32FC1);
  cv::RNG rng(77);
  rng.fill(image, cv::RNG::NORMAL, 20000.0, 3000.0);
  ExpectError(image, "no fringes");
}

TEST(RingDetection, SaturatedIsAnError) {
  RingScene scene;
  scene.level = 400000.0;  // heavily over-exposed: clipped at 65535
  RingDetectionOptions options;
  options.full_scale = 65535.0;
  ExpectError(RenderRings(scene), "saturated", options);
}

TEST(RingDetection, TooFewRingsIsAnError) {
  RingScene scene;
  scene.radius_m = 16.0;  // about 2 fringes inside the evaluated aperture
  ExpectError(RenderRings(scene), "too few rings");
}

TEST(RingDetection, CentreOutsideTheImageIsAnError) {
  RingScene scene;
  scene.ring_centre = {-90.0, 480.0};
  scene.aperture_radius_px = 800.0;  // the part fills the frame
  ExpectError(RenderRings(scene), "outside the image");
}

TEST(RingDetection, InvalidOptionsThrow) {
  RingDetectionOptions options;
  options.sectors = 1;
  EXPECT_THROW(DetectRings(cv::Mat(10, 10, CV_32FC1, cv::Scalar(1.0)), options),
               InputError);
  options = {};
  options.aperture_diameter_px = 100.0;  // without a centre
  EXPECT_FALSE(options.Check().empty());
}

TEST(RingDetection, GivenApertureIsUsed) {
  const RingScene scene;
  RingDetectionOptions options;
  options.aperture_centre_px = cv::Point2d(500.0, 500.0);
  options.aperture_diameter_px = 700.0;
  options.aperture_fraction = 1.0;
  const RingDetectionResult result = DetectRings(RenderRings(scene), options);
  ASSERT_NE(result.status, Status::kError);
  EXPECT_FALSE(result.aperture_detected);
  EXPECT_DOUBLE_EQ(result.aperture_radius_px, 350.0);
  for (const auto& p : result.points) {
    EXPECT_LE(std::hypot(p.x_px - 500.0, p.y_px - 500.0), 350.0 + 1.0);
  }
}

}  // namespace
}  // namespace figura
