// Illumination flattening: removes the slowly varying brightness (lamp
// falloff, vignetting) and contrast of a fringe photograph, leaving fringes
// of unit amplitude about zero.
#pragma once

#include <opencv2/core.hpp>
#include <string>

#include "fringe/circle.h"

namespace figura {

// Settings of FlattenIllumination.
struct IlluminationOptions {
  // Standard deviation (pixels) of the Gaussian that defines "slowly
  // varying"; must be several fringe spacings (a few tenths of the aperture
  // radius is typical).
  double smoothing_px = 50.0;
  // Working resolution: the envelopes are computed on an image reduced
  // (area averaging) so that its larger side is at most this many pixels,
  // or coarser (about 6 reduced pixels per smoothing sigma), then
  // interpolated back.
  int working_size_px = 640;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// Flattened image and the envelopes it came from.
struct FlattenedImage {
  cv::Mat normalised;  // CV_32FC1, full size: (I - m) / a; 0 outside the region
  // Reduced maps (CV_32FC1): full-resolution pixel (x, y) corresponds to
  // reduced position ((x + 0.5) / scale - 0.5, (y + 0.5) / scale - 0.5).
  cv::Mat mean;  // local mean intensity m
  cv::Mat
      amplitude;   // local fringe amplitude a = sqrt(2 var) (cosine amplitude)
  cv::Mat weight;  // fraction of each reduced pixel inside the region
  int scale = 1;  // reduction factor (full-resolution pixels per reduced pixel)
};

// Normalises fringes inside `region`: I_n = (I - m) / a with m the local
// mean and a = sqrt(2 v) the local cosine amplitude, v the local variance,
// both from masked, normalised Gaussian smoothing (normalised convolution,
// Knutsson & Westin, CVPR 1993) of block sums over the region's pixels, so
// that pixels outside the region do not leak in and fringes finer than a
// block keep their power. Three fused passes over the full image, parallel
// over rows. [practice: (I - mean)/amplitude fringe normalisation]
FlattenedImage FlattenIllumination(const cv::Mat& image, const Circle& region,
                                   const IlluminationOptions& options);

// A CV_8UC1 mask (255 inside) of the pixels whose centres lie inside the
// circle.
cv::Mat CircleMask(cv::Size size, const Circle& circle);

}  // namespace figura
