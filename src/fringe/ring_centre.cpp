#include "fringe/ring_centre.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <vector>

namespace figura {

namespace {

double Median(std::vector<double> values) {
  if (values.empty()) return 0.0;
  const auto middle =
      values.begin() + static_cast<std::ptrdiff_t>(values.size() / 2);
  std::nth_element(values.begin(), middle, values.end());
  return *middle;
}

}  // namespace

GradientCentre EstimateCentreFromGradients(const cv::Mat& image,
                                           const Circle& region) {
  assert(image.type() == CV_32FC1);
  GradientCentre out;
  cv::Mat smooth;
  cv::GaussianBlur(image, smooth, cv::Size(), 1.0);
  cv::Mat gx;
  cv::Mat gy;
  cv::Sobel(smooth, gx, CV_32F, 1, 0, 3, 1.0 / 8.0);
  cv::Sobel(smooth, gy, CV_32F, 0, 1, 3, 1.0 / 8.0);
  const double inner = std::max(0.0, region.radius - 3.0);
  const double inner2 = inner * inner;
  struct Line {
    double px, py, nx, ny, w;
  };
  std::vector<Line> lines;
  lines.reserve(static_cast<std::size_t>(std::numbers::pi * inner2) + 16);
  for (int y = 1; y < image.rows - 1; ++y) {
    const double dy = y - region.centre.y;
    const float* row_x = gx.ptr<float>(y);
    const float* row_y = gy.ptr<float>(y);
    for (int x = 1; x < image.cols - 1; ++x) {
      const double dx = x - region.centre.x;
      if (dx * dx + dy * dy > inner2) continue;
      const auto gxv = static_cast<double>(row_x[x]);
      const auto gyv = static_cast<double>(row_y[x]);
      const double g2 = gxv * gxv + gyv * gyv;
      if (!(g2 > 0.0)) continue;
      const double g = std::sqrt(g2);
      lines.push_back({static_cast<double>(x), static_cast<double>(y), -gyv / g,
                       gxv / g, g2});
    }
  }
  if (lines.size() < 20) return out;
  // Drop the weakest lines (flat areas, noise): keep weights above a fifth
  // of the median.
  std::vector<double> weights;
  weights.reserve(lines.size());
  for (const auto& line : lines) weights.push_back(line.w);
  const double weight_floor = 0.2 * Median(weights);
  std::erase_if(lines, [&](const Line& line) { return line.w < weight_floor; });
  if (lines.size() < 20) return out;

  std::vector<double> robust(lines.size(), 1.0);
  cv::Point2d centre = region.centre;
  double scale = 0.0;
  double previous_scale = std::numeric_limits<double>::infinity();
  double total_weight = 0.0;
  for (const auto& line : lines) total_weight += line.w;
  for (int iteration = 0; iteration < 20; ++iteration) {
    Eigen::Matrix2d a = Eigen::Matrix2d::Zero();
    Eigen::Vector2d b = Eigen::Vector2d::Zero();
    for (std::size_t i = 0; i < lines.size(); ++i) {
      const Line& line = lines[i];
      const double w = line.w * robust[i];
      if (w <= 0.0) continue;
      const Eigen::Vector2d n(line.nx, line.ny);
      const double np = line.nx * line.px + line.ny * line.py;
      a += w * n * n.transpose();
      b += w * np * n;
    }
    const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(a);
    const double largest = eigen.eigenvalues()(1);
    out.conditioning = largest > 0.0 ? eigen.eigenvalues()(0) / largest : 0.0;
    if (!(out.conditioning > 1e-4)) return out;
    const Eigen::Vector2d c = a.ldlt().solve(b);
    centre = cv::Point2d(c(0), c(1));
    std::vector<double> distances;
    distances.reserve(lines.size());
    std::vector<double> kept_distances;
    for (std::size_t i = 0; i < lines.size(); ++i) {
      const Line& line = lines[i];
      distances.push_back(std::abs(line.nx * (centre.x - line.px) +
                                   line.ny * (centre.y - line.py)));
      if (robust[i] > 0.0) kept_distances.push_back(distances.back());
    }
    // Annealed scale: the robust spread of the lines still kept, shrinking
    // at most by half per pass, so that a majority of stray lines (fringes
    // too fine for this resolution, noise) cannot pin the scale.
    scale = std::max(1.4826 * Median(kept_distances), 0.05);
    scale = std::max(scale, 0.5 * std::min(previous_scale, 1e300));
    if (!std::isfinite(previous_scale))
      scale = std::max(1.4826 * Median(distances), 0.05);
    const double cut = 4.685 * scale;
    int kept = 0;
    double inlier_weight = 0.0;
    for (std::size_t i = 0; i < lines.size(); ++i) {
      const double u = distances[i] / cut;
      robust[i] = u < 1.0 ? (1.0 - u * u) * (1.0 - u * u) : 0.0;
      kept += u < 1.0 ? 1 : 0;
      if (distances[i] < 2.0) inlier_weight += lines[i].w;
    }
    out.lines = kept;
    out.inlier_fraction = inlier_weight / total_weight;
    const bool settled = std::abs(scale - previous_scale) < 1e-3 * scale;
    previous_scale = scale;
    if (settled) break;
  }
  out.ok = std::isfinite(centre.x) && std::isfinite(centre.y);
  out.centre = centre;
  out.spread_px = scale;
  return out;
}

PixelSamples SamplePixels(const cv::Mat& image, const Circle& region,
                          int stride) {
  assert(image.type() == CV_32FC1 && stride >= 1);
  PixelSamples out;
  const int y0 =
      std::max(0, static_cast<int>(std::ceil(region.centre.y - region.radius)));
  const int y1 =
      std::min(image.rows - 1,
               static_cast<int>(std::floor(region.centre.y + region.radius)));
  for (int y = y0; y <= y1; y += stride) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(region, y, image.cols, x0, x1);
    if (x1 < x0) continue;
    const float* row = image.ptr<float>(y);
    for (int x = x0; x <= x1; x += stride) {
      out.x.push_back(static_cast<float>(x));
      out.y.push_back(static_cast<float>(y));
      out.value.push_back(row[x]);
    }
  }
  return out;
}

double ProfileSharpness(const PixelSamples& samples, cv::Point2d centre,
                        double period_r2_px2) {
  assert(period_r2_px2 > 0.0);
  constexpr int kBinsPerPeriod = 16;
  const double width = period_r2_px2 / kBinsPerPeriod;
  double max_r2 = 0.0;
  const std::size_t n = samples.x.size();
  for (std::size_t i = 0; i < n; ++i) {
    const double dx = static_cast<double>(samples.x[i]) - centre.x;
    const double dy = static_cast<double>(samples.y[i]) - centre.y;
    max_r2 = std::max(max_r2, dx * dx + dy * dy);
  }
  const int bins = static_cast<int>(max_r2 / width) + 2;
  std::vector<double> sum(static_cast<std::size_t>(bins), 0.0);
  std::vector<double> count(static_cast<std::size_t>(bins), 0.0);
  const double inverse = 1.0 / width;
  for (std::size_t i = 0; i < n; ++i) {
    const double dx = static_cast<double>(samples.x[i]) - centre.x;
    const double dy = static_cast<double>(samples.y[i]) - centre.y;
    const double u = (dx * dx + dy * dy) * inverse;
    const auto b = static_cast<std::size_t>(u);
    const double f = u - static_cast<double>(b);
    const auto v = static_cast<double>(samples.value[i]);
    sum[b] += (1.0 - f) * v;
    count[b] += 1.0 - f;
    sum[b + 1] += f * v;
    count[b + 1] += f;
  }
  // One-period moving average: 17 taps, half weight at both ends.
  constexpr int kHalf = kBinsPerPeriod / 2;
  double total = 0.0;
  double total_count = 0.0;
  for (int j = 0; j < bins; ++j) {
    if (count[static_cast<std::size_t>(j)] < 1e-9) continue;
    double ma_sum = 0.0;
    double ma_count = 0.0;
    for (int k = -kHalf; k <= kHalf; ++k) {
      const int m = j + k;
      if (m < 0 || m >= bins) continue;
      const double tap = (k == -kHalf || k == kHalf) ? 0.5 : 1.0;
      ma_sum += tap * sum[static_cast<std::size_t>(m)];
      ma_count += tap * count[static_cast<std::size_t>(m)];
    }
    const double mean =
        sum[static_cast<std::size_t>(j)] / count[static_cast<std::size_t>(j)];
    const double hp = mean - ma_sum / ma_count;
    total += count[static_cast<std::size_t>(j)] * hp * hp;
    total_count += count[static_cast<std::size_t>(j)];
  }
  return total_count > 0.0 ? total / total_count : 0.0;
}

CentreRefinement RefineCentreBySharpness(const PixelSamples& samples,
                                         cv::Point2d start,
                                         double period_r2_px2,
                                         double start_step_px,
                                         double stop_step_px) {
  CentreRefinement out;
  cv::Point2d centre = start;
  double step = start_step_px;
  Eigen::Matrix<double, 9, 6> design;
  {
    int row = 0;
    for (int j = -1; j <= 1; ++j) {
      for (int i = -1; i <= 1; ++i) {
        design.row(row++) << 1.0, i, j, i * i, i * j, j * j;
      }
    }
  }
  const auto solver = design.colPivHouseholderQr();
  // Coarse steps (above kCoarseStepPx) need far fewer samples to find the
  // direction of the optimum: every kCoarseStride-th sample is used there,
  // all of them in the fine steps that decide the result.
  constexpr double kCoarseStepPx = 0.25;
  constexpr std::size_t kCoarseStride = 4;
  PixelSamples coarse;
  const bool thin = samples.x.size() > 40 * kCoarseStride * 1000;
  if (thin) {
    const std::size_t n = samples.x.size() / kCoarseStride;
    coarse.x.reserve(n);
    coarse.y.reserve(n);
    coarse.value.reserve(n);
    for (std::size_t i = 0; i < samples.x.size(); i += kCoarseStride) {
      coarse.x.push_back(samples.x[i]);
      coarse.y.push_back(samples.y[i]);
      coarse.value.push_back(samples.value[i]);
    }
  }
  while (step >= stop_step_px) {
    const PixelSamples& used = thin && step > kCoarseStepPx ? coarse : samples;
    Eigen::Matrix<double, 9, 1> f;
    // The nine evaluations are independent: run them in parallel.
    cv::parallel_for_(cv::Range(0, 9), [&](const cv::Range& range) {
      for (int row = range.start; row < range.end; ++row) {
        const int i = row % 3 - 1;
        const int j = row / 3 - 1;
        f(row) = ProfileSharpness(
            used, centre + cv::Point2d(i * step, j * step), period_r2_px2);
      }
    });
    int best = 4;
    for (int row = 0; row < 9; ++row) {
      if (f(row) > f(best)) best = row;
    }
    out.evaluations += 9;
    const Eigen::Matrix<double, 6, 1> q = solver.solve(f);
    Eigen::Matrix2d hessian;
    hessian << 2.0 * q(3), q(4), q(4), 2.0 * q(5);
    const Eigen::Vector2d gradient(q(1), q(2));
    Eigen::Vector2d move(best % 3 - 1, best / 3 - 1);
    if (hessian(0, 0) < 0.0 && hessian.determinant() > 0.0) {
      move = -hessian.ldlt().solve(gradient);
      const double length = move.norm();
      if (length > 2.0) move *= 2.0 / length;
    }
    centre += cv::Point2d(move(0) * step, move(1) * step);
    out.sharpness = f(best);
    // Shrink only when the optimum lies inside the grid.
    if (move.norm() <= 1.0) step *= 0.5;
    if (out.evaluations > 400) break;
  }
  out.centre = centre;
  out.ok = std::isfinite(centre.x) && std::isfinite(centre.y);
  return out;
}

ConcentricFit FitConcentricCircles(std::span<const NumberedPoint> points,
                                   cv::Point2d start) {
  ConcentricFit out;
  std::map<int, int> slot;
  for (const auto& p : points) slot.emplace(p.index, 0);
  int k = 0;
  for (auto& [index, s] : slot) s = k++;
  const int circles = k;
  const int unknowns = 2 + circles;
  if (static_cast<int>(points.size()) < unknowns + 3 || circles < 1) return out;
  Eigen::VectorXd rho = Eigen::VectorXd::Zero(circles);
  Eigen::VectorXd counts = Eigen::VectorXd::Zero(circles);
  for (const auto& p : points) {
    const int s = slot[p.index];
    rho(s) += std::hypot(p.x_px - start.x, p.y_px - start.y);
    counts(s) += 1.0;
  }
  rho = rho.cwiseQuotient(counts);
  cv::Point2d centre = start;
  Eigen::MatrixXd normal;
  double chi2 = 0.0;
  for (int iteration = 0; iteration < 15; ++iteration) {
    normal = Eigen::MatrixXd::Zero(unknowns, unknowns);
    Eigen::VectorXd rhs = Eigen::VectorXd::Zero(unknowns);
    chi2 = 0.0;
    for (const auto& p : points) {
      const int s = 2 + slot[p.index];
      const double dx = p.x_px - centre.x;
      const double dy = p.y_px - centre.y;
      const double d = std::hypot(dx, dy);
      if (d <= 0.0) continue;
      const double w = 1.0 / (p.sigma_px * p.sigma_px);
      const double residual = d - rho(s - 2);
      const double jx = -dx / d;
      const double jy = -dy / d;
      normal(0, 0) += w * jx * jx;
      normal(0, 1) += w * jx * jy;
      normal(1, 1) += w * jy * jy;
      normal(0, s) -= w * jx;
      normal(1, s) -= w * jy;
      normal(s, s) += w;
      rhs(0) -= w * residual * jx;
      rhs(1) -= w * residual * jy;
      rhs(s) += w * residual;
      chi2 += w * residual * residual;
    }
    normal = normal.selfadjointView<Eigen::Upper>();
    const Eigen::LDLT<Eigen::MatrixXd> ldlt(normal);
    if (ldlt.info() != Eigen::Success) return out;
    const Eigen::VectorXd step = ldlt.solve(rhs);
    if (!step.allFinite()) return out;
    centre.x += step(0);
    centre.y += step(1);
    rho += step.tail(circles);
    if (std::hypot(step(0), step(1)) < 1e-7) break;
  }
  const double dof = static_cast<double>(points.size()) - unknowns;
  const double reduced = chi2 / dof;
  const Eigen::MatrixXd inverse =
      normal.ldlt().solve(Eigen::MatrixXd::Identity(unknowns, unknowns));
  double sum_sq = 0.0;
  for (const auto& p : points) {
    const double r =
        std::hypot(p.x_px - centre.x, p.y_px - centre.y) - rho(slot[p.index]);
    sum_sq += r * r;
  }
  out.ok = true;
  out.centre = centre;
  out.centre_sigma_px =
      std::sqrt(0.5 * reduced * (inverse(0, 0) + inverse(1, 1)));
  out.rms_px = std::sqrt(sum_sq / static_cast<double>(points.size()));
  out.circles = circles;
  return out;
}

}  // namespace figura
