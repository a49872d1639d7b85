#include "fringe/aperture.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <mutex>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <vector>

#include "fringe/disc_closing.h"
#include "fringe/extremum.h"
#include "io/pixel_range.h"

namespace figura {

std::string ApertureOptions::Check() const {
  if (working_size_px < 64)
    return "aperture working size must be at least 64 pixels";
  if (rays < 16) return "aperture detection needs at least 16 rays";
  return {};
}

double SampleBilinear(const cv::Mat& image, double x, double y) {
  assert(image.type() == CV_32FC1);
  if (!(x >= 0.0 && y >= 0.0 && x <= image.cols - 1 && y <= image.rows - 1)) {
    return std::numeric_limits<double>::quiet_NaN();
  }
  const int x0 =
      std::min(static_cast<int>(x), image.cols - 2 < 0 ? 0 : image.cols - 2);
  const int y0 =
      std::min(static_cast<int>(y), image.rows - 2 < 0 ? 0 : image.rows - 2);
  const int x1 = std::min(x0 + 1, image.cols - 1);
  const int y1 = std::min(y0 + 1, image.rows - 1);
  const double fx = x - x0;
  const double fy = y - y0;
  const float* row0 = image.ptr<float>(y0);
  const float* row1 = image.ptr<float>(y1);
  const auto a = static_cast<double>(row0[x0]);
  const auto b = static_cast<double>(row0[x1]);
  const auto c = static_cast<double>(row1[x0]);
  const auto d = static_cast<double>(row1[x1]);
  const double top = a + fx * (b - a);
  const double bottom = c + fx * (d - c);
  return top + fy * (bottom - top);
}

ApertureResult DetectAperture(const cv::Mat& image,
                              const ApertureOptions& options) {
  assert(image.type() == CV_32FC1);
  ApertureResult result;
  if (image.cols < 16 || image.rows < 16) {
    result.message = "image too small for aperture detection";
    return result;
  }
  return DetectAperture(
      image, ReduceToWorkingSize(image, options.working_size_px), options);
}

namespace {

// Area-averaging taps from `full` samples onto `reduced` cells of
// `full / reduced` samples each: cell k covers [k f, (k + 1) f) and takes
// each sample with its overlap (in samples). Cell k uses the taps
// [first[k], first[k + 1]).
struct AreaTaps {
  std::vector<int> first;     // per cell, then one past the last tap
  std::vector<int> source;    // sample index of each tap
  std::vector<float> weight;  // overlap of each tap, in samples
};

AreaTaps MakeAreaTaps(int full, int reduced) {
  AreaTaps taps;
  const double f = static_cast<double>(full) / reduced;
  taps.first.reserve(static_cast<std::size_t>(reduced) + 1);
  for (int k = 0; k < reduced; ++k) {
    taps.first.push_back(static_cast<int>(taps.source.size()));
    const double lo = k * f;
    const double hi = std::min<double>(full, (k + 1) * f);
    for (int i = static_cast<int>(std::floor(lo));
         i < full && static_cast<double>(i) < hi; ++i) {
      const double overlap =
          std::min<double>(i + 1, hi) - std::max<double>(i, lo);
      if (overlap <= 1e-12) continue;
      taps.source.push_back(i);
      taps.weight.push_back(static_cast<float>(overlap));
    }
  }
  taps.first.push_back(static_cast<int>(taps.source.size()));
  return taps;
}

}  // namespace

cv::Mat ReduceToWorkingSize(const cv::Mat& image, int working_size_px,
                            PixelRange* range) {
  assert(image.type() == CV_32FC1 && working_size_px >= 16);
  // The range: per stripe of rows, merged at the end.
  std::mutex merge;
  PixelRangeAccumulator all;
  const auto merge_range = [&](const PixelRangeAccumulator& part) {
    if (range == nullptr) return;
    const std::lock_guard<std::mutex> lock(merge);
    all.Merge(part);
  };
  const double factor =
      std::max(1.0, static_cast<double>(std::max(image.cols, image.rows)) /
                        working_size_px);
  if (!(factor > 1.0)) {
    if (range != nullptr) *range = RangeOfPixels(image);
    return image;
  }
  const int cols =
      std::max(16, static_cast<int>(std::lround(image.cols / factor)));
  const int rows =
      std::max(16, static_cast<int>(std::lround(image.rows / factor)));
  // Area averaging as cv::INTER_AREA defines it (each reduced pixel the
  // overlap-weighted mean of the full pixels under it), done separably: the
  // rows under one reduced row summed with their vertical overlaps, then
  // the columns with their horizontal overlaps.
  const AreaTaps x_taps = MakeAreaTaps(image.cols, cols);
  const AreaTaps y_taps = MakeAreaTaps(image.rows, rows);
  const float scale =
      static_cast<float>(static_cast<double>(cols) * rows /
                         (static_cast<double>(image.cols) * image.rows));
  cv::Mat small(rows, cols, CV_32FC1);
  cv::parallel_for_(cv::Range(0, rows), [&](const cv::Range& cells) {
    std::vector<float> sum(static_cast<std::size_t>(image.cols));
    PixelRangeAccumulator part;
    for (int j = cells.start; j < cells.end; ++j) {
      std::fill(sum.begin(), sum.end(), 0.0F);
      for (int t = y_taps.first[static_cast<std::size_t>(j)];
           t < y_taps.first[static_cast<std::size_t>(j) + 1]; ++t) {
        const auto ti = static_cast<std::size_t>(t);
        const float w = y_taps.weight[ti];
        const float* row = image.ptr<float>(y_taps.source[ti]);
        for (int x = 0; x < image.cols; ++x) {
          sum[static_cast<std::size_t>(x)] += w * row[x];
        }
        if (range != nullptr) part.Add(row, image.cols);
      }
      auto* out = small.ptr<float>(j);
      for (int i = 0; i < cols; ++i) {
        float v = 0.0F;
        for (int t = x_taps.first[static_cast<std::size_t>(i)];
             t < x_taps.first[static_cast<std::size_t>(i) + 1]; ++t) {
          const auto ti = static_cast<std::size_t>(t);
          v += x_taps.weight[ti] *
               sum[static_cast<std::size_t>(x_taps.source[ti])];
        }
        out[i] = v * scale;
      }
    }
    merge_range(part);
  });
  if (range != nullptr) *range = all.Range();
  return small;
}

ApertureResult DetectAperture(const cv::Mat& image, const cv::Mat& reduced,
                              const ApertureOptions& options) {
  assert(image.type() == CV_32FC1 && reduced.type() == CV_32FC1);
  ApertureResult result;
  if (image.cols < 16 || image.rows < 16) {
    result.message = "image too small for aperture detection";
    return result;
  }
  // Working resolution (a copy: modified below).
  cv::Mat small = reduced.clone();
  const double sx = static_cast<double>(image.cols) / small.cols;
  const double sy = static_cast<double>(image.rows) / small.rows;

  // Polarity: the part is taken to differ from the frame border; make it the
  // bright side.
  double border_sum = 0.0;
  int border_count = 0;
  for (int x = 0; x < small.cols; ++x) {
    border_sum += static_cast<double>(small.at<float>(0, x));
    border_sum += static_cast<double>(small.at<float>(small.rows - 1, x));
    border_count += 2;
  }
  for (int y = 0; y < small.rows; ++y) {
    border_sum += static_cast<double>(small.at<float>(y, 0));
    border_sum += static_cast<double>(small.at<float>(y, small.cols - 1));
    border_count += 2;
  }
  const double border_mean = border_sum / border_count;
  const double overall_mean = cv::mean(small)[0];
  if (border_mean > overall_mean) small = -small;

  cv::GaussianBlur(small, small, cv::Size(), 1.0);
  const int k = std::max(
      3,
      static_cast<int>(std::lround(0.02 * std::max(small.cols, small.rows))));
  const cv::Mat closed = CloseWithDisc(small, k);

  double lo = 0.0;
  double hi = 0.0;
  cv::minMaxLoc(closed, &lo, &hi);
  if (!(hi > lo)) {
    result.message = "the image is uniform";
    return result;
  }
  cv::Mat grey;
  closed.convertTo(grey, CV_8U, 255.0 / (hi - lo), -lo * 255.0 / (hi - lo));
  cv::Mat binary;
  cv::threshold(grey, binary, 0, 255, cv::THRESH_BINARY | cv::THRESH_OTSU);

  // Largest bright component, holes filled.
  std::vector<std::vector<cv::Point>> contours;
  cv::findContours(binary, contours, cv::RETR_EXTERNAL, cv::CHAIN_APPROX_NONE);
  if (contours.empty()) {
    result.message = "no bright part found";
    return result;
  }
  std::size_t largest = 0;
  double largest_area = 0.0;
  for (std::size_t i = 0; i < contours.size(); ++i) {
    const double area = cv::contourArea(contours[i]);
    if (area > largest_area) {
      largest_area = area;
      largest = i;
    }
  }
  const double frame_area = static_cast<double>(small.cols) * small.rows;
  if (largest_area < 0.01 * frame_area || largest_area > 0.97 * frame_area) {
    result.message =
        "no part edge found (the fringes fill the frame or the part is too "
        "small)";
    return result;
  }
  cv::Mat filled = cv::Mat::zeros(small.size(), CV_8U);
  cv::drawContours(filled, contours, static_cast<int>(largest), cv::Scalar(255),
                   cv::FILLED);
  const double inside_mean = cv::mean(closed, filled)[0];
  cv::Mat outside_mask;
  cv::bitwise_not(filled, outside_mask);
  const double outside_mean = cv::mean(closed, outside_mask)[0];
  if (!(inside_mean - outside_mean > 0.15 * (hi - lo))) {
    result.message = "no part edge with enough contrast";
    return result;
  }

  std::vector<cv::Point2d> coarse;
  for (const auto& p : contours[largest]) {
    if (p.x > 1 && p.y > 1 && p.x < small.cols - 2 && p.y < small.rows - 2) {
      coarse.emplace_back(p.x, p.y);
    }
  }
  const CircleFit coarse_fit = FitCircleRobust(coarse);
  if (!coarse_fit.ok) {
    result.message = "the part edge is not circular";
    return result;
  }

  // Sub-pixel edge along rays: steepest descent of the closed image.
  const Circle c0 = coarse_fit.circle;
  constexpr double kStep = 0.25;
  const double reach = std::max(6.0, 1.5 * k);
  const int samples = static_cast<int>(2.0 * reach / kStep) + 1;
  std::vector<double> profile(static_cast<std::size_t>(samples));
  std::vector<cv::Point2d> edges;
  edges.reserve(static_cast<std::size_t>(options.rays));
  for (int ray = 0; ray < options.rays; ++ray) {
    const double angle = 2.0 * std::numbers::pi * ray / options.rays;
    const double ux = std::cos(angle);
    const double uy = std::sin(angle);
    bool inside = true;
    for (int i = 0; i < samples; ++i) {
      const double r = c0.radius - reach + i * kStep;
      const double v =
          SampleBilinear(closed, c0.centre.x + r * ux, c0.centre.y + r * uy);
      if (std::isnan(v)) {
        inside = false;
        break;
      }
      profile[static_cast<std::size_t>(i)] = v;
    }
    if (!inside) continue;
    int best = -1;
    double best_slope = 0.0;
    for (int i = 1; i + 1 < samples; ++i) {
      const double slope = profile[static_cast<std::size_t>(i) + 1] -
                           profile[static_cast<std::size_t>(i) - 1];
      if (slope < best_slope) {
        best_slope = slope;
        best = i;
      }
    }
    if (best < 2 || best > samples - 3) continue;
    const auto slope_at = [&](int i) {
      return profile[static_cast<std::size_t>(i) + 1] -
             profile[static_cast<std::size_t>(i) - 1];
    };
    const double delta = ParabolaVertexOffset(
        slope_at(best - 1), slope_at(best), slope_at(best + 1));
    const double r = c0.radius - reach + (best + delta) * kStep;
    // Back to full-resolution pixel coordinates.
    const double x = (c0.centre.x + r * ux + 0.5) * sx - 0.5;
    const double y = (c0.centre.y + r * uy + 0.5) * sy - 0.5;
    edges.emplace_back(x, y);
  }
  if (static_cast<int>(edges.size()) < options.rays / 8) {
    result.message = "too little of the part edge lies inside the image";
    return result;
  }
  const CircleFit fit = FitCircleRobust(edges);
  if (!fit.ok || fit.inliers < static_cast<int>(edges.size()) / 2) {
    result.message = "the part edge is not circular";
    return result;
  }
  result.ok = true;
  result.circle = fit.circle;
  result.rms_px = fit.rms_px;
  result.edge_points = fit.inliers;
  return result;
}

}  // namespace figura
