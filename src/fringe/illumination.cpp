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

// Masked Gaussian smoothing by normalised convolution.
cv::Mat SmoothMasked(const cv::Mat& values, const cv::Mat& weight, double sigma,
                     const cv::Mat& smoothed_weight) {
  cv::Mat product = values.mul(weight);
  cv::GaussianBlur(product, product, cv::Size(), sigma, sigma,
                   cv::BORDER_CONSTANT);
  cv::Mat out;
  cv::divide(product, cv::max(smoothed_weight, 1e-6), out);
  return out;
}

}  // namespace

FlattenedImage FlattenIllumination(const cv::Mat& image, const Circle& region,
                                   const IlluminationOptions& options) {
  assert(image.type() == CV_32FC1);
  const double factor =
      std::max(1.0, static_cast<double>(std::max(image.cols, image.rows)) /
                        options.working_size_px);
  cv::Mat small;
  if (factor > 1.0) {
    cv::resize(
        image, small,
        cv::Size(
            std::max(8, static_cast<int>(std::lround(image.cols / factor))),
            std::max(8, static_cast<int>(std::lround(image.rows / factor)))),
        0, 0, cv::INTER_AREA);
  } else {
    small = image;
  }
  const double sx = static_cast<double>(small.cols) / image.cols;
  const double sy = static_cast<double>(small.rows) / image.rows;
  Circle small_region;
  small_region.centre = cv::Point2d((region.centre.x + 0.5) * sx - 0.5,
                                    (region.centre.y + 0.5) * sy - 0.5);
  small_region.radius = region.radius * std::min(sx, sy);
  cv::Mat weight;
  CircleMask(small.size(), small_region).convertTo(weight, CV_32F, 1.0 / 255.0);
  const double sigma = std::max(1.0, options.smoothing_px * std::min(sx, sy));
  cv::Mat smoothed_weight;
  cv::GaussianBlur(weight, smoothed_weight, cv::Size(), sigma, sigma,
                   cv::BORDER_CONSTANT);
  const cv::Mat mean = SmoothMasked(small, weight, sigma, smoothed_weight);
  cv::Mat deviation = small - mean;
  cv::Mat squared = deviation.mul(deviation);
  cv::Mat variance = SmoothMasked(squared, weight, sigma, smoothed_weight);
  cv::Mat amplitude;
  cv::sqrt(cv::max(2.0 * variance, 0.0), amplitude);

  FlattenedImage out;
  if (factor > 1.0) {
    cv::resize(mean, out.mean, image.size(), 0, 0, cv::INTER_LINEAR);
    cv::resize(amplitude, out.amplitude, image.size(), 0, 0, cv::INTER_LINEAR);
  } else {
    out.mean = mean;
    out.amplitude = amplitude;
  }
  // Guard against division by a vanishing amplitude.
  double max_amplitude = 0.0;
  cv::minMaxLoc(out.amplitude, nullptr, &max_amplitude);
  const double floor = std::max(1e-12, 1e-6 * max_amplitude);
  cv::Mat denominator = cv::max(out.amplitude, floor);
  cv::divide(image - out.mean, denominator, out.normalised);
  out.normalised.setTo(0.0F, CircleMask(image.size(), region) == 0);
  return out;
}

}  // namespace figura
