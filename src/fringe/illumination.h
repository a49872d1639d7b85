// Illumination flattening: removes the slowly varying brightness (lamp
// falloff, vignetting) and contrast of a fringe photograph, leaving fringes
// of unit amplitude about zero.
#pragma once

#include <opencv2/core.hpp>
#include <string>
#include <vector>

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

// The illumination envelopes of an image, and the flattened (normalised)
// image computed from them row by row on demand: no full-size copy is made
// unless asked for (Normalised()).
struct FlattenedImage {
  // Reduced maps (CV_32FC1): full-resolution pixel (x, y) corresponds to
  // reduced position ((x + 0.5) / scale - 0.5, (y + 0.5) / scale - 0.5).
  cv::Mat mean;  // local mean intensity m
  cv::Mat
      amplitude;   // local fringe amplitude a = sqrt(2 var) (cosine amplitude)
  cv::Mat weight;  // fraction of each reduced pixel inside the region
  cv::Mat inverse_amplitude;  // 1 / a, floored at 1e-6 of the largest a
  int scale = 1;  // reduction factor (full-resolution pixels per reduced pixel)
  cv::Size full_size;  // size of the full-resolution image
  // Bilinear taps from full-resolution columns (rows) into the reduced
  // maps: index of the left (upper) sample and the weight of the next one.
  std::vector<int> tap_x, tap_y;
  std::vector<float> frac_x, frac_y;

  // Writes the normalised values (I - m) / a (m and 1/a interpolated
  // bilinearly from the reduced maps) of columns [x0, x1] of full-resolution
  // row y into out[x0..x1]; `pixels` is that row of the image (CV_32FC1).
  // Thread-safe.
  void NormaliseRow(const float* pixels, int y, int x0, int x1,
                    float* out) const;
  // The whole normalised image (CV_32FC1), 0 outside `region`.
  [[nodiscard]] cv::Mat Normalised(const cv::Mat& image,
                                   const Circle& region) const;
};

// Normalises fringes inside `region`: I_n = (I - m) / a with m the local
// mean and a = sqrt(2 v) the local cosine amplitude, v the local variance,
// both from masked, normalised Gaussian smoothing (normalised convolution,
// Knutsson & Westin, CVPR 1993) of block sums over the region's pixels (of
// I for m; of (I - m)^2 for v, from the sums of I and I^2 and the block
// mean), so that pixels outside the region do not leak in and fringes finer
// than a block keep their power. One pass
// over the full image (block sums), parallel over rows; the normalised
// values come from FlattenedImage::NormaliseRow. [practice:
// (I - mean)/amplitude fringe normalisation]
FlattenedImage FlattenIllumination(const cv::Mat& image, const Circle& region,
                                   const IlluminationOptions& options);

// A CV_8UC1 mask (255 inside) of the pixels whose centres lie inside the
// circle.
cv::Mat CircleMask(cv::Size size, const Circle& circle);

}  // namespace figura
