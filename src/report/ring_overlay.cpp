#include "report/ring_overlay.h"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <opencv2/imgproc.hpp>
#include <set>
#include <vector>

#include "io/image_writer.h"

namespace figura {

cv::Scalar OrderColour(double order) {
  // Position within a cycle of 8 orders, 0..1.
  const double t = std::fmod(std::fmod(order, 8.0) + 8.0, 8.0) / 8.0;
  // Piecewise-linear ramp through four anchors (B, G, R).
  static const double kAnchors[4][3] = {
      {150, 110, 0}, {60, 200, 40}, {20, 220, 230}, {30, 90, 250}};
  const double s = t * 3.0;
  const int i = std::min(2, static_cast<int>(s));
  const double f = s - i;
  return {kAnchors[i][0] + f * (kAnchors[i + 1][0] - kAnchors[i][0]),
          kAnchors[i][1] + f * (kAnchors[i + 1][1] - kAnchors[i][1]),
          kAnchors[i][2] + f * (kAnchors[i + 1][2] - kAnchors[i][2])};
}

cv::Mat RenderRingOverlay(const Image& image, const RingsResult& result) {
  const cv::Mat& src = image.pixels;
  cv::Mat grey8(src.size(), CV_8UC1, cv::Scalar(0));
  if (!src.empty()) {
    std::vector<float> sample;
    const int step =
        std::max(1, static_cast<int>(std::sqrt(src.total() / 40000.0)));
    for (int y = 0; y < src.rows; y += step) {
      for (int x = 0; x < src.cols; x += step)
        sample.push_back(src.at<float>(y, x));
    }
    std::sort(sample.begin(), sample.end());
    const double lo = static_cast<double>(sample[sample.size() / 200]);
    const double hi =
        static_cast<double>(sample[sample.size() - 1 - sample.size() / 200]);
    const double scale = hi > lo ? 255.0 / (hi - lo) : 1.0;
    src.convertTo(grey8, CV_8UC1, scale, -lo * scale);
  }
  cv::Mat out;
  cv::cvtColor(grey8, out, cv::COLOR_GRAY2BGR);
  const int shift = 4;  // sub-pixel drawing: coordinates in 1/16 px
  const double k = 1 << shift;
  auto pt = [k](double x, double y) {
    return cv::Point(static_cast<int>(std::lround(x * k)),
                     static_cast<int>(std::lround(y * k)));
  };
  const int thick = std::max(1, std::min(out.cols, out.rows) / 600);
  const RingDetectionResult& d = result.detection;
  if (d.aperture_radius_px > 0.0) {
    cv::circle(out, pt(d.aperture_centre_px.x, d.aperture_centre_px.y),
               static_cast<int>(std::lround(d.aperture_radius_px * k)),
               cv::Scalar(255, 200, 0), thick, cv::LINE_AA, shift);
  }
  const bool fitted = result.status != Status::kError;
  // Fitted ellipses: one per dark order present.
  if (fitted) {
    const RingFitResult& f = result.fit;
    std::set<double> orders;
    for (const RingFitPoint& p : result.fit_points) orders.insert(p.order);
    for (double order : orders) {
      std::vector<cv::Point> poly;
      for (int a = 0; a < 360; a += 3) {
        const double ang = a * std::numbers::pi / 180.0;
        const double r = FittedRadiusPx(f, order, ang);
        if (!std::isfinite(r)) continue;
        poly.push_back(pt(f.centre_px.x + r * std::cos(ang),
                          f.centre_px.y + r * std::sin(ang)));
      }
      if (poly.size() > 2) {
        cv::polylines(out, poly, true, cv::Scalar(235, 235, 235), 1,
                      cv::LINE_AA, shift);
      }
    }
  }
  // Fringe points by order; rejected points as red crosses.
  const int dot = std::max(1, thick + 1);
  for (std::size_t i = 0; i < result.fit_points.size(); ++i) {
    const RingFitPoint& p = result.fit_points[i];
    const bool rejected =
        fitted && i < result.fit.outlier.size() && result.fit.outlier[i];
    if (rejected) {
      const double s = 3.0 * dot;
      cv::line(out, pt(p.x_px - s, p.y_px - s), pt(p.x_px + s, p.y_px + s),
               cv::Scalar(0, 0, 255), thick, cv::LINE_AA, shift);
      cv::line(out, pt(p.x_px - s, p.y_px + s), pt(p.x_px + s, p.y_px - s),
               cv::Scalar(0, 0, 255), thick, cv::LINE_AA, shift);
    } else {
      cv::circle(out, pt(p.x_px, p.y_px), static_cast<int>(dot * k),
                 OrderColour(p.order), -1, cv::LINE_AA, shift);
    }
  }
  // Centre cross (fitted, else detected).
  const cv::Point2d c = fitted ? result.fit.centre_px : d.centre_px;
  const double arm = std::max(8.0, std::min(out.cols, out.rows) / 40.0);
  cv::line(out, pt(c.x - arm, c.y), pt(c.x + arm, c.y), cv::Scalar(255, 0, 255),
           thick, cv::LINE_AA, shift);
  cv::line(out, pt(c.x, c.y - arm), pt(c.x, c.y + arm), cv::Scalar(255, 0, 255),
           thick, cv::LINE_AA, shift);
  return out;
}

void WriteRingOverlay(const std::filesystem::path& path, const Image& image,
                      const RingsResult& result) {
  WriteImage(path, RenderRingOverlay(image, result));
}

}  // namespace figura
