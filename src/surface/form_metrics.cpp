#include "surface/form_metrics.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <mutex>
#include <vector>

#include "surface/zernike.h"

namespace figura {
namespace {

// Range and moments of one quantity over pixels.
struct Stat {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  double sum = 0.0;
  double sum2 = 0.0;
  void Add(double v) {
    lo = std::min(lo, v);
    hi = std::max(hi, v);
    sum += v;
    sum2 += v * v;
  }
  void Merge(const Stat& o) {
    lo = std::min(lo, o.lo);
    hi = std::max(hi, o.hi);
    sum += o.sum;
    sum2 += o.sum2;
  }
  [[nodiscard]] double Pv() const { return hi >= lo ? hi - lo : 0.0; }
  // RMS about the mean over `count` values.
  [[nodiscard]] double Rms(long count) const {
    if (count < 1) return 0.0;
    const double mean = sum / static_cast<double>(count);
    return std::sqrt(
        std::max(0.0, sum2 / static_cast<double>(count) - mean * mean));
  }
};

// Everything accumulated in one pass over the pixels.
struct Pass {
  long count = 0;
  Stat tilt_removed;   // map - piston - tilt
  Stat irregular;      // ... - best sphere
  Stat asymmetric;     // ... - rotationally symmetric part
  Stat fit_shape;      // fitted surface without piston and tilt
  Stat fit_irregular;  // ... without the best sphere
  Stat residual;       // map - fitted surface
  void Merge(const Pass& o) {
    count += o.count;
    tilt_removed.Merge(o.tilt_removed);
    irregular.Merge(o.irregular);
    asymmetric.Merge(o.asymmetric);
    fit_shape.Merge(o.fit_shape);
    fit_irregular.Merge(o.fit_irregular);
    residual.Merge(o.residual);
  }
};

constexpr int kDefocus = 4;  // ISO 24157 j of (n, m) = (2, 0)

}  // namespace

FormMetrics ComputeFormMetrics(const cv::Mat& height_m,
                               const Circle& aperture_px,
                               const ZernikeFitResult& fit) {
  assert(fit.status != Status::kError);
  assert(fit.coefficients_m.size() > static_cast<std::size_t>(kDefocus));
  assert(height_m.type() == CV_32FC1 || height_m.type() == CV_64FC1);
  const std::vector<double>& c = fit.coefficients_m;
  const double c0 = c[0];
  const double c1 = c[1];
  const double c2 = c[2];
  const double c4 = c[kDefocus];
  const double sqrt3 = std::sqrt(3.0);
  // Rotationally symmetric irregularity: m = 0 terms of order >= 4.
  std::vector<double> symmetric(c.size(), 0.0);
  for (std::size_t j = 0; j < c.size(); ++j) {
    const ZernikeMode mode = ZernikeModeOf(static_cast<int>(j));
    if (mode.m == 0 && mode.n >= 4) symmetric[j] = c[j];
  }
  const ZernikePolynomial full(c);
  const ZernikePolynomial sym(symmetric);
  const bool is_float = height_m.type() == CV_32FC1;

  Pass total;
  std::mutex merge;
  cv::parallel_for_(cv::Range(0, height_m.rows), [&](const cv::Range& rows) {
    Pass part;
    std::vector<double> full_row;
    std::vector<double> sym_row;
    for (int y = rows.start; y < rows.end; ++y) {
      int x0 = 0;
      int x1 = -1;
      RowSpan(aperture_px, y, height_m.cols, x0, x1);
      if (x1 < x0) continue;
      const double sy = SurfacePoint(aperture_px, 0.0, y).y;
      full.RowCoefficients(sy, &full_row);
      sym.RowCoefficients(sy, &sym_row);
      for (int x = x0; x <= x1; ++x) {
        const double h = is_float
                             ? static_cast<double>(height_m.at<float>(y, x))
                             : height_m.at<double>(y, x);
        if (!std::isfinite(h)) continue;
        const double sx = SurfacePoint(aperture_px, x, 0.0).x;
        const double rho2 = sx * sx + sy * sy;
        if (rho2 > 1.0) continue;
        const double piston_tilt = c0 + c1 * 2.0 * sy + c2 * 2.0 * sx;
        const double sphere = c4 * sqrt3 * (2.0 * rho2 - 1.0);
        const double fitted = ZernikePolynomial::EvaluateRow(full_row, sx);
        const double rotational = ZernikePolynomial::EvaluateRow(sym_row, sx);
        const double t = h - piston_tilt;
        const double i = t - sphere;
        ++part.count;
        part.tilt_removed.Add(t);
        part.irregular.Add(i);
        part.asymmetric.Add(i - rotational);
        part.fit_shape.Add(fitted - piston_tilt);
        part.fit_irregular.Add(fitted - piston_tilt - sphere);
        part.residual.Add(h - fitted);
      }
    }
    const std::lock_guard<std::mutex> lock(merge);
    total.Merge(part);
  });

  FormMetrics m;
  m.pixels = total.count;
  m.pv_m = total.tilt_removed.Pv();
  m.rms_m = total.tilt_removed.Rms(total.count);
  m.rmst_m = m.rms_m;
  m.rmsi_m = total.irregular.Rms(total.count);
  m.rmsa_m = total.asymmetric.Rms(total.count);
  m.residual_rms_m = total.residual.Rms(total.count);
  m.pvr_m = total.fit_shape.Pv() + 3.0 * m.residual_rms_m;
  m.power_m = 2.0 * sqrt3 * c4;
  if (fit.u_m.size() > static_cast<std::size_t>(kDefocus)) {
    m.power_u_m = 2.0 * sqrt3 * fit.u_m[kDefocus];
  }
  m.irregularity_m = total.irregular.Pv();
  m.irregularity_fit_m = total.fit_irregular.Pv();
  // C: PV of the symmetric profile over 0 <= rho <= 1 (fine radial grid).
  constexpr int kProfile = 2000;
  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  for (int k = 0; k <= kProfile; ++k) {
    const double rho = static_cast<double>(k) / kProfile;
    double v = 0.0;
    for (std::size_t j = 0; j < symmetric.size(); ++j) {
      if (symmetric[j] == 0.0) continue;
      const ZernikeMode mode = ZernikeModeOf(static_cast<int>(j));
      v +=
          symmetric[j] * ZernikeNorm(mode.n, 0) * ZernikeRadial(mode.n, 0, rho);
    }
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  m.rsi_m = hi - lo;
  return m;
}

double MetresToFringes(double metres, double wavelength_m) {
  assert(wavelength_m > 0.0);
  return metres / (0.5 * wavelength_m);
}

double MetresToWaves(double metres, double wavelength_m) {
  assert(wavelength_m > 0.0);
  return metres / wavelength_m;
}

}  // namespace figura
