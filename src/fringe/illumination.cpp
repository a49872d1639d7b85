#include "fringe/illumination.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <opencv2/imgproc.hpp>

namespace figura {

std::string IlluminationOptions::Check() const {
  if (!(smoothing_px > 0.0) || !std::isfinite(smoothing_px)) {
    return "illumination smoothing must be a positive number of pixels";
  }
  if (working_size_px < 32)
    return "illumination working size must be at least 32 pixels";
  return {};
}

cv::Mat CircleMask(cv::Size size, const Circle& circle) {
  cv::Mat mask = cv::Mat::zeros(size, CV_8UC1);
  const double r2 = circle.radius * circle.radius;
  for (int y = 0; y < size.height; ++y) {
    const double dy = y - circle.centre.y;
    const double rest = r2 - dy * dy;
    if (rest < 0.0) continue;
    const double half = std::sqrt(rest);
    const int x0 =
        std::max(0, static_cast<int>(std::ceil(circle.centre.x - half)));
    const int x1 = std::min(
        size.width - 1, static_cast<int>(std::floor(circle.centre.x + half)));
    if (x1 >= x0) mask.row(y).colRange(x0, x1 + 1).setTo(255);
  }
  return mask;
}

namespace {

// Masked Gaussian smoothing by normalised convolution of values that are
// already multiplied by their weight.
cv::Mat SmoothMasked(const cv::Mat& weighted_values, double sigma,
                     const cv::Mat& smoothed_weight) {
  cv::Mat product;
  cv::GaussianBlur(weighted_values, product, cv::Size(), sigma, sigma,
                   cv::BORDER_CONSTANT);
  cv::Mat out;
  cv::divide(product, cv::max(smoothed_weight, 1e-6), out);
  return out;
}

}  // namespace

FlattenedImage FlattenIllumination(const cv::Mat& image, const Circle& region,
                                   const IlluminationOptions& options) {
  assert(image.type() == CV_32FC1);
  // The envelopes are smooth on the scale smoothing_px: a reduction that
  // leaves about 6 reduced pixels per sigma loses nothing.
  const double by_sigma = options.smoothing_px / 6.0;
  const double by_size = static_cast<double>(std::max(image.cols, image.rows)) /
                         options.working_size_px;
  const double factor = std::max(1.0, std::max(by_sigma, by_size));
  const cv::Size small_size(
      std::max(8, static_cast<int>(std::lround(image.cols / factor))),
      std::max(8, static_cast<int>(std::lround(image.rows / factor))));
  const bool reduce = small_size != image.size();
  const auto shrink = [&](const cv::Mat& full) {
    if (!reduce) return full;
    cv::Mat out;
    cv::resize(full, out, small_size, 0, 0, cv::INTER_AREA);
    return out;
  };
  const auto grow = [&](const cv::Mat& small) {
    if (!reduce) return small;
    cv::Mat out;
    cv::resize(small, out, image.size(), 0, 0, cv::INTER_LINEAR);
    return out;
  };
  const cv::Mat full_mask = CircleMask(image.size(), region);
  cv::Mat full_weight;
  full_mask.convertTo(full_weight, CV_32F, 1.0 / 255.0);
  // Area-averaged weights: fractional at the region's edge.
  const cv::Mat weight = shrink(full_weight);
  const double sigma =
      std::max(1.0, options.smoothing_px *
                        static_cast<double>(small_size.width) / image.cols);
  cv::Mat smoothed_weight;
  cv::GaussianBlur(weight, smoothed_weight, cv::Size(), sigma, sigma,
                   cv::BORDER_CONSTANT);
  // Area averaging of I w and of (I - m)^2 w keeps the mean and the fringe
  // power even where fringes are finer than a reduced pixel.
  FlattenedImage out;
  out.mean = grow(
      SmoothMasked(shrink(image.mul(full_weight)), sigma, smoothed_weight));
  cv::Mat deviation = image - out.mean;
  cv::Mat power = deviation.mul(deviation).mul(full_weight);
  const cv::Mat variance = SmoothMasked(shrink(power), sigma, smoothed_weight);
  cv::Mat amplitude;
  cv::sqrt(cv::max(2.0 * variance, 0.0), amplitude);
  out.amplitude = grow(amplitude);
  // Guard against division by a vanishing amplitude.
  double max_amplitude = 0.0;
  cv::minMaxLoc(out.amplitude, nullptr, &max_amplitude);
  const double floor = std::max(1e-12, 1e-6 * max_amplitude);
  cv::divide(deviation, cv::max(out.amplitude, floor), out.normalised);
  out.normalised.setTo(0.0F, full_mask == 0);
  return out;
}

}  // namespace figura
