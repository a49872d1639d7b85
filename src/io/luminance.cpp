#include "io/luminance.h"

#include <cassert>

namespace figura {

cv::Mat LuminanceFromBgr(const cv::Mat& image) {
  assert(!image.empty());
  cv::Mat as_float;
  image.convertTo(as_float, CV_MAKETYPE(CV_32F, image.channels()));
  cv::Mat grey;
  switch (image.channels()) {
    case 1:
      return as_float;
    case 2:
      cv::extractChannel(as_float, grey, 0);
      return grey;
    case 3: {
      const cv::Matx13f w(static_cast<float>(kRec601Blue),
                          static_cast<float>(kRec601Green),
                          static_cast<float>(kRec601Red));
      cv::transform(as_float, grey, w);
      return grey;
    }
    case 4: {
      const cv::Matx14f w(static_cast<float>(kRec601Blue),
                          static_cast<float>(kRec601Green),
                          static_cast<float>(kRec601Red), 0.0F);
      cv::transform(as_float, grey, w);
      return grey;
    }
    default:
      assert(false && "unsupported channel count");
      return grey;
  }
}

}  // namespace figura
