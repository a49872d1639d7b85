#include "io/luminance.h"

#include <cassert>
#include <cstdint>

namespace figura {
namespace {

// Luma of one row of `channels`-interleaved BGR(A) samples.
template <typename T>
void LumaRow(const T* in, int cols, int channels, float* out) {
  for (int x = 0; x < cols; ++x) {
    const T* p = in + static_cast<std::ptrdiff_t>(x) * channels;
    out[x] = static_cast<float>(kRec601Blue * static_cast<double>(p[0]) +
                                kRec601Green * static_cast<double>(p[1]) +
                                kRec601Red * static_cast<double>(p[2]));
  }
}

template <typename T>
void Luma(const cv::Mat& image, cv::Mat* grey) {
  for (int y = 0; y < image.rows; ++y) {
    LumaRow(image.ptr<T>(y), image.cols, image.channels(), grey->ptr<float>(y));
  }
}

}  // namespace

cv::Mat LuminanceFromBgr(const cv::Mat& image) {
  assert(!image.empty());
  cv::Mat grey;
  const int channels = image.channels();
  if (channels == 1 || channels == 2) {
    cv::Mat first = image;
    if (channels == 2) cv::extractChannel(image, first, 0);
    first.convertTo(grey, CV_32F);
    return grey;
  }
  assert(channels == 3 || channels == 4);
  grey.create(image.rows, image.cols, CV_32FC1);
  switch (image.depth()) {
    case CV_8U:
      Luma<std::uint8_t>(image, &grey);
      break;
    case CV_16U:
      Luma<std::uint16_t>(image, &grey);
      break;
    case CV_32F:
      Luma<float>(image, &grey);
      break;
    default:
      assert(false && "unsupported depth");
  }
  return grey;
}

}  // namespace figura
