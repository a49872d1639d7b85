#include "fringe/illumination.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <vector>

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
  for (int y = 0; y < size.height; ++y) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(circle, y, size.width, x0, x1);
    if (x1 >= x0) mask.row(y).colRange(x0, x1 + 1).setTo(255);
  }
  return mask;
}

namespace {

// Normalised convolution: smooth(values) / smooth(weight), both already
// weighted.
cv::Mat SmoothMasked(const cv::Mat& weighted_values, double sigma,
                     const cv::Mat& smoothed_weight) {
  cv::Mat product;
  cv::GaussianBlur(weighted_values, product, cv::Size(), sigma, sigma,
                   cv::BORDER_CONSTANT);
  cv::Mat out;
  cv::divide(product, cv::max(smoothed_weight, 1e-6), out);
  return out;
}

// Bilinear lookup tables from full-resolution columns (or rows) into a
// reduced map: index of the left sample and the weight of the right one.
void Taps(int full, int reduced, int scale, std::vector<int>& index,
          std::vector<float>& frac) {
  index.resize(static_cast<std::size_t>(full));
  frac.resize(static_cast<std::size_t>(full));
  for (int i = 0; i < full; ++i) {
    double u = (i + 0.5) / scale - 0.5;
    u = std::clamp(u, 0.0, static_cast<double>(reduced - 1));
    int k = std::min(static_cast<int>(u), std::max(0, reduced - 2));
    index[static_cast<std::size_t>(i)] = k;
    frac[static_cast<std::size_t>(i)] =
        reduced > 1 ? static_cast<float>(u - k) : 0.0F;
  }
}

}  // namespace

FlattenedImage FlattenIllumination(const cv::Mat& image, const Circle& region,
                                   const IlluminationOptions& options) {
  assert(image.type() == CV_32FC1);
  // The envelopes are smooth on the scale smoothing_px: blocks that leave
  // about 6 reduced pixels per sigma lose nothing.
  const double by_sigma = options.smoothing_px / 6.0;
  const double by_size = static_cast<double>(std::max(image.cols, image.rows)) /
                         options.working_size_px;
  const int scale =
      std::max(1, static_cast<int>(std::floor(std::max(by_sigma, by_size))));
  const int cols = (image.cols + scale - 1) / scale;
  const int rows = (image.rows + scale - 1) / scale;
  const double block = static_cast<double>(scale) * scale;

  // Pass 1: block sums of I, I^2 and of the inside count. The fringe power
  // about the smooth mean m follows without a second pass: per block,
  // sum (I - m)^2 = (sum I^2 - (sum I)^2 / n) + n (sum I / n - m)^2 with m
  // taken constant over the block (it varies on the scale smoothing_px).
  cv::Mat sum_i = cv::Mat::zeros(rows, cols, CV_64FC1);
  cv::Mat sum_ii = cv::Mat::zeros(rows, cols, CV_64FC1);
  cv::Mat weight64 = cv::Mat::zeros(rows, cols, CV_64FC1);
  cv::parallel_for_(cv::Range(0, rows), [&](const cv::Range& range) {
    for (int by = range.start; by < range.end; ++by) {
      auto* acc = sum_i.ptr<double>(by);
      auto* acc2 = sum_ii.ptr<double>(by);
      auto* cnt = weight64.ptr<double>(by);
      for (int y = by * scale; y < std::min(image.rows, (by + 1) * scale);
           ++y) {
        int x0 = 0;
        int x1 = -1;
        RowSpan(region, y, image.cols, x0, x1);
        if (x1 < x0) continue;
        const float* row = image.ptr<float>(y);
        // Block by block over one block row segment (no division per
        // pixel).
        for (int bx = x0 / scale; bx <= x1 / scale; ++bx) {
          const int xa = std::max(x0, bx * scale);
          const int xb = std::min(x1, (bx + 1) * scale - 1);
          double part = 0.0;
          double part2 = 0.0;
          for (int x = xa; x <= xb; ++x) {
            const auto v = static_cast<double>(row[x]);
            part += v;
            part2 += v * v;
          }
          acc[bx] += part;
          acc2[bx] += part2;
          cnt[bx] += static_cast<double>(xb - xa + 1);
        }
      }
    }
  });
  const double sigma = std::max(1.0, options.smoothing_px / scale);
  cv::Mat smoothed_weight;
  cv::GaussianBlur(weight64 * (1.0 / block), smoothed_weight, cv::Size(), sigma,
                   sigma, cv::BORDER_CONSTANT);
  FlattenedImage out;
  out.scale = scale;
  cv::Mat(weight64 * (1.0 / block)).convertTo(out.weight, CV_32F);
  const cv::Mat mean =
      SmoothMasked(sum_i * (1.0 / block), sigma, smoothed_weight);
  mean.convertTo(out.mean, CV_32F);
  // Per block: the sum of (I - m)^2 over its inside pixels, per block area.
  cv::Mat power = cv::Mat::zeros(rows, cols, CV_64FC1);
  for (int by = 0; by < rows; ++by) {
    const auto* s1 = sum_i.ptr<double>(by);
    const auto* s2 = sum_ii.ptr<double>(by);
    const auto* n = weight64.ptr<double>(by);
    const auto* m = mean.ptr<double>(by);
    auto* p = power.ptr<double>(by);
    for (int bx = 0; bx < cols; ++bx) {
      if (!(n[bx] > 0.0)) continue;
      const double block_mean = s1[bx] / n[bx];
      const double within = std::max(0.0, s2[bx] - s1[bx] * block_mean);
      const double offset = block_mean - m[bx];
      p[bx] = (within + n[bx] * offset * offset) / block;
    }
  }
  const cv::Mat variance = SmoothMasked(power, sigma, smoothed_weight);
  cv::Mat amplitude;
  cv::sqrt(cv::max(2.0 * variance, 0.0), amplitude);
  amplitude.convertTo(out.amplitude, CV_32F);

  // 1 / a, with a floor against division by zero where there are no
  // fringes (interpolated like m; a varies slowly, so this equals the
  // reciprocal of the interpolated a to second order).
  double max_amplitude = 0.0;
  cv::minMaxLoc(out.amplitude, nullptr, &max_amplitude);
  cv::divide(1.0, cv::max(out.amplitude, std::max(1e-12, 1e-6 * max_amplitude)),
             out.inverse_amplitude, CV_32F);
  out.full_size = image.size();
  Taps(image.cols, cols, scale, out.tap_x, out.frac_x);
  Taps(image.rows, rows, scale, out.tap_y, out.frac_y);
  return out;
}

void FlattenedImage::NormaliseRow(const float* pixels, int y, int x0, int x1,
                                  float* out) const {
  assert(y >= 0 && y < full_size.height && x0 >= 0 && x1 < full_size.width);
  if (x1 < x0) return;
  const auto yi = static_cast<std::size_t>(y);
  const int ky = tap_y[yi];
  const float fy = frac_y[yi];
  const int ky1 = std::min(ky + 1, mean.rows - 1);
  // The two reduced maps between their rows ky and ky + 1, then linearly
  // along x inside the loop.
  const int n = mean.cols;
  std::vector<float> m(static_cast<std::size_t>(n) + 1);
  std::vector<float> g(static_cast<std::size_t>(n) + 1);
  const float* m0 = mean.ptr<float>(ky);
  const float* m1 = mean.ptr<float>(ky1);
  const float* g0 = inverse_amplitude.ptr<float>(ky);
  const float* g1 = inverse_amplitude.ptr<float>(ky1);
  for (int k = 0; k < n; ++k) {
    const auto ki = static_cast<std::size_t>(k);
    m[ki] = m0[k] + fy * (m1[k] - m0[k]);
    g[ki] = g0[k] + fy * (g1[k] - g0[k]);
  }
  m[static_cast<std::size_t>(n)] = m[static_cast<std::size_t>(n) - 1];
  g[static_cast<std::size_t>(n)] = g[static_cast<std::size_t>(n) - 1];
  for (int x = x0; x <= x1; ++x) {
    const auto xi = static_cast<std::size_t>(x);
    const auto k = static_cast<std::size_t>(tap_x[xi]);
    const float f = frac_x[xi];
    const float mean_x = m[k] + f * (m[k + 1] - m[k]);
    const float inverse_x = g[k] + f * (g[k + 1] - g[k]);
    out[x] = (pixels[x] - mean_x) * inverse_x;
  }
}

cv::Mat FlattenedImage::Normalised(const cv::Mat& image,
                                   const Circle& region) const {
  assert(image.type() == CV_32FC1 && image.size() == full_size);
  cv::Mat out = cv::Mat::zeros(image.size(), CV_32FC1);
  cv::parallel_for_(cv::Range(0, image.rows), [&](const cv::Range& range) {
    for (int y = range.start; y < range.end; ++y) {
      int x0 = 0;
      int x1 = -1;
      RowSpan(region, y, image.cols, x0, x1);
      NormaliseRow(image.ptr<float>(y), y, x0, x1, out.ptr<float>(y));
    }
  });
  return out;
}

}  // namespace figura
