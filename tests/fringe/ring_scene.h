// Synthetic Newton's-ring photographs for the fringe tests, rendered from
// the exact Airy response of the gap (optics/media.h LayerIntensity) with
// the exact sphere sag (optics/sphere.h), then blurred, vignetted, noised
// with a fixed seed and quantised like a camera.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <opencv2/core.hpp>
#include <opencv2/imgproc.hpp>

#include "optics/media.h"
#include "optics/sphere.h"

namespace figura::test {

// Description of one synthetic photograph.
struct RingScene {
  int width = 1000;
  int height = 1000;
  cv::Point2d ring_centre{503.37, 488.61};    // px
  cv::Point2d aperture_centre{500.2, 499.7};  // px
  double aperture_radius_px = 450.0;
  double radius_m = 2.0;         // sphere radius of the gap profile
  double pixel_pitch_m = 10e-6;  // object-side pixel size
  double wavelength_m =
      546.074e-9;  // mercury e line in air (NIST ASD via references.md)
  double gap_offset_m = 0.0;  // gap at the ring centre (dust)
  MediaStack stack;           // glass / air / glass
  View view = View::kReflected;
  double blur_px = 0.8;      // Gaussian PSF sigma
  double level = 50000.0;    // counts at the brightest fringe, no vignetting
  double vignetting = 0.25;  // relative fall-off at the aperture edge
  cv::Point2d vignetting_centre{470.0, 530.0};
  double background = 800.0;    // counts outside the part
  double noise = 2.0;           // Gaussian read noise, counts (sigma)
  double full_scale = 65535.0;  // 16-bit camera
  std::uint64_t seed = 20261202;

  // Fringe period in r^2 (px^2) for the small-sag law r_m^2 = m lambda R / n
  // (references.md, "Newton's rings and test plates").
  [[nodiscard]] double PeriodR2() const {
    return wavelength_m * radius_m /
           (stack.gap_index * pixel_pitch_m * pixel_pitch_m);
  }
  // Fringe order 2 n t / lambda at a pixel (exact sag).
  [[nodiscard]] double OrderAt(double x, double y) const {
    const double r =
        std::hypot(x - ring_centre.x, y - ring_centre.y) * pixel_pitch_m;
    const double t = gap_offset_m + SphereSag(radius_m, r);
    return 2.0 * stack.gap_index * t / wavelength_m;
  }
};

// Renders the scene as a CV_32FC1 image holding integer counts.
inline cv::Mat RenderRings(const RingScene& scene) {
  const FringeRule rule = RuleFor(scene.stack, scene.view);
  cv::Mat image(scene.height, scene.width, CV_32FC1);
  const double edge2 = scene.aperture_radius_px * scene.aperture_radius_px;
  for (int y = 0; y < scene.height; ++y) {
    auto* row = image.ptr<float>(y);
    for (int x = 0; x < scene.width; ++x) {
      const double dx = x - scene.aperture_centre.x;
      const double dy = y - scene.aperture_centre.y;
      double value = scene.background;
      if (dx * dx + dy * dy <= edge2) {
        const double r =
            std::hypot(x - scene.ring_centre.x, y - scene.ring_centre.y) *
            scene.pixel_pitch_m;
        const double t = scene.gap_offset_m + SphereSag(scene.radius_m, r);
        const double intensity =
            LayerIntensity(scene.stack, scene.view, t, scene.wavelength_m) /
            rule.max_intensity;
        const double v2 = (std::pow(x - scene.vignetting_centre.x, 2) +
                           std::pow(y - scene.vignetting_centre.y, 2)) /
                          edge2;
        value = scene.level * intensity * (1.0 - scene.vignetting * v2) +
                scene.background;
      }
      row[x] = static_cast<float>(value);
    }
  }
  if (scene.blur_px > 0.0)
    cv::GaussianBlur(image, image, cv::Size(), scene.blur_px);
  if (scene.noise > 0.0) {
    cv::RNG rng(scene.seed);
    cv::Mat noise(image.size(), CV_32FC1);
    rng.fill(noise, cv::RNG::NORMAL, 0.0, scene.noise);
    image += noise;
  }
  for (int y = 0; y < scene.height; ++y) {
    auto* row = image.ptr<float>(y);
    for (int x = 0; x < scene.width; ++x) {
      row[x] = std::clamp(std::round(row[x]), 0.0F,
                          static_cast<float>(scene.full_scale));
    }
  }
  return image;
}

}  // namespace figura::test
