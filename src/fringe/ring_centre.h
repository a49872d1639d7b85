// The centre of a pattern of concentric (or nearly concentric) fringes:
// a robust first estimate from intensity gradients, refinement by the
// sharpness of the profile in r^2, and a concentric-circle fit to located
// fringe points.
#pragma once

#include <opencv2/core.hpp>
#include <span>

#include "fringe/circle.h"
#include "fringe/radial_profile.h"

namespace figura {

// First estimate of the ring centre.
struct GradientCentre {
  bool ok = false;
  cv::Point2d centre;      // pixels of the image passed in
  double spread_px = 0.0;  // robust scale of line-to-centre distances (inliers)
  double conditioning =
      0.0;        // smaller / larger eigenvalue of the normal matrix
  int lines = 0;  // gradient lines kept
  // Fraction of the total gradient weight carried by lines passing within
  // 2 px of the centre: near 0 for noise, large for rings.
  double inlier_fraction = 0.0;
};

// Least-squares meeting point of the intensity-gradient lines: for pixels
// inside `region` with gradient g at p, the centre c minimises
//   sum w (n . (c - p))^2,  n = unit normal to g,  w = |g|^2,
// re-weighted with Tukey's biweight on the distances (iteratively re-
// weighted least squares) to reject lines that do not point at the centre.
// The image should be flattened and lightly smoothed. Not ok when the lines
// are (nearly) parallel (straight fringes: conditioning < 1e-4).
// [practice: gradient-line (radial symmetry) centre estimation, cf. R.
// Parthasarathy, Nature Methods 9, 724 (2012)]
GradientCentre EstimateCentreFromGradients(const cv::Mat& image,
                                           const Circle& region);

// Pixels of an image sampled for centre refinement (structure of arrays).
struct PixelSamples {
  std::vector<float> x, y, value;
};

// Takes every `stride`-th pixel (in x and y) of `image` (CV_32FC1) inside
// `region`.
PixelSamples SamplePixels(const cv::Mat& image, const Circle& region,
                          int stride);

// The same for an image of size `size` whose rows come from `values`.
PixelSamples SamplePixels(const RowValues& values, cv::Size size,
                          const Circle& region, int stride);

// Sharpness of the azimuthal-mean profile about `centre`: samples are binned
// linearly into r^2 bins of width period / 16, the one-period moving average
// (which removes the fringe fundamental exactly) is subtracted, and the
// count-weighted mean square of what remains is returned. Maximal when the
// centre is right: a wrong centre smears each fringe over a range of r^2.
double ProfileSharpness(const PixelSamples& samples, cv::Point2d centre,
                        double period_r2_px2);

// Result of RefineCentreBySharpness.
struct CentreRefinement {
  bool ok = false;
  cv::Point2d centre;
  double sharpness = 0.0;
  int evaluations = 0;
};

// Maximises ProfileSharpness over the centre: a 3 x 3 grid of step h about
// the current centre, a least-squares quadratic surface through it, a move
// to its vertex (limited to 2 h), and h halved (quartered when the vertex
// lies within h / 4 of the grid centre), from start_step_px down to
// stop_step_px. [practice: coarse-to-fine quadratic-model search]
CentreRefinement RefineCentreBySharpness(const PixelSamples& samples,
                                         cv::Point2d start,
                                         double period_r2_px2,
                                         double start_step_px,
                                         double stop_step_px);

// A point on a fringe of known number, for FitConcentricCircles.
struct NumberedPoint {
  double x_px = 0.0;
  double y_px = 0.0;
  double sigma_px = 1.0;  // standard uncertainty of its radial position
  int index = 0;          // fringe number; equal numbers lie on one circle
};

// Result of FitConcentricCircles.
struct ConcentricFit {
  bool ok = false;
  cv::Point2d centre;
  double centre_sigma_px = 0.0;  // standard uncertainty of each coordinate
  double rms_px = 0.0;           // RMS radial residual
  int circles = 0;
};

// Fits circles with one common centre and one radius per fringe number:
// Gauss-Newton on the radial residuals |p - c| - rho_index, weighted by
// 1/sigma^2, with the centre covariance scaled by the reduced chi-square
// (Kasa-type concentric fit refined geometrically; cf. Chernov, Circular
// and Linear Regression, ch. 4).
ConcentricFit FitConcentricCircles(std::span<const NumberedPoint> points,
                                   cv::Point2d start);

}  // namespace figura
