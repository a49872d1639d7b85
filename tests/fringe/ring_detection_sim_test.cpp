// Ring detection on photographs from the project's simulator (sim/
// simulation.h: pixel-integrated Airy response, shot and read noise, blur,
// fall-off). External check: the Newton's-ring law r_m^2 = m lambda R /
// n_gap (references.md, "Newton's rings and test plates") gives the period
// in r^2, lambda R / (n p^2), and a dark contact in reflection between
// glasses (half-wave rule).
#include <gtest/gtest.h>

#include "fringe/ring_detection.h"
#include "sim/simulation.h"

namespace figura {
namespace {

TEST(RingDetectionSimulated, SphereOnFlatOffCentreContact) {
  SimulationOptions sim;
  sim.gap.part_radius_m = 1.5;
  sim.gap.plate_radius_m = GapOptions::kFlat;
  sim.gap.contact_x_m = 0.35e-3;   // x right
  sim.gap.contact_y_m = -0.21e-3;  // y up
  sim.aperture_diameter_m = 8e-3;
  sim.camera.width_px = 1000;
  sim.camera.height_px = 900;
  sim.camera.pixel_pitch_m = 10e-6;
  sim.camera.blur_sigma_px = 0.7;
  sim.camera.falloff = 0.2;
  sim.seed = 4242;
  const SimulationResult photo = Simulate(sim);
  ASSERT_EQ(photo.status, Status::kOk);
  cv::Mat image;
  photo.image.convertTo(image, CV_32F);
  RingDetectionOptions options;
  options.full_scale = 65535.0;
  const RingDetectionResult result = DetectRings(image, options);
  ASSERT_NE(result.status, Status::kError) << result.messages.back();
  const double p = sim.camera.pixel_pitch_m;
  const double cx = sim.CentreX() + sim.gap.contact_x_m / p;
  const double cy =
      sim.CentreY() - sim.gap.contact_y_m / p;  // image y runs down
  EXPECT_NEAR(result.centre_px.x, cx, 0.1);
  EXPECT_NEAR(result.centre_px.y, cy, 0.1);
  // lambda R / (n p^2); the exact sag adds r^2/(4 R^2) ~ 2e-6 relative here.
  const double period = 546.074e-9 * sim.gap.part_radius_m / (p * p);
  EXPECT_NEAR(result.period_r2_px2 / period, 1.0, 5e-4);
  EXPECT_EQ(result.centre_observed, FringeState::kDark);
  EXPECT_NEAR(result.first_dark_r2_px2 / result.period_r2_px2, 0.0, 0.05);
  EXPECT_GT(result.points.size(), static_cast<std::size_t>(36 * 10));
}

}  // namespace
}  // namespace figura
