// The clear aperture of the part under test: the edge of the bright disc in
// the photograph, found as a sub-pixel circle.
#pragma once

#include <opencv2/core.hpp>
#include <string>

#include "fringe/circle.h"
#include "io/pixel_range.h"

namespace figura {

// Settings of aperture detection.
struct ApertureOptions {
  // Working resolution: the image is reduced (area averaging) so that its
  // larger side is at most this many pixels.
  int working_size_px = 640;
  // Number of rays along which the edge is located.
  int rays = 720;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// The outcome of aperture detection.
struct ApertureResult {
  bool ok = false;
  Circle circle;        // full-resolution pixels
  double rms_px = 0.0;  // RMS distance of the edge points from the circle
  int edge_points = 0;  // edge points kept by the robust fit
  std::string message;  // why detection failed, when !ok
};

// Finds the part's edge in a grey image (CV_32FC1): a morphological closing
// fills the dark fringes, an Otsu threshold of the closed image gives a
// coarse disc, and the edge is then located to sub-pixel precision as the
// steepest intensity step along rays (three-point parabola), with a robust
// geometric circle fit (FitCircleRobust). A disc clipped by the image border
// is handled: only edge points inside the image are used. Not ok when no
// edge with enough contrast is found (fringes fill the whole frame).
ApertureResult DetectAperture(const cv::Mat& image,
                              const ApertureOptions& options = {});

// The same with `reduced` = ReduceToWorkingSize(image,
// options.working_size_px) already at hand.
ApertureResult DetectAperture(const cv::Mat& image, const cv::Mat& reduced,
                              const ApertureOptions& options = {});

// `image` (CV_32FC1) reduced by area averaging (cv::INTER_AREA) so that its
// larger side is at most `working_size_px` (at least 16 px a side); the
// image itself (not a copy) when it is already that small. With `range`,
// also the range of the full image's pixels, from the same pass over them.
cv::Mat ReduceToWorkingSize(const cv::Mat& image, int working_size_px,
                            PixelRange* range = nullptr);

// Bilinear interpolation of a CV_32FC1 image at (x, y) (pixel centres at
// integers); NaN outside [0, cols-1] x [0, rows-1].
double SampleBilinear(const cv::Mat& image, double x, double y);

}  // namespace figura
