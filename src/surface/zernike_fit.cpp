#include "surface/zernike_fit.h"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cassert>
#include <cmath>
#include <cstddef>
#include <limits>
#include <mutex>
#include <string>
#include <vector>

#include "surface/correlation_area.h"
#include "surface/zernike.h"

namespace figura {
namespace {

// Largest condition number of the equilibrated normal matrix accepted.
constexpr double kMaxCondition = 1e12;
// Rows of the design matrix formed at a time (one block per rank update).
constexpr int kBlockRows = 1024;

// Normal equations of one block of samples: A^T W A (lower triangle),
// A^T W h.
struct Normal {
  Eigen::MatrixXd ata;
  Eigen::VectorXd atb;
  explicit Normal(int p)
      : ata(Eigen::MatrixXd::Zero(p, p)), atb(Eigen::VectorXd::Zero(p)) {}
};

// Accumulates the weighted normal equations of samples [begin, end).
void Accumulate(std::span<const SurfaceSample> samples, std::size_t begin,
                std::size_t end, const ZernikeBasis& basis, Normal* out) {
  const int p = basis.count();
  Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> a(
      kBlockRows, p);
  Eigen::VectorXd b(kBlockRows);
  for (std::size_t start = begin; start < end; start += kBlockRows) {
    const std::size_t stop =
        std::min(end, start + static_cast<std::size_t>(kBlockRows));
    const auto rows = static_cast<Eigen::Index>(stop - start);
    for (Eigen::Index r = 0; r < rows; ++r) {
      const SurfaceSample& s = samples[start + static_cast<std::size_t>(r)];
      const double sw = std::sqrt(s.weight);
      basis.Evaluate(
          s.x, s.y,
          std::span<double>(a.row(r).data(), static_cast<std::size_t>(p)));
      a.row(r) *= sw;
      b(r) = sw * s.height_m;
    }
    out->ata.selfadjointView<Eigen::Lower>().rankUpdate(
        a.topRows(rows).transpose());
    out->atb.noalias() += a.topRows(rows).transpose() * b.head(rows);
  }
}

ZernikeFitResult Failed(ZernikeFitResult result, const std::string& message) {
  result.status = Status::kError;
  result.messages.push_back(message);
  result.coefficients_m.clear();
  result.u_m.clear();
  result.covariance_m2.resize(0, 0);
  return result;
}

// u_m = sqrt(diag(covariance_m2)).
void SetStandardUncertainties(ZernikeFitResult* result) {
  const auto p = result->covariance_m2.rows();
  result->u_m.resize(static_cast<std::size_t>(p));
  for (Eigen::Index i = 0; i < p; ++i) {
    result->u_m[static_cast<std::size_t>(i)] =
        std::sqrt(std::max(0.0, result->covariance_m2(i, i)));
  }
}

// The residual map (height - fit) on a grid of step `step` px (x, y
// multiples of it, as the fit's stride), NaN where there is no sample.
cv::Mat ResidualGrid(const cv::Mat& height_m, const Circle& aperture_px,
                     const std::vector<double>& coefficients_m, int step) {
  const bool is_float = height_m.type() == CV_32FC1;
  const int y_first = std::max(
      0, static_cast<int>(
             std::ceil((aperture_px.centre.y - aperture_px.radius) / step)));
  const int y_last = std::min(
      (height_m.rows - 1) / step,
      static_cast<int>(
          std::floor((aperture_px.centre.y + aperture_px.radius) / step)));
  const int x_first = std::max(
      0, static_cast<int>(
             std::ceil((aperture_px.centre.x - aperture_px.radius) / step)));
  const int x_last = std::min(
      (height_m.cols - 1) / step,
      static_cast<int>(
          std::floor((aperture_px.centre.x + aperture_px.radius) / step)));
  if (y_last < y_first || x_last < x_first) return {};
  cv::Mat grid(y_last - y_first + 1, x_last - x_first + 1, CV_64FC1,
               cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  const ZernikePolynomial surface(coefficients_m);
  std::vector<double> row;
  for (int gy = 0; gy < grid.rows; ++gy) {
    const int y = (y_first + gy) * step;
    const double sy = SurfacePoint(aperture_px, 0.0, y).y;
    surface.RowCoefficients(sy, &row);
    auto* out = grid.ptr<double>(gy);
    for (int gx = 0; gx < grid.cols; ++gx) {
      const int x = (x_first + gx) * step;
      const double h = is_float ? static_cast<double>(height_m.at<float>(y, x))
                                : height_m.at<double>(y, x);
      if (!std::isfinite(h)) continue;
      const double sx = SurfacePoint(aperture_px, x, 0.0).x;
      if (sx * sx + sy * sy > 1.0) continue;
      out[gx] = h - ZernikePolynomial::EvaluateRow(row, sx);
    }
  }
  return grid;
}

// Scales the covariance of a grid fit for spatially correlated residuals
// (FitZernikeGrid).
void CorrectForCorrelation(const cv::Mat& height_m, const Circle& aperture_px,
                           ZernikeFitResult* result) {
  const int s = result->stride;
  const int across = static_cast<int>(std::ceil(2.0 * aperture_px.radius / s));
  const int q =
      std::max(1, (across + kCorrelationGridCells - 1) / kCorrelationGridCells);
  const int step = s * q;
  const cv::Mat grid =
      ResidualGrid(height_m, aperture_px, result->coefficients_m, step);
  if (grid.empty()) return;
  const CorrelationArea a = MeasureCorrelationArea(grid);
  result->correlation_area_px = a.area_cells * step * step;
  const double f =
      std::max(1.0, result->correlation_area_px / (static_cast<double>(s) * s));
  const auto n = static_cast<double>(result->samples);
  const auto p = static_cast<double>(result->covariance_m2.rows());
  const double n_eff = n / f;
  // f, and sigma^2 on the effective degrees of freedom N_eff - P instead of
  // N - P (the fit absorbs P of the N_eff independent samples' variance).
  const double g = f * (n - p) * n_eff / (n * std::max(1.0, n_eff - p));
  result->covariance_inflation = g;
  result->effective_samples = n_eff;
  result->covariance_m2 *= g;
  SetStandardUncertainties(result);
}

}  // namespace

std::string ZernikeFitOptions::Check() const {
  if (max_order < 1 || max_order > ZernikePolynomial::kMaxOrder) {
    return "Zernike radial order must be between 1 and " +
           std::to_string(ZernikePolynomial::kMaxOrder) + ", got " +
           std::to_string(max_order);
  }
  if (max_samples < 3 * ZernikeCount(max_order)) {
    return "Zernike fit sample cap must be at least 3 x the number of terms (" +
           std::to_string(3 * ZernikeCount(max_order)) + "), got " +
           std::to_string(max_samples);
  }
  return {};
}

cv::Point2d SurfacePoint(const Circle& aperture_px, double px, double py) {
  assert(aperture_px.radius > 0.0);
  return {(px - aperture_px.centre.x) / aperture_px.radius,
          (aperture_px.centre.y - py) / aperture_px.radius};
}

ZernikeFitResult FitZernike(std::span<const SurfaceSample> samples,
                            const ZernikeFitOptions& options) {
  ZernikeFitResult result;
  result.max_order = options.max_order;
  result.samples = static_cast<long>(samples.size());
  if (const std::string why = options.Check(); !why.empty()) {
    return Failed(std::move(result), why);
  }
  const int p = ZernikeCount(options.max_order);
  const auto n = static_cast<long>(samples.size());
  if (n < 3L * p) {
    return Failed(std::move(result),
                  "too few samples for a Zernike fit through radial order " +
                      std::to_string(options.max_order) + ": " +
                      std::to_string(n) + " samples for " + std::to_string(p) +
                      " terms (at least " + std::to_string(3 * p) + " needed)");
  }
  for (const SurfaceSample& s : samples) {
    if (!std::isfinite(s.x) || !std::isfinite(s.y) ||
        !std::isfinite(s.height_m) || !std::isfinite(s.weight) ||
        !(s.weight > 0.0)) {
      return Failed(std::move(result),
                    "Zernike fit: a sample has a non-finite coordinate or "
                    "height, or a weight that is not positive");
    }
  }

  // Normal equations, accumulated in parallel over contiguous slices.
  const ZernikeBasis basis(p);
  const int slices = std::max(
      1,
      std::min(cv::getNumThreads(), static_cast<int>(n / (4L * kBlockRows))));
  Normal total(p);
  std::mutex merge;
  cv::parallel_for_(
      cv::Range(0, slices),
      [&](const cv::Range& range) {
        for (int k = range.start; k < range.end; ++k) {
          const auto begin = static_cast<std::size_t>(n * k / slices);
          const auto end = static_cast<std::size_t>(n * (k + 1) / slices);
          Normal part(p);
          Accumulate(samples, begin, end, basis, &part);
          const std::lock_guard<std::mutex> lock(merge);
          total.ata += part.ata;
          total.atb += part.atb;
        }
      },
      slices);
  Eigen::MatrixXd ata = total.ata.selfadjointView<Eigen::Lower>();

  // Equilibrate (unit diagonal), then a symmetric eigen decomposition: the
  // condition number tells a singular design, and gives the inverse.
  Eigen::VectorXd d(p);
  for (int i = 0; i < p; ++i) {
    d(i) = ata(i, i) > 0.0 ? 1.0 / std::sqrt(ata(i, i)) : 0.0;
  }
  if ((d.array() == 0.0).any()) {
    return Failed(std::move(result),
                  "Zernike fit: singular system: a term is zero at every "
                  "sample (samples along a line, or too small a part of the "
                  "aperture)");
  }
  const Eigen::MatrixXd scaled = d.asDiagonal() * ata * d.asDiagonal();
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(scaled);
  const Eigen::VectorXd& lambda = eig.eigenvalues();  // ascending
  if (eig.info() != Eigen::Success || !(lambda(0) > 0.0) ||
      lambda(p - 1) / lambda(0) > kMaxCondition) {
    return Failed(std::move(result),
                  "Zernike fit: the samples do not separate the terms through "
                  "radial order " +
                      std::to_string(options.max_order) +
                      " (singular system: samples along a line, or too small "
                      "a part of the aperture); lower the order or use more "
                      "of the aperture");
  }
  const Eigen::MatrixXd& v = eig.eigenvectors();
  const Eigen::MatrixXd inverse = d.asDiagonal() * v *
                                  lambda.cwiseInverse().asDiagonal() *
                                  v.transpose() * d.asDiagonal();
  const Eigen::VectorXd c = inverse * total.atb;
  result.coefficients_m.assign(c.data(), c.data() + p);

  // Residuals, directly (no cancellation for near-perfect fits).
  const ZernikePolynomial surface(result.coefficients_m);
  double ss = 0.0;
  double sw = 0.0;
  std::vector<double> row;
  for (const SurfaceSample& s : samples) {
    surface.RowCoefficients(s.y, &row);
    const double r = s.height_m - ZernikePolynomial::EvaluateRow(row, s.x);
    ss += s.weight * r * r;
    sw += s.weight;
  }
  const double sigma2 = ss / static_cast<double>(n - p);
  result.residual_rms_m = std::sqrt(ss / sw);
  result.covariance_m2 = sigma2 * inverse;
  result.effective_samples = static_cast<double>(n);
  SetStandardUncertainties(&result);
  return result;
}

ZernikeFitResult FitZernikeGrid(const cv::Mat& height_m,
                                const Circle& aperture_px,
                                const ZernikeFitOptions& options) {
  assert(height_m.type() == CV_32FC1 || height_m.type() == CV_64FC1);
  if (const std::string why = options.Check(); !why.empty()) {
    ZernikeFitResult result;
    result.max_order = options.max_order;
    return Failed(std::move(result), why);
  }
  const bool is_float = height_m.type() == CV_32FC1;
  // Calls f(x, y, height) for the finite pixels with rho <= 1 on a stride.
  auto for_each = [&](int stride, auto&& f) {
    for (int y = 0; y < height_m.rows; y += stride) {
      int x0 = 0;
      int x1 = -1;
      RowSpan(aperture_px, y, height_m.cols, x0, x1);
      const auto* row32 = is_float ? height_m.ptr<float>(y) : nullptr;
      const auto* row64 = is_float ? nullptr : height_m.ptr<double>(y);
      const double sy = SurfacePoint(aperture_px, 0.0, y).y;
      for (int x = x0 + (stride - x0 % stride) % stride; x <= x1; x += stride) {
        const double h = is_float ? static_cast<double>(row32[x]) : row64[x];
        if (!std::isfinite(h)) continue;
        const double sx = SurfacePoint(aperture_px, x, 0.0).x;
        if (sx * sx + sy * sy > 1.0) continue;
        f(sx, sy, h);
      }
    }
  };
  auto count = [&](int stride) {
    long total = 0;
    for_each(stride, [&](double, double, double) { ++total; });
    return total;
  };
  // The smallest stride that keeps the samples under the cap.
  const long all = count(1);
  int stride = 1;
  long used = all;
  if (all > options.max_samples) {
    stride = std::max(1, static_cast<int>(std::floor(std::sqrt(
                             static_cast<double>(all) / options.max_samples))));
    while ((used = count(stride)) > options.max_samples) ++stride;
  }
  std::vector<SurfaceSample> samples;
  samples.reserve(static_cast<std::size_t>(used));
  for_each(stride, [&](double sx, double sy, double h) {
    samples.push_back({sx, sy, h, 1.0});
  });
  ZernikeFitResult result = FitZernike(samples, options);
  result.stride = stride;
  if (result.status != Status::kError) {
    CorrectForCorrelation(height_m, aperture_px, &result);
  }
  if (stride > 1) {
    result.messages.push_back("Zernike fit on every " + std::to_string(stride) +
                              "th pixel in x and y (" +
                              std::to_string(samples.size()) + " of " +
                              std::to_string(all) + " valid pixels)");
  }
  return result;
}

cv::Mat EvaluateZernikeGrid(std::span<const double> coefficients_m,
                            const Circle& aperture_px, cv::Size size,
                            const cv::Mat& valid) {
  assert(valid.empty() || (valid.type() == CV_8UC1 && valid.size() == size));
  const ZernikePolynomial surface(coefficients_m);
  cv::Mat out(size, CV_32FC1);
  cv::parallel_for_(cv::Range(0, size.height), [&](const cv::Range& rows) {
    std::vector<double> row;
    for (int y = rows.start; y < rows.end; ++y) {
      const double sy =
          SurfacePoint(aperture_px, 0.0, static_cast<double>(y)).y;
      surface.RowCoefficients(sy, &row);
      auto* dst = out.ptr<float>(y);
      const unsigned char* ok =
          valid.empty() ? nullptr : valid.ptr<unsigned char>(y);
      for (int x = 0; x < size.width; ++x) {
        if (ok != nullptr && ok[x] == 0) {
          dst[x] = std::numeric_limits<float>::quiet_NaN();
          continue;
        }
        const double sx =
            SurfacePoint(aperture_px, static_cast<double>(x), 0.0).x;
        dst[x] = static_cast<float>(ZernikePolynomial::EvaluateRow(row, sx));
      }
    }
  });
  return out;
}

}  // namespace figura
