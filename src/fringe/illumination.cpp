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

// One full-resolution row y of a reduced map, interpolated bilinearly:
// first between the two reduced rows (weight fy), then along x, into `out`
// (image.cols values; only [x0, x1] are needed by the callers).
void InterpolateRow(const cv::Mat& map, int ky, float fy,
                    const std::vector<int>& kx, const std::vector<float>& fx,
                    int x0, int x1, std::vector<float>& between,
                    std::vector<float>& out) {
  const int ky1 = std::min(ky + 1, map.rows - 1);
  const float* r0 = map.ptr<float>(ky);
  const float* r1 = map.ptr<float>(ky1);
  between.resize(static_cast<std::size_t>(map.cols) + 1);
  for (int k = 0; k < map.cols; ++k) {
    between[static_cast<std::size_t>(k)] = r0[k] + fy * (r1[k] - r0[k]);
  }
  between[static_cast<std::size_t>(map.cols)] =
      between[static_cast<std::size_t>(map.cols) - 1];
  for (int x = x0; x <= x1; ++x) {
    const auto xi = static_cast<std::size_t>(x);
    const auto k = static_cast<std::size_t>(kx[xi]);
    out[xi] = between[k] + fx[xi] * (between[k + 1] - between[k]);
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

  // Pass 1: block sums of I and of the inside count.
  cv::Mat sum_i = cv::Mat::zeros(rows, cols, CV_32FC1);
  cv::Mat weight = cv::Mat::zeros(rows, cols, CV_32FC1);
  cv::parallel_for_(cv::Range(0, rows), [&](const cv::Range& range) {
    std::vector<double> acc(static_cast<std::size_t>(cols));
    std::vector<double> cnt(static_cast<std::size_t>(cols));
    for (int by = range.start; by < range.end; ++by) {
      std::fill(acc.begin(), acc.end(), 0.0);
      std::fill(cnt.begin(), cnt.end(), 0.0);
      for (int y = by * scale; y < std::min(image.rows, (by + 1) * scale);
           ++y) {
        int x0 = 0;
        int x1 = -1;
        RowSpan(region, y, image.cols, x0, x1);
        if (x1 < x0) continue;
        const float* row = image.ptr<float>(y);
        // Block by block (no division per pixel).
        for (int bx = x0 / scale; bx <= x1 / scale; ++bx) {
          const int xa = std::max(x0, bx * scale);
          const int xb = std::min(x1, (bx + 1) * scale - 1);
          double part = 0.0;
          for (int x = xa; x <= xb; ++x) part += static_cast<double>(row[x]);
          acc[static_cast<std::size_t>(bx)] += part;
          cnt[static_cast<std::size_t>(bx)] += static_cast<double>(xb - xa + 1);
        }
      }
      float* s = sum_i.ptr<float>(by);
      float* w = weight.ptr<float>(by);
      for (int bx = 0; bx < cols; ++bx) {
        s[bx] = static_cast<float>(acc[static_cast<std::size_t>(bx)] / block);
        w[bx] = static_cast<float>(cnt[static_cast<std::size_t>(bx)] / block);
      }
    }
  });
  const double sigma = std::max(1.0, options.smoothing_px / scale);
  cv::Mat smoothed_weight;
  cv::GaussianBlur(weight, smoothed_weight, cv::Size(), sigma, sigma,
                   cv::BORDER_CONSTANT);
  FlattenedImage out;
  out.scale = scale;
  out.weight = weight;
  out.mean = SmoothMasked(sum_i, sigma, smoothed_weight);

  std::vector<int> kx;
  std::vector<float> fx;
  std::vector<int> ky;
  std::vector<float> fy;
  Taps(image.cols, cols, scale, kx, fx);
  Taps(image.rows, rows, scale, ky, fy);

  // Pass 2: block sums of (I - m)^2 inside.
  cv::Mat power = cv::Mat::zeros(rows, cols, CV_32FC1);
  cv::parallel_for_(cv::Range(0, rows), [&](const cv::Range& range) {
    std::vector<double> acc(static_cast<std::size_t>(cols));
    std::vector<float> between;
    std::vector<float> mean_row(static_cast<std::size_t>(image.cols));
    for (int by = range.start; by < range.end; ++by) {
      std::fill(acc.begin(), acc.end(), 0.0);
      for (int y = by * scale; y < std::min(image.rows, (by + 1) * scale);
           ++y) {
        int x0 = 0;
        int x1 = -1;
        RowSpan(region, y, image.cols, x0, x1);
        if (x1 < x0) continue;
        const float* row = image.ptr<float>(y);
        const auto yi = static_cast<std::size_t>(y);
        InterpolateRow(out.mean, ky[yi], fy[yi], kx, fx, x0, x1, between,
                       mean_row);
        // Block by block: a float partial sum per block row segment.
        for (int bx = x0 / scale; bx <= x1 / scale; ++bx) {
          const int xa = std::max(x0, bx * scale);
          const int xb = std::min(x1, (bx + 1) * scale - 1);
          double part = 0.0;
          for (int x = xa; x <= xb; ++x) {
            const double d = static_cast<double>(
                row[x] - mean_row[static_cast<std::size_t>(x)]);
            part += d * d;
          }
          acc[static_cast<std::size_t>(bx)] += part;
        }
      }
      float* p = power.ptr<float>(by);
      for (int bx = 0; bx < cols; ++bx) {
        p[bx] = static_cast<float>(acc[static_cast<std::size_t>(bx)] / block);
      }
    }
  });
  const cv::Mat variance = SmoothMasked(power, sigma, smoothed_weight);
  cv::sqrt(cv::max(2.0 * variance, 0.0), out.amplitude);
  double max_amplitude = 0.0;
  cv::minMaxLoc(out.amplitude, nullptr, &max_amplitude);
  const float floor = static_cast<float>(std::max(1e-12, 1e-6 * max_amplitude));

  // Pass 3: the normalised image.
  // Allocated without clearing: every row is written below (zero outside
  // the region), which saves a full pass over the image.
  out.normalised.create(image.size(), CV_32FC1);
  cv::parallel_for_(cv::Range(0, image.rows), [&](const cv::Range& range) {
    std::vector<float> between;
    std::vector<float> mean_row(static_cast<std::size_t>(image.cols));
    std::vector<float> amplitude_row(static_cast<std::size_t>(image.cols));
    for (int y = range.start; y < range.end; ++y) {
      int x0 = 0;
      int x1 = -1;
      RowSpan(region, y, image.cols, x0, x1);
      float* dst = out.normalised.ptr<float>(y);
      if (x1 < x0) {
        std::fill(dst, dst + image.cols, 0.0F);
        continue;
      }
      std::fill(dst, dst + x0, 0.0F);
      std::fill(dst + x1 + 1, dst + image.cols, 0.0F);
      const float* row = image.ptr<float>(y);
      const auto yi = static_cast<std::size_t>(y);
      InterpolateRow(out.mean, ky[yi], fy[yi], kx, fx, x0, x1, between,
                     mean_row);
      InterpolateRow(out.amplitude, ky[yi], fy[yi], kx, fx, x0, x1, between,
                     amplitude_row);
      for (int x = x0; x <= x1; ++x) {
        const auto xi = static_cast<std::size_t>(x);
        dst[x] = (row[x] - mean_row[xi]) / std::max(amplitude_row[xi], floor);
      }
    }
  });
  return out;
}

}  // namespace figura
