// Form metrics on synthetic maps with known answers derived by hand from the
// ISO 24157 polynomials, and a gap between two exact spheres (optics/sphere.h
// sag formula) for the sagitta deviation.
#include "surface/form_metrics.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "optics/sphere.h"
#include "surface/zernike.h"
#include "surface/zernike_fit.h"

namespace figura {
namespace {

// 401 x 401 pixels, aperture radius 200 px centred on a pixel: rho = 1 is
// reached at the four pixels (200 +- 200, 200), (200, 200 +- 200).
const Circle kAperture{{200.0, 200.0}, 200.0};
const cv::Size kSize(401, 401);

// A map of a single term c Z_j (metres), CV_64F for exact arithmetic.
cv::Mat SingleTerm(int j, double c) {
  std::vector<double> coefficients(static_cast<std::size_t>(j + 1), 0.0);
  coefficients[static_cast<std::size_t>(j)] = c;
  const ZernikePolynomial p(coefficients);
  cv::Mat map(kSize, CV_64FC1);
  std::vector<double> row;
  for (int y = 0; y < map.rows; ++y) {
    const double sy = SurfacePoint(kAperture, 0, y).y;
    p.RowCoefficients(sy, &row);
    for (int x = 0; x < map.cols; ++x) {
      const double sx = SurfacePoint(kAperture, x, 0).x;
      map.at<double>(y, x) = sx * sx + sy * sy <= 1.0
                                 ? ZernikePolynomial::EvaluateRow(row, sx)
                                 : std::numeric_limits<double>::quiet_NaN();
    }
  }
  return map;
}

FormMetrics Metrics(const cv::Mat& map, int max_order = 8) {
  const ZernikeFitResult fit =
      FitZernikeGrid(map, kAperture, {.max_order = max_order});
  EXPECT_EQ(fit.status, Status::kOk);
  return ComputeFormMetrics(map, kAperture, fit);
}

// Pure defocus c Z(2,0) = c sqrt3 (2 rho^2 - 1): centre-to-edge height
// 2 sqrt3 c (ISO 24157 polynomial), nothing irregular.
TEST(FormMetrics, PureDefocus) {
  const double c = 40e-9;
  const FormMetrics m = Metrics(SingleTerm(4, c));
  EXPECT_NEAR(m.power_m, 2.0 * std::sqrt(3.0) * c, 1e-15);
  EXPECT_NEAR(m.irregularity_m, 0.0, 1e-15);
  EXPECT_NEAR(m.irregularity_fit_m, 0.0, 1e-15);
  EXPECT_NEAR(m.rsi_m, 0.0, 1e-15);
  EXPECT_NEAR(m.rmsi_m, 0.0, 1e-15);
  EXPECT_NEAR(m.rmsa_m, 0.0, 1e-15);
  // PV over the pixels: rho from 0 (centre pixel) to 1 (edge pixels).
  EXPECT_NEAR(m.pv_m, 2.0 * std::sqrt(3.0) * c, 1e-15);
  // RMS of c Z_j is |c| (RMS normalisation, ISO 24157); the pixel grid
  // approximates the disk to ~1/r.
  EXPECT_NEAR(m.rms_m, c, 0.01 * c);
  EXPECT_LT(m.power_u_m, 1e-20);  // exact data: zero residual
}

// Sign: a gap that grows from the centre towards the edge has A > 0, a
// shrinking one A < 0.
TEST(FormMetrics, PowerSignFollowsTheGap) {
  EXPECT_GT(Metrics(SingleTerm(4, 10e-9)).power_m, 0.0);
  EXPECT_LT(Metrics(SingleTerm(4, -10e-9)).power_m, 0.0);
}

// Pure astigmatism c Z(2,2) = c sqrt6 rho^2 cos(2 theta): extremes +-sqrt6 c
// at rho = 1, so B = 2 sqrt6 |c|; it has no m = 0 part, so C = 0 and RMSa =
// RMSi = |c|; no power.
TEST(FormMetrics, PureAstigmatism) {
  const double c = -25e-9;
  const FormMetrics m = Metrics(SingleTerm(5, c));
  EXPECT_NEAR(m.power_m, 0.0, 1e-15);
  EXPECT_NEAR(m.irregularity_m, 2.0 * std::sqrt(6.0) * std::abs(c), 1e-15);
  EXPECT_NEAR(m.irregularity_fit_m, 2.0 * std::sqrt(6.0) * std::abs(c), 1e-15);
  EXPECT_NEAR(m.rsi_m, 0.0, 1e-15);
  EXPECT_NEAR(m.rmsi_m, std::abs(c), 0.01 * std::abs(c));
  EXPECT_NEAR(m.rmsa_m, m.rmsi_m, 1e-15);
}

// Pure primary spherical c Z(4,0) = c sqrt5 (6 rho^4 - 6 rho^2 + 1). By
// hand: with u = rho^2, 6u^2 - 6u + 1 is 1 at u = 0 and u = 1 and has its
// minimum -1/2 at u = 1/2 (rho = 1/sqrt2). The least-squares sphere absorbs
// none of it (Z(4,0) is orthogonal to Z(0,0) and Z(2,0) over the disk), so
// the irregularity is the term itself: B = PV = 1.5 sqrt5 |c|, and it is
// all rotationally symmetric: C = B, RMSa = 0, RMSi = |c|.
TEST(FormMetrics, PureSpherical) {
  const double c = 12e-9;
  const FormMetrics m = Metrics(SingleTerm(12, c));
  const double expected = 1.5 * std::sqrt(5.0) * c;
  EXPECT_NEAR(m.power_m, 0.0, 1e-15);
  EXPECT_NEAR(m.rsi_m, expected, 1e-6 * expected);  // profile grid in rho
  // The pixel grid has no pixel at exactly rho = 1/sqrt2: ~1e-5 relative.
  EXPECT_NEAR(m.irregularity_m, expected, 1e-4 * expected);
  EXPECT_NEAR(m.rmsi_m, c, 0.01 * c);
  EXPECT_NEAR(m.rmsa_m, 0.0, 1e-15);
}

// RMS of c Z_j over the aperture is |c| for every term beyond tilt (ISO
// 24157 RMS normalisation); piston and tilt added to the map change nothing.
TEST(FormMetrics, RmsOfEachTermIsItsCoefficient) {
  const cv::Mat piston_tilt =
      SingleTerm(0, 300e-9) + SingleTerm(1, -80e-9) + SingleTerm(2, 55e-9);
  for (int j = 3; j < ZernikeCount(6); ++j) {
    const double c = 10e-9;
    const cv::Mat map = SingleTerm(j, c);
    const FormMetrics m = Metrics(map, 6);
    EXPECT_NEAR(m.rms_m, c, 0.012 * c) << j;
    if (j % 4 != 0) continue;  // piston and tilt on a few terms
    const FormMetrics t = Metrics(map + piston_tilt, 6);
    EXPECT_NEAR(t.rms_m, m.rms_m, 1e-15) << j;
    EXPECT_NEAR(t.pv_m, m.pv_m, 1e-15) << j;
    EXPECT_NEAR(t.irregularity_m, m.irregularity_m, 1e-15) << j;
  }
}

// The gap between a part and a reference that are both exact spheres
// (optics SphereSag, exact) touching at the centre: A equals the sag
// difference at the edge. The best sphere here is the paraboloid Z(2,0) (see
// form_metrics.h), so the quartic term of the exact sags shows up in B and C.
// By hand: s(R, r) = r^2/(2R) + r^4/(8R^3) + ..., so the gap carries
// k rho^4 with k = (a^4/8)(1/R_part^3 - 1/R_ref^3); rho^4 =
// (Z(4,0)/sqrt5 + 6 rho^2 - 1)/6 puts k/(6 sqrt5) on Z(4,0), whose PV is
// 1.5 sqrt5 times that (PureSpherical): B = C = k/4 (higher orders of the
// sag add ~1 %).
TEST(FormMetrics, SagittaDeviationOfTwoSpheres) {
  const double r_part = 0.100;        // 100 mm convex part
  const double r_reference = 0.1005;  // the radius it should have
  const double a = 0.010;             // 20 mm test diameter
  const double pitch = a / kAperture.radius;
  cv::Mat map(kSize, CV_64FC1);
  for (int y = 0; y < map.rows; ++y) {
    for (int x = 0; x < map.cols; ++x) {
      const double r = std::hypot(x - 200.0, y - 200.0) * pitch;
      map.at<double>(y, x) =
          r <= a ? SphereSag(r_part, r) - SphereSag(r_reference, r)
                 : std::numeric_limits<double>::quiet_NaN();
    }
  }
  const double edge = SphereSag(r_part, a) - SphereSag(r_reference, a);
  const FormMetrics m = Metrics(map);
  EXPECT_GT(m.power_m, 0.0);  // part more convex: gap opens to the edge
  EXPECT_NEAR(m.power_m, edge, 1e-3 * edge);
  const double k = std::pow(a, 4) / 8.0 *
                   (1.0 / std::pow(r_part, 3) - 1.0 / std::pow(r_reference, 3));
  EXPECT_NEAR(m.irregularity_m, k / 4.0, 0.03 * k / 4.0);
  EXPECT_NEAR(m.rsi_m, k / 4.0, 0.03 * k / 4.0);
  EXPECT_LT(m.rmsa_m, 1e-3 * m.rmsi_m);
  // 632.8 nm: the fringe count of the same pair, exact form (sphere.h).
  EXPECT_NEAR(MetresToFringes(m.power_m, 632.8e-9),
              FringesBetweenSpheres(r_part, r_reference, 2 * a, 632.8e-9),
              2e-3 * MetresToFringes(edge, 632.8e-9));
}

// PVr (Evans 2009): one spike pixel ruins PV but barely moves PVr; on a
// smooth map PVr equals PV.
TEST(FormMetrics, RobustPvIgnoresASpike) {
  cv::Mat map = SingleTerm(5, 20e-9) + SingleTerm(12, 5e-9);
  const FormMetrics clean = Metrics(map);
  EXPECT_NEAR(clean.pvr_m, clean.pv_m, 1e-6 * clean.pv_m);
  map.at<double>(150, 230) += 1e-6;
  const FormMetrics spiked = Metrics(map);
  EXPECT_GT(spiked.pv_m, 1e-6);
  EXPECT_NEAR(spiked.pvr_m, clean.pv_m, 0.15 * clean.pv_m);
}

// Noise: u(A) = 2 sqrt3 u(c4) covers the error over seeds (~95 % within
// 2 u on independent pixel noise) [practice].
TEST(FormMetrics, PowerUncertaintyFromTheFit) {
  int within = 0;
  constexpr int kSeeds = 25;
  const cv::Mat clean = SingleTerm(4, 30e-9);
  const double truth = 2.0 * std::sqrt(3.0) * 30e-9;
  for (int seed = 0; seed < kSeeds; ++seed) {
    cv::Mat noisy = clean.clone();
    cv::RNG rng(static_cast<std::uint64_t>(seed + 1));
    cv::Mat noise(kSize, CV_64FC1);
    rng.fill(noise, cv::RNG::NORMAL, 0.0, 20e-9);
    noisy += noise;
    const FormMetrics m = Metrics(noisy, 4);
    ASSERT_GT(m.power_u_m, 0.0);
    within += std::abs(m.power_m - truth) < 2.0 * m.power_u_m ? 1 : 0;
  }
  EXPECT_GE(within, 22);
}

// One fringe is lambda / 2, one wave lambda (ISO 10110-5).
TEST(FormMetrics, FringesAndWaves) {
  EXPECT_DOUBLE_EQ(MetresToFringes(316.4e-9, 632.8e-9), 1.0);
  EXPECT_DOUBLE_EQ(MetresToWaves(316.4e-9, 632.8e-9), 0.5);
  EXPECT_DOUBLE_EQ(MetresToFringes(-632.8e-9, 632.8e-9), -2.0);
}

}  // namespace
}  // namespace figura
