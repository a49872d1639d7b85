#include "fringe/ring_centre.h"

#include <Eigen/Dense>
#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <limits>
#include <map>
#include <mutex>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <vector>

namespace figura {

namespace {

// Samples a robust scale needs at most.
constexpr std::size_t kMedianSamples = 32768;
// Gradient centre: a pass that moves the centre less than this (px) ends the
// reweighting.
constexpr double kCentreSettledPx = 1e-4;

// Median of `values`; of an evenly strided subset of about kMedianSamples
// of them when there are more (a robust scale needs no more).
double Median(std::vector<double> values) {
  if (values.empty()) return 0.0;
  if (values.size() > 2 * kMedianSamples) {
    const std::size_t stride = values.size() / kMedianSamples;
    std::size_t kept = 0;
    for (std::size_t i = 0; i < values.size(); i += stride) {
      values[kept++] = values[i];
    }
    values.resize(kept);
  }
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
    const cv::Point2d previous_centre = centre;
    centre = cv::Point2d(c(0), c(1));
    // Distances of the lines from the centre; the robust scale is the
    // median of an evenly strided subset (every stride-th of the lines
    // still kept, as Median would take it), collected without copying all.
    const auto distance = [&centre](const Line& line) {
      return std::abs(line.nx * (centre.x - line.px) +
                      line.ny * (centre.y - line.py));
    };
    const std::size_t kept_before = std::isfinite(previous_scale)
                                        ? static_cast<std::size_t>(out.lines)
                                        : lines.size();
    const std::size_t stride =
        kept_before > 2 * kMedianSamples ? kept_before / kMedianSamples : 1;
    std::vector<double> kept_distances;
    kept_distances.reserve(kept_before / stride + 1);
    std::size_t kept_index = 0;
    for (std::size_t i = 0; i < lines.size(); ++i) {
      if (!(robust[i] > 0.0)) continue;
      if (kept_index++ % stride == 0)
        kept_distances.push_back(distance(lines[i]));
    }
    // Annealed scale: the robust spread of the lines still kept, shrinking
    // at most by half per pass, so that a majority of stray lines (fringes
    // too fine for this resolution, noise) cannot pin the scale. (On the
    // first pass every line is kept.)
    scale = std::max(1.4826 * Median(kept_distances), 0.05);
    if (std::isfinite(previous_scale))
      scale = std::max(scale, 0.5 * previous_scale);
    const double cut = 4.685 * scale;
    int kept = 0;
    double inlier_weight = 0.0;
    for (std::size_t i = 0; i < lines.size(); ++i) {
      const double d = distance(lines[i]);
      const double u = d / cut;
      robust[i] = u < 1.0 ? (1.0 - u * u) * (1.0 - u * u) : 0.0;
      kept += u < 1.0 ? 1 : 0;
      if (d < 2.0) inlier_weight += lines[i].w;
    }
    out.lines = kept;
    out.inlier_fraction = inlier_weight / total_weight;
    // Settled when the scale stops changing, or when the centre no longer
    // moves (the median of a strided subset can cycle between a few values
    // while the centre stays put to 1e-5 px).
    const bool settled = std::abs(scale - previous_scale) < 1e-3 * scale ||
                         (iteration > 0 && cv::norm(centre - previous_centre) <
                                               kCentreSettledPx);
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
  assert(image.type() == CV_32FC1);
  const RowValues values = [&image](int y, int x0, int x1, float* out) {
    const float* row = image.ptr<float>(y);
    std::copy(row + x0, row + x1 + 1, out + x0);
  };
  return SamplePixels(values, image.size(), region, stride);
}

PixelSamples SamplePixels(const RowValues& values, cv::Size size,
                          const Circle& region, int stride) {
  assert(stride >= 1);
  PixelSamples out;
  const int y0 =
      std::max(0, static_cast<int>(std::ceil(region.centre.y - region.radius)));
  const int y1 =
      std::min(size.height - 1,
               static_cast<int>(std::floor(region.centre.y + region.radius)));
  // Sized for the disc (pi r^2 / stride^2) so that the arrays grow rarely.
  const auto expected = static_cast<std::size_t>(
      3.2 * region.radius * region.radius / (stride * stride) + 64.0);
  out.x.reserve(expected);
  out.y.reserve(expected);
  out.value.reserve(expected);
  std::vector<float> row(static_cast<std::size_t>(size.width));
  for (int y = y0; y <= y1; y += stride) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(region, y, size.width, x0, x1);
    if (x1 < x0) continue;
    values(y, x0, x1, row.data());
    for (int x = x0; x <= x1; x += stride) {
      out.x.push_back(static_cast<float>(x));
      out.y.push_back(static_cast<float>(y));
      out.value.push_back(row[static_cast<std::size_t>(x)]);
    }
  }
  return out;
}

namespace {

// Bins per fringe period of the sharpness profiles.
constexpr int kSharpnessBinsPerPeriod = 16;

// The sharpness of one binned profile: `sum` and `count` of bin j at
// [j * stride], the one-period moving average (17 taps, half weight at both
// ends: it removes the fringe fundamental exactly) subtracted from each bin
// mean, the count-weighted mean square of the rest.
double BinnedSharpness(const double* sum, const double* count, int bins,
                       std::size_t stride) {
  constexpr int kHalf = kSharpnessBinsPerPeriod / 2;
  double total = 0.0;
  double total_count = 0.0;
  for (int j = 0; j < bins; ++j) {
    const std::size_t at = static_cast<std::size_t>(j) * stride;
    if (count[at] < 1e-9) continue;
    double ma_sum = 0.0;
    double ma_count = 0.0;
    for (int k = -kHalf; k <= kHalf; ++k) {
      const int m = j + k;
      if (m < 0 || m >= bins) continue;
      const double tap = (k == -kHalf || k == kHalf) ? 0.5 : 1.0;
      const std::size_t mt = static_cast<std::size_t>(m) * stride;
      ma_sum += tap * sum[mt];
      ma_count += tap * count[mt];
    }
    const double hp = sum[at] / count[at] - ma_sum / ma_count;
    total += count[at] * hp * hp;
    total_count += count[at];
  }
  return total_count > 0.0 ? total / total_count : 0.0;
}

// Largest |x - cx| and |y - cy| over the samples, for centres within
// `reach` of `centre` (bounds the r^2 range of the profiles).
cv::Point2d FarthestOffsets(const PixelSamples& samples, cv::Point2d centre,
                            double reach) {
  if (samples.x.empty()) return {0.0, 0.0};
  const auto [x_lo, x_hi] =
      std::minmax_element(samples.x.begin(), samples.x.end());
  const auto [y_lo, y_hi] =
      std::minmax_element(samples.y.begin(), samples.y.end());
  return {std::max(std::abs(static_cast<double>(*x_lo) - centre.x),
                   std::abs(static_cast<double>(*x_hi) - centre.x)) +
              reach,
          std::max(std::abs(static_cast<double>(*y_lo) - centre.y),
                   std::abs(static_cast<double>(*y_hi) - centre.y)) +
              reach};
}

// ProfileSharpness at the nine centres centre + (i, j) step, i, j in
// {-1, 0, 1} (index (j + 1) * 3 + i + 1), in one parallel pass over the
// samples: r^2 about each grid centre follows from r^2 about `centre` as
// r^2 - 2 step (i dx + j dy) + step^2 (i^2 + j^2), and the nine profiles
// are interleaved per bin so that the updates of one sample stay close.
std::array<double, 9> SharpnessGrid(const PixelSamples& samples,
                                    cv::Point2d centre, double step,
                                    double period_r2_px2) {
  const double width = period_r2_px2 / kSharpnessBinsPerPeriod;
  const double inverse = 1.0 / width;
  const cv::Point2d far = FarthestOffsets(samples, centre, std::abs(step));
  const int bins =
      static_cast<int>((far.x * far.x + far.y * far.y) * inverse) + 2;
  // Per bin: 9 grid centres x (sum, count).
  constexpr std::size_t kPerBin = 18;
  const std::size_t size = static_cast<std::size_t>(bins) * kPerBin;
  std::vector<double> merged(size, 0.0);
  std::mutex merge;
  const auto n = static_cast<int>(samples.x.size());
  const int stripes = std::clamp(cv::getNumThreads(), 1, 8);
  std::array<double, 9> shift{};  // step^2 (i^2 + j^2) / width
  for (int g = 0; g < 9; ++g) {
    const int i = g % 3 - 1;
    const int j = g / 3 - 1;
    shift[static_cast<std::size_t>(g)] =
        step * step * (i * i + j * j) * inverse;
  }
  const double twice = 2.0 * step * inverse;
  cv::parallel_for_(
      cv::Range(0, n),
      [&](const cv::Range& range) {
        std::vector<double> h(size, 0.0);
        for (int s = range.start; s < range.end; ++s) {
          const auto k = static_cast<std::size_t>(s);
          const double dx = static_cast<double>(samples.x[k]) - centre.x;
          const double dy = static_cast<double>(samples.y[k]) - centre.y;
          const double u0 = (dx * dx + dy * dy) * inverse;
          const double ax = twice * dx;
          const double ay = twice * dy;
          const auto v = static_cast<double>(samples.value[k]);
          // The 3 x 3 grid with constant offsets (fully unrolled), bins
          // as int (r^2 / width stays far below 2^31).
          std::size_t g = 0;
          for (int j = -1; j <= 1; ++j) {
            const double uj = u0 - j * ay;
            for (int i = -1; i <= 1; ++i, ++g) {
              // r^2 >= 0; max() guards against rounding just below zero.
              const double u = std::max(0.0, uj - i * ax + shift[g]);
              const int b = static_cast<int>(u);
              const double f = u - b;
              double* at =
                  h.data() + static_cast<std::size_t>(b) * kPerBin + 2 * g;
              at[0] += (1.0 - f) * v;
              at[1] += 1.0 - f;
              at[kPerBin] += f * v;
              at[kPerBin + 1] += f;
            }
          }
        }
        const std::lock_guard<std::mutex> lock(merge);
        for (std::size_t i = 0; i < size; ++i) merged[i] += h[i];
      },
      stripes);
  std::array<double, 9> out{};
  for (std::size_t g = 0; g < 9; ++g) {
    out[g] = BinnedSharpness(merged.data() + 2 * g, merged.data() + 2 * g + 1,
                             bins, kPerBin);
  }
  return out;
}

}  // namespace

double ProfileSharpness(const PixelSamples& samples, cv::Point2d centre,
                        double period_r2_px2) {
  assert(period_r2_px2 > 0.0);
  return SharpnessGrid(samples, centre, 0.0, period_r2_px2)[4];
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
    const std::array<double, 9> grid =
        SharpnessGrid(used, centre, step, period_r2_px2);
    const Eigen::Matrix<double, 9, 1> f =
        Eigen::Map<const Eigen::Matrix<double, 9, 1>>(grid.data());
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
    // Shrink only when the optimum lies inside the grid; by 4 when the
    // vertex lies within a quarter step of the grid centre (the next grid,
    // of step h / 4, still spans it).
    const double moved = move.norm();
    if (moved <= 0.25) {
      step *= 0.25;
    } else if (moved <= 1.0) {
      step *= 0.5;
    }
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
