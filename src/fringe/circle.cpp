#include "fringe/circle.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

namespace figura {

void RowSpan(const Circle& c, int y, int cols, int& x0, int& x1) {
  const double dy = y - c.centre.y;
  const double rest = c.radius * c.radius - dy * dy;
  x0 = 0;
  x1 = -1;
  if (rest < 0.0) return;
  const double half = std::sqrt(rest);
  x0 = std::max(0, static_cast<int>(std::ceil(c.centre.x - half)));
  x1 = std::min(cols - 1, static_cast<int>(std::floor(c.centre.x + half)));
}

CircleFit FitCircleAlgebraic(std::span<const cv::Point2d> points) {
  CircleFit fit;
  if (points.size() < 3) return fit;
  for (const auto& p : points) {
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) return fit;
  }
  // Centre the data for conditioning.
  cv::Point2d mean(0.0, 0.0);
  for (const auto& p : points) mean += p;
  mean *= 1.0 / static_cast<double>(points.size());
  Eigen::Matrix3d normal = Eigen::Matrix3d::Zero();
  Eigen::Vector3d rhs = Eigen::Vector3d::Zero();
  for (const auto& p : points) {
    const double x = p.x - mean.x;
    const double y = p.y - mean.y;
    const Eigen::Vector3d row(x, y, 1.0);
    normal += row * row.transpose();
    rhs += -(x * x + y * y) * row;
  }
  const Eigen::FullPivLU<Eigen::Matrix3d> lu(normal);
  if (!lu.isInvertible()) return fit;
  const Eigen::Vector3d abc = lu.solve(rhs);
  const double cx = -0.5 * abc(0);
  const double cy = -0.5 * abc(1);
  const double r2 = cx * cx + cy * cy - abc(2);
  if (!(r2 > 0.0) || !std::isfinite(r2)) return fit;
  fit.circle.centre = cv::Point2d(cx + mean.x, cy + mean.y);
  fit.circle.radius = std::sqrt(r2);
  double sum = 0.0;
  for (const auto& p : points) {
    const double d = cv::norm(p - fit.circle.centre) - fit.circle.radius;
    sum += d * d;
  }
  fit.rms_px = std::sqrt(sum / static_cast<double>(points.size()));
  fit.inliers = static_cast<int>(points.size());
  fit.ok = true;
  return fit;
}

namespace {

// Gauss-Newton refinement on the given points; returns false on failure.
bool GaussNewton(std::span<const cv::Point2d> points, Circle& circle,
                 Eigen::Matrix3d& inverse, double& rms) {
  for (int iteration = 0; iteration < 20; ++iteration) {
    Eigen::Matrix3d normal = Eigen::Matrix3d::Zero();
    Eigen::Vector3d rhs = Eigen::Vector3d::Zero();
    double sum = 0.0;
    for (const auto& p : points) {
      const double dx = p.x - circle.centre.x;
      const double dy = p.y - circle.centre.y;
      const double d = std::hypot(dx, dy);
      if (d <= 0.0) continue;
      const double residual = d - circle.radius;
      const Eigen::Vector3d jacobian(-dx / d, -dy / d, -1.0);
      normal += jacobian * jacobian.transpose();
      rhs += -residual * jacobian;
      sum += residual * residual;
    }
    const Eigen::FullPivLU<Eigen::Matrix3d> lu(normal);
    if (!lu.isInvertible()) return false;
    const Eigen::Vector3d step = lu.solve(rhs);
    circle.centre.x += step(0);
    circle.centre.y += step(1);
    circle.radius += step(2);
    rms = std::sqrt(sum / static_cast<double>(points.size()));
    inverse = lu.inverse();
    if (step.norm() < 1e-9 * std::max(1.0, circle.radius)) break;
  }
  return std::isfinite(circle.radius) && circle.radius > 0.0;
}

}  // namespace

CircleFit FitCircleRobust(std::span<const cv::Point2d> points,
                          double reject_sigmas) {
  CircleFit fit = FitCircleAlgebraic(points);
  if (!fit.ok) return fit;
  std::vector<cv::Point2d> kept(points.begin(), points.end());
  Circle circle = fit.circle;
  Eigen::Matrix3d inverse = Eigen::Matrix3d::Zero();
  double rms = fit.rms_px;
  for (int round = 0; round < 5; ++round) {
    if (kept.size() < 3 || !GaussNewton(kept, circle, inverse, rms)) {
      fit.ok = false;
      return fit;
    }
    std::vector<double> residuals;
    residuals.reserve(points.size());
    for (const auto& p : points) {
      residuals.push_back(
          std::abs(cv::norm(p - circle.centre) - circle.radius));
    }
    std::vector<double> sorted = residuals;
    std::nth_element(
        sorted.begin(),
        sorted.begin() + static_cast<std::ptrdiff_t>(sorted.size() / 2),
        sorted.end());
    const double scale = std::max(1.4826 * sorted[sorted.size() / 2], 1e-3);
    std::vector<cv::Point2d> next;
    next.reserve(points.size());
    for (std::size_t i = 0; i < points.size(); ++i) {
      if (residuals[i] <= reject_sigmas * scale) next.push_back(points[i]);
    }
    const bool unchanged = next.size() == kept.size();
    kept = std::move(next);
    if (unchanged) break;
  }
  if (kept.size() < 3 || !GaussNewton(kept, circle, inverse, rms)) {
    fit.ok = false;
    return fit;
  }
  fit.circle = circle;
  fit.rms_px = rms;
  fit.inliers = static_cast<int>(kept.size());
  const double dof = std::max(1.0, static_cast<double>(kept.size()) - 3.0);
  const double variance = rms * rms * static_cast<double>(kept.size()) / dof;
  fit.centre_sigma_px =
      std::sqrt(0.5 * variance * (inverse(0, 0) + inverse(1, 1)));
  fit.ok = true;
  return fit;
}

}  // namespace figura
