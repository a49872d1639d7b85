// Illumination flattening (fringe/illumination.h) and the sharpness centre
// search (fringe/ring_centre.h) on synthetic cosine fringes with a known
// envelope. External check: a two-beam fringe pattern is
// I = m (1 + V cos phi), local mean m and cosine amplitude a = m V, so that
// (I - m) / a = cos phi (Hecht, Optics, sec. 9.1 [memory]; the normalisation
// itself is common practice [practice]). Newton's fringes are periodic in
// r^2: phi = 2 pi r^2 / P (references.md, "Newton's rings").
#include "fringe/illumination.h"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <opencv2/core.hpp>

#include "fringe/ring_centre.h"

namespace figura {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

// A 16-bit-like photo: envelope m = 30000 (1 - falloff rho^2) (vignetting,
// rho = distance from the image centre / 300 px), fringes of visibility V
// periodic in r^2 about `centre` with period `period` px^2, dark outside a
// disc of radius 280 px about the image centre.
struct Scene {
  cv::Size size{600, 560};
  cv::Point2d centre{311.3, 268.6};
  double period = 2500.0;
  double visibility = 0.3;
  double falloff = 0.2;
  Circle disc{{299.5, 279.5}, 280.0};

  [[nodiscard]] double Mean(double x, double y) const {
    const double rho2 =
        ((x - 299.5) * (x - 299.5) + (y - 279.5) * (y - 279.5)) /
        (300.0 * 300.0);
    return 30000.0 * (1.0 - falloff * rho2);
  }
  [[nodiscard]] double Phase(double x, double y) const {
    const double r2 =
        (x - centre.x) * (x - centre.x) + (y - centre.y) * (y - centre.y);
    return kTwoPi * r2 / period;
  }
  [[nodiscard]] cv::Mat Render() const {
    cv::Mat image(size, CV_32FC1);
    for (int y = 0; y < size.height; ++y) {
      for (int x = 0; x < size.width; ++x) {
        const double dx = x - disc.centre.x;
        const double dy = y - disc.centre.y;
        const bool inside = dx * dx + dy * dy <= disc.radius * disc.radius;
        image.at<float>(y, x) = static_cast<float>(
            inside ? Mean(x, y) * (1.0 + visibility * std::cos(Phase(x, y)))
                   : 500.0);
      }
    }
    return image;
  }
};

// RMS of (normalised - cos phi) over the pixels within `fraction` of the
// disc radius.
double NormalisedRmsError(const Scene& scene, const cv::Mat& image,
                          const FlattenedImage& flat, double fraction) {
  const Circle inner{scene.disc.centre, fraction * scene.disc.radius};
  std::vector<float> row(static_cast<std::size_t>(image.cols));
  double sum = 0.0;
  double count = 0.0;
  for (int y = 0; y < image.rows; ++y) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(inner, y, image.cols, x0, x1);
    if (x1 < x0) continue;
    flat.NormaliseRow(image.ptr<float>(y), y, x0, x1, row.data());
    for (int x = x0; x <= x1; ++x) {
      const double d = static_cast<double>(row[static_cast<std::size_t>(x)]) -
                       std::cos(scene.Phase(x, y));
      sum += d * d;
      count += 1.0;
    }
  }
  return std::sqrt(sum / count);
}

TEST(Illumination, NormalisedFringesAreTheCosineOfThePhase) {
  const Scene scene;
  const cv::Mat image = scene.Render();
  IlluminationOptions options;
  options.smoothing_px = scene.disc.radius / 4.0;
  const FlattenedImage flat = FlattenIllumination(image, scene.disc, options);
  // (I - m) / a = cos phi up to a few percent of the unit amplitude: the
  // Gaussian smoothing biases m by (s^2 / 2) laplacian(m) on a curved
  // envelope (s the smoothing sigma; second-order Taylor expansion of the
  // convolution [practice]), here 0.5 * 70^2 * 0.27 = 650 counts, 7 % of
  // a = 9000, and a finite number of fringes enters each window.
  const double rms = NormalisedRmsError(scene, image, flat, 0.9);
  std::printf("normalised rms error (V = 0.3): %.4f\n", rms);
  EXPECT_LT(rms, 0.07);
}

TEST(Illumination, LowContrastAmplitudeUnderVignetting) {
  // Low contrast (V = 0.08, as transmitted light between glasses) under the
  // fall-off of the simulated photos: the envelope's own variation within
  // the smoothing window must not be taken for fringe power. The smoothing
  // bias of m (650 counts, see above) against a = m V = 2400 inflates the
  // estimated amplitude to a sqrt(1 + 2 (650 / 2400)^2) = 1.07 a; 0.12
  // leaves room for the edge of the disc.
  Scene scene;
  scene.visibility = 0.08;
  const cv::Mat image = scene.Render();
  IlluminationOptions options;
  options.smoothing_px = scene.disc.radius / 4.0;
  const FlattenedImage flat = FlattenIllumination(image, scene.disc, options);
  double worst = 0.0;
  for (int y = 0; y < flat.amplitude.rows; ++y) {
    for (int x = 0; x < flat.amplitude.cols; ++x) {
      // Reduced pixel centre in full-resolution pixels.
      const double fx = (x + 0.5) * flat.scale - 0.5;
      const double fy = (y + 0.5) * flat.scale - 0.5;
      const double dx = fx - scene.disc.centre.x;
      const double dy = fy - scene.disc.centre.y;
      if (std::hypot(dx, dy) > 0.8 * scene.disc.radius) continue;
      const double truth = scene.Mean(fx, fy) * scene.visibility;
      const double got = static_cast<double>(flat.amplitude.at<float>(y, x));
      worst = std::max(worst, std::abs(got / truth - 1.0));
    }
  }
  std::printf("largest relative amplitude error (V = 0.08): %.4f\n", worst);
  EXPECT_LT(worst, 0.12);
}

TEST(Illumination, WholeImageMatchesTheRows) {
  const Scene scene;
  const cv::Mat image = scene.Render();
  const FlattenedImage flat = FlattenIllumination(image, scene.disc, {});
  const cv::Mat whole = flat.Normalised(image, scene.disc);
  ASSERT_EQ(whole.size(), image.size());
  std::vector<float> row(static_cast<std::size_t>(image.cols));
  for (int y = 0; y < image.rows; y += 7) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(scene.disc, y, image.cols, x0, x1);
    flat.NormaliseRow(image.ptr<float>(y), y, x0, x1, row.data());
    for (int x = 0; x < image.cols; ++x) {
      const float expected =
          x >= x0 && x <= x1 ? row[static_cast<std::size_t>(x)] : 0.0F;
      ASSERT_EQ(whole.at<float>(y, x), expected) << x << ", " << y;
    }
  }
}

TEST(SharpnessCentre, FindsTheCentreOfCosineRings) {
  // The sharpest r^2 profile is the one about the true ring centre: the
  // search started 1.6 px away ends within 0.02 px of it.
  const Scene scene;
  const cv::Mat image = scene.Render();
  const FlattenedImage flat = FlattenIllumination(image, scene.disc, {});
  const PixelSamples samples =
      SamplePixels(flat.Normalised(image, scene.disc), scene.disc, 2);
  const CentreRefinement refined = RefineCentreBySharpness(
      samples, scene.centre + cv::Point2d(1.3, -0.9), scene.period, 2.0, 0.02);
  ASSERT_TRUE(refined.ok);
  std::printf("sharpness centre error (%.4f, %.4f) px, %d evaluations\n",
              refined.centre.x - scene.centre.x,
              refined.centre.y - scene.centre.y, refined.evaluations);
  EXPECT_NEAR(refined.centre.x, scene.centre.x, 0.02);
  EXPECT_NEAR(refined.centre.y, scene.centre.y, 0.02);
  // The sharpness itself is largest at the centre.
  const double at = ProfileSharpness(samples, scene.centre, scene.period);
  for (const cv::Point2d d :
       {cv::Point2d(0.5, 0.0), cv::Point2d(0.0, -0.5), cv::Point2d(0.3, 0.3)}) {
    EXPECT_LT(ProfileSharpness(samples, scene.centre + d, scene.period), at);
  }
}

}  // namespace
}  // namespace figura
