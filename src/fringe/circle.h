// A circle in pixel coordinates and robust circle fits to edge points. Used
// for the clear aperture and for individual traced fringes.
#pragma once

#include <opencv2/core.hpp>
#include <span>
#include <vector>

namespace figura {

// A circle in image pixels (x right, y down, pixel centres at integers).
struct Circle {
  cv::Point2d centre;
  double radius = 0.0;
};

// Column range [x0, x1] of image row y inside circle c, clipped to
// [0, cols - 1]; x1 < x0 when the row misses the circle. Pixel centres at
// integer coordinates.
void RowSpan(const Circle& c, int y, int cols, int& x0, int& x1);

// Result of a circle fit.
struct CircleFit {
  bool ok = false;
  Circle circle;
  double rms_px = 0.0;  // RMS geometric residual of the inliers
  int inliers = 0;      // points kept after outlier rejection
  double centre_sigma_px =
      0.0;  // standard uncertainty of each centre coordinate
};

// Algebraic (Kasa) circle fit: least squares of x^2 + y^2 + D x + E y + F = 0
// (I. Kasa, IEEE Trans. Instrum. Meas. 25, 8, 1976). Not ok for fewer than 3
// points, collinear or coincident points, or a non-finite coordinate.
CircleFit FitCircleAlgebraic(std::span<const cv::Point2d> points);

// Geometric circle fit: Gauss-Newton on the distances |p - c| - r, started
// from the algebraic fit, with iterative rejection of points farther than
// `reject_sigmas` robust standard deviations (1.4826 MAD) from the circle
// [practice: robust geometric circle fitting, e.g. Chernov, Circular and
// Linear Regression, ch. 4].
CircleFit FitCircleRobust(std::span<const cv::Point2d> points,
                          double reject_sigmas = 3.0);

}  // namespace figura
