// The range of an image's pixel values and whether all are finite, in one
// vectorised pass (used by the photo check and the ring detection).
#pragma once

#include <limits>
#include <opencv2/core.hpp>

namespace figura {

// Smallest and largest pixel value of an image (in its own units), and
// whether every pixel is finite (lo and hi are meaningless otherwise).
struct PixelRange {
  float lo = 0.0F;
  float hi = 0.0F;
  bool finite = true;
};

// Running range over rows of float pixels: Add rows (any order, any
// thread-local part), Merge parts, then Range().
class PixelRangeAccumulator {
 public:
  // Takes `count` pixels starting at `row` (OpenCV universal intrinsics:
  // lane-wise min/max, and x - x summed, which is NaN for NaN and for
  // infinities and 0 otherwise).
  void Add(const float* row, int count);
  // Takes the pixels another accumulator has seen.
  void Merge(const PixelRangeAccumulator& other);
  // The range of all pixels seen (finite and lo > hi when none was seen).
  [[nodiscard]] PixelRange Range() const;

 private:
  float lo_ = std::numeric_limits<float>::infinity();
  float hi_ = -std::numeric_limits<float>::infinity();
  float check_ = 0.0F;
};

// The range of a CV_32FC1 image, in parallel over its rows.
PixelRange RangeOfPixels(const cv::Mat& image);

}  // namespace figura
