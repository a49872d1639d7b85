#include "io/photo_check.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "core/error.h"
#include "io/pixel_range.h"

namespace figura {

std::string PhotoProblem(const Image& image) {
  const cv::Mat& p = image.pixels;
  if (p.cols < kMinPhotoSide || p.rows < kMinPhotoSide) {
    std::ostringstream s;
    s << "image too small to analyse (" << p.cols << " x " << p.rows
      << " pixels; at least " << kMinPhotoSide << " x " << kMinPhotoSide << ")";
    return s.str();
  }
  CV_Assert(p.type() == CV_32FC1);
  // One vectorised pass; only an image with non-finite pixels needs the
  // range of its finite ones.
  const PixelRange all = RangeOfPixels(p);
  float lo = all.lo;
  float hi = all.hi;
  if (!all.finite) {
    lo = std::numeric_limits<float>::infinity();
    hi = -lo;
    for (int y = 0; y < p.rows; ++y) {
      const auto* row = p.ptr<float>(y);
      for (int x = 0; x < p.cols; ++x) {
        if (!std::isfinite(row[x])) continue;
        lo = std::min(lo, row[x]);
        hi = std::max(hi, row[x]);
      }
    }
  }
  if (!(lo <= hi))
    return "no finite pixel values (every pixel is not-a-number or infinite)";
  if (lo != hi) return {};
  std::ostringstream s;
  if (!image.info.is_float && image.info.full_scale > 0.0 &&
      static_cast<double>(lo) >= image.info.full_scale) {
    s << "every pixel is saturated (at full scale " << image.info.full_scale
      << "): reduce the exposure";
  } else {
    s << "the image is uniform (every pixel " << lo << "): no fringes";
  }
  return s.str();
}

void CheckPhoto(const Image& image) {
  const std::string problem = PhotoProblem(image);
  if (!problem.empty()) throw InputError(image.info.path + ": " + problem);
}

}  // namespace figura
