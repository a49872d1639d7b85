#include "io/pixel_range.h"

#include <algorithm>
#include <cassert>
#include <mutex>
#include <opencv2/core/hal/intrin.hpp>
#include <opencv2/core/utility.hpp>

namespace figura {

void PixelRangeAccumulator::Add(const float* row, int count) {
  int x = 0;
#if CV_SIMD
  const int lanes = cv::v_float32::nlanes;
  cv::v_float32 l = cv::vx_setall_f32(lo_);
  cv::v_float32 h = cv::vx_setall_f32(hi_);
  cv::v_float32 c = cv::vx_setzero_f32();
  for (; x + lanes <= count; x += lanes) {
    const cv::v_float32 v = cv::vx_load(row + x);
    l = cv::v_min(l, v);
    h = cv::v_max(h, v);
    c = c + (v - v);
  }
  lo_ = cv::v_reduce_min(l);
  hi_ = cv::v_reduce_max(h);
  check_ = check_ + cv::v_reduce_sum(c);
#endif
  for (; x < count; ++x) {
    lo_ = std::min(lo_, row[x]);
    hi_ = std::max(hi_, row[x]);
    check_ = check_ + (row[x] - row[x]);
  }
}

void PixelRangeAccumulator::Merge(const PixelRangeAccumulator& other) {
  lo_ = std::min(lo_, other.lo_);
  hi_ = std::max(hi_, other.hi_);
  check_ = check_ + other.check_;
}

PixelRange PixelRangeAccumulator::Range() const {
  return PixelRange{lo_, hi_, check_ == 0.0F};
}

PixelRange RangeOfPixels(const cv::Mat& image) {
  assert(image.type() == CV_32FC1);
  std::mutex merge;
  PixelRangeAccumulator all;
  cv::parallel_for_(cv::Range(0, image.rows), [&](const cv::Range& rows) {
    PixelRangeAccumulator part;
    for (int y = rows.start; y < rows.end; ++y) {
      part.Add(image.ptr<float>(y), image.cols);
    }
    const std::lock_guard<std::mutex> lock(merge);
    all.Merge(part);
  });
  return all.Range();
}

}  // namespace figura
