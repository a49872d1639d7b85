#include "phase/carrier.h"

#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <complex>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <string>
#include <vector>

#include "phase/unwrap.h"

namespace figura {

namespace {

constexpr double kPi = std::numbers::pi;
constexpr double kTwoPi = 2.0 * std::numbers::pi;
using Complex = std::complex<float>;

// Longer side of the grid on which the local mean is estimated.
constexpr int kMeanGridPx = 512;
// Local-mean smoothing: Gaussian sigma as a fraction of the mask extent.
constexpr double kMeanSigmaFraction = 1.0 / 8.0;
// DC lobe radius in cycles across the mask extent (Airy first zero of a
// disc is 1.22 cycles per diameter; a margin for the illumination).
constexpr double kDcLobeCycles = 2.0;
// Probe: sideband disc radius as a fraction of |f| and the energy share
// above which the peak counts as a carrier.
constexpr double kProbeDiscFraction = 0.5;
constexpr double kProbeMinRatio = 0.5;
// Shortest usable carrier period (px).
constexpr double kMinPeriodPx = 3.0;
// Dust threshold in local fringe amplitudes from the local mean.
constexpr float kDustAmplitudes = 1.35F;
// Room between the aperture and its periodic copies in the transform, as
// a fraction of the mask extent.
constexpr double kPadFraction = 1.0 / 3.0;
// Fewest mask pixels for an analysis.
constexpr long kMinMaskPixels = 2000;

// The masked image, mean-removed, and its full-size spectrum.
struct Prepared {
  int width = 0, height = 0;  // image
  int wp = 0, hp = 0;         // padded transform size
  cv::Mat spectrum;           // CV_32FC2, hp x wp
  cv::Mat mean_small;         // local mean on a reduced grid (CV_32FC1)
  cv::Mat amp_small;          // local fringe amplitude sqrt(2 var), same grid
  cv::Mat work_mask;          // the mask minus dust (CV_8UC1, full size)
  double mean_scale = 1.0;    // full px per mean-grid px
  long mask_pixels = 0;
  std::vector<int> row_first, row_last;  // mask span per row (-1 if none)
  double extent_px = 0.0;                // equivalent diameter
};

// Validates the inputs and converts to float.
cv::Mat ToFloat(const cv::Mat& image, const cv::Mat& mask, const char* what) {
  if (image.empty() || image.channels() != 1) {
    throw InputError(std::string(what) +
                     ": the image must be a non-empty single-channel image");
  }
  if (mask.empty() || mask.type() != CV_8UC1 || mask.size() != image.size()) {
    throw InputError(std::string(what) +
                     ": the mask must be 8-bit and the size of the image");
  }
  if (image.type() == CV_32FC1) return image;
  cv::Mat f;
  image.convertTo(f, CV_32F);
  return f;
}

// Masked local mean by normalised convolution on a reduced grid
// (Knutsson & Westin, CVPR 1993) [practice].
void LocalMean(const cv::Mat& image, const cv::Mat& mask, double sigma_px,
               Prepared& p) {
  const int longer = std::max(image.cols, image.rows);
  const int q = std::max(1, longer / kMeanGridPx);
  const int sw = (image.cols + q - 1) / q;
  const int sh = (image.rows + q - 1) / q;
  // Block sums of m, m I and m I^2 in one pass (m = mask / 255), as block
  // means (partial edge blocks by their pixel count).
  cv::Mat ms(sh, sw, CV_32FC1), is(sh, sw, CV_32FC1), is2(sh, sw, CV_32FC1);
  cv::parallel_for_(cv::Range(0, sh), [&](const cv::Range& range) {
    std::vector<double> a(static_cast<std::size_t>(sw)),
        b(static_cast<std::size_t>(sw)), c(static_cast<std::size_t>(sw));
    for (int by = range.start; by < range.end; ++by) {
      std::fill(a.begin(), a.end(), 0.0);
      std::fill(b.begin(), b.end(), 0.0);
      std::fill(c.begin(), c.end(), 0.0);
      const int y1 = std::min(image.rows, (by + 1) * q);
      for (int y = by * q; y < y1; ++y) {
        const float* src = image.ptr<float>(y);
        const uint8_t* m = mask.ptr<uint8_t>(y);
        for (int bx = 0; bx < sw; ++bx) {
          const int x1 = std::min(image.cols, (bx + 1) * q);
          float sa = 0.0F, sb = 0.0F, sc = 0.0F;
          for (int x = bx * q; x < x1; ++x) {
            if (m[x] == 0) continue;
            sa += 1.0F;
            sb += src[x];
            sc += src[x] * src[x];
          }
          const auto k = static_cast<std::size_t>(bx);
          a[k] += static_cast<double>(sa);
          b[k] += static_cast<double>(sb);
          c[k] += static_cast<double>(sc);
        }
      }
      const int rows_in = y1 - by * q;
      for (int bx = 0; bx < sw; ++bx) {
        const int cols_in = std::min(image.cols, (bx + 1) * q) - bx * q;
        const double n = static_cast<double>(rows_in) * cols_in;
        const auto k = static_cast<std::size_t>(bx);
        ms.at<float>(by, bx) = static_cast<float>(a[k] / n);
        is.at<float>(by, bx) = static_cast<float>(b[k] / n);
        is2.at<float>(by, bx) = static_cast<float>(c[k] / n);
      }
    }
  });
  const double s = std::max(0.5, sigma_px / q);
  cv::GaussianBlur(ms, ms, cv::Size(), s, s, cv::BORDER_CONSTANT);
  cv::GaussianBlur(is, is, cv::Size(), s, s, cv::BORDER_CONSTANT);
  cv::GaussianBlur(is2, is2, cv::Size(), s, s, cv::BORDER_CONSTANT);
  const cv::Mat w = cv::max(ms, 1e-6);
  cv::divide(is, w, p.mean_small);
  cv::Mat second;
  cv::divide(is2, w, second);
  cv::Mat var = cv::max(second - p.mean_small.mul(p.mean_small), 0.0);
  cv::sqrt(2.0 * var, p.amp_small);
  p.mean_scale = q;
}

// Column taps of a bilinear lookup into a reduced map whose block centres
// lie at (i + 0.5) scale - 0.5 full-resolution pixels.
struct ColumnTaps {
  std::vector<int> x0, x1;
  std::vector<float> fx;
};
ColumnTaps MakeColumnTaps(const cv::Mat& small, double scale, int cols) {
  ColumnTaps t;
  t.x0.resize(static_cast<std::size_t>(cols));
  t.x1.resize(static_cast<std::size_t>(cols));
  t.fx.resize(static_cast<std::size_t>(cols));
  for (int x = 0; x < cols; ++x) {
    const double u = std::clamp((x + 0.5) / scale - 0.5, 0.0,
                                static_cast<double>(small.cols - 1));
    const int x0 = std::min(static_cast<int>(u), std::max(0, small.cols - 2));
    const auto k = static_cast<std::size_t>(x);
    t.x0[k] = x0;
    t.x1[k] = std::min(x0 + 1, small.cols - 1);
    t.fx[k] = static_cast<float>(u - x0);
  }
  return t;
}

// Bilinear lookup of a reduced map along one full-resolution row.
void SampleRow(const cv::Mat& small, double scale, const ColumnTaps& taps,
               int y, std::vector<float>& out) {
  const double v = std::clamp((y + 0.5) / scale - 0.5, 0.0,
                              static_cast<double>(small.rows - 1));
  const int y0 = std::min(static_cast<int>(v), std::max(0, small.rows - 2));
  const int y1 = std::min(y0 + 1, small.rows - 1);
  const auto fy = static_cast<float>(v - y0);
  const float* r0 = small.ptr<float>(y0);
  const float* r1 = small.ptr<float>(y1);
  const std::size_t cols = taps.x0.size();
  out.resize(cols);
  for (std::size_t x = 0; x < cols; ++x) {
    const int a = taps.x0[x];
    const int b = taps.x1[x];
    const float top = r0[a] + taps.fx[x] * (r0[b] - r0[a]);
    const float bottom = r1[a] + taps.fx[x] * (r1[b] - r1[a]);
    out[x] = top + fy * (bottom - top);
  }
}

// Masked, local-mean-removed image, padded to an optimal DFT size, and its
// spectrum.
Prepared Prepare(const cv::Mat& image_in, const cv::Mat& mask,
                 const char* what) {
  const cv::Mat image = ToFloat(image_in, mask, what);
  Prepared p;
  p.width = image.cols;
  p.height = image.rows;
  p.row_first.assign(static_cast<std::size_t>(p.height), -1);
  p.row_last.assign(static_cast<std::size_t>(p.height), -1);
  for (int y = 0; y < p.height; ++y) {
    const uint8_t* m = mask.ptr<uint8_t>(y);
    for (int x = 0; x < p.width; ++x) {
      if (m[x] == 0) continue;
      if (p.row_first[static_cast<std::size_t>(y)] < 0)
        p.row_first[static_cast<std::size_t>(y)] = x;
      p.row_last[static_cast<std::size_t>(y)] = x;
      ++p.mask_pixels;
    }
  }
  p.extent_px = 2.0 * std::sqrt(static_cast<double>(p.mask_pixels) / kPi);
  if (p.mask_pixels < kMinMaskPixels) return p;

  LocalMean(image, mask, kMeanSigmaFraction * p.extent_px, p);

  // Optimal sizes (a non-optimal size is catastrophically slow:
  // ../shared/libraries.md).
  // The transform is periodic: the extrapolation needs room between the
  // aperture and its periodic copies, so the padded size exceeds the mask's
  // bounding box by a third of its extent (at least 64 px).
  int x_lo = p.width, x_hi = -1, y_lo = -1, y_hi = -1;
  for (int y = 0; y < p.height; ++y) {
    const int a = p.row_first[static_cast<std::size_t>(y)];
    if (a < 0) continue;
    if (y_lo < 0) y_lo = y;
    y_hi = y;
    x_lo = std::min(x_lo, a);
    x_hi = std::max(x_hi, p.row_last[static_cast<std::size_t>(y)]);
  }
  const int margin =
      std::max(64, static_cast<int>(std::ceil(p.extent_px * kPadFraction)));
  p.wp = cv::getOptimalDFTSize(std::max(p.width, x_hi - x_lo + 1 + margin));
  p.hp = cv::getOptimalDFTSize(std::max(p.height, y_hi - y_lo + 1 + margin));
  // Dust and defects: pixels outside the local fringe envelope
  // (|I - mean| > 1.35 amplitudes; a cosine stays within 1), cleaned of
  // isolated noise pixels and grown by a few pixels. They leave the working
  // mask, so the extrapolation fills them like the outside [practice].
  const ColumnTaps mean_taps =
      MakeColumnTaps(p.mean_small, p.mean_scale, p.width);
  cv::Mat dust = cv::Mat::zeros(image.size(), CV_8UC1);
  cv::parallel_for_(cv::Range(0, p.height), [&](const cv::Range& range) {
    std::vector<float> mean_row, amp_row;
    for (int y = range.start; y < range.end; ++y) {
      if (p.row_first[static_cast<std::size_t>(y)] < 0) continue;
      SampleRow(p.mean_small, p.mean_scale, mean_taps, y, mean_row);
      SampleRow(p.amp_small, p.mean_scale, mean_taps, y, amp_row);
      const float* mean = mean_row.data();
      const float* amp = amp_row.data();
      const float* src = image.ptr<float>(y);
      const uint8_t* m = mask.ptr<uint8_t>(y);
      uint8_t* d = dust.ptr<uint8_t>(y);
      for (int x = 0; x < p.width; ++x) {
        if (m[x] != 0 && std::fabs(src[x] - mean[x]) > kDustAmplitudes * amp[x])
          d[x] = 255;
      }
    }
  });
  cv::morphologyEx(dust, dust, cv::MORPH_OPEN,
                   cv::getStructuringElement(cv::MORPH_ELLIPSE, {5, 5}));
  cv::dilate(dust, dust, cv::getStructuringElement(cv::MORPH_ELLIPSE, {7, 7}));
  p.work_mask = mask & ~dust;
  cv::Mat padded = cv::Mat::zeros(p.hp, p.wp, CV_32FC1);
  cv::parallel_for_(cv::Range(0, p.height), [&](const cv::Range& range) {
    std::vector<float> mean_row;
    for (int y = range.start; y < range.end; ++y) {
      if (p.row_first[static_cast<std::size_t>(y)] < 0) continue;
      SampleRow(p.mean_small, p.mean_scale, mean_taps, y, mean_row);
      const float* mean = mean_row.data();
      const float* src = image.ptr<float>(y);
      const uint8_t* m = p.work_mask.ptr<uint8_t>(y);
      float* dst = padded.ptr<float>(y);
      for (int x = 0; x < p.width; ++x)
        dst[x] = m[x] != 0 ? src[x] - mean[x] : 0.0F;
    }
  });
  cv::dft(padded, p.spectrum, cv::DFT_COMPLEX_OUTPUT);
  return p;
}

// |v|^2 of a complex sample, in double.
inline double Energy(const cv::Vec2f& v) {
  const auto re = static_cast<double>(v[0]);
  const auto im = static_cast<double>(v[1]);
  return re * re + im * im;
}

// Signed frequency index of bin k in a transform of size n.
inline int Signed(int k, int n) { return k <= n / 2 ? k : k - n; }
inline int Wrapped(int k, int n) { return ((k % n) + n) % n; }

// Mask extent (px) along the unit direction (ux, uy).
double ExtentAlong(const Prepared& p, double ux, double uy) {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  for (int y = 0; y < p.height; ++y) {
    const int a = p.row_first[static_cast<std::size_t>(y)];
    if (a < 0) continue;
    const int b = p.row_last[static_cast<std::size_t>(y)];
    for (const int x : {a, b}) {
      const double t = ux * x + uy * y;
      lo = std::min(lo, t);
      hi = std::max(hi, t);
    }
  }
  return hi > lo ? hi - lo + 1.0 : 0.0;
}

struct Peak {
  int kx = 0, ky = 0;         // signed bins
  double dx = 0.0, dy = 0.0;  // sub-bin offsets
  cv::Point2d f;              // cycles per px
};

double LogMag(const cv::Mat& s, int kx, int ky) {
  const auto& v = s.at<cv::Vec2f>(Wrapped(ky, s.rows), Wrapped(kx, s.cols));
  return std::log(Energy(v) + 1e-30);
}

// Probe on a prepared spectrum.
CarrierProbe ProbePrepared(const Prepared& p, Peak& peak) {
  CarrierProbe probe;
  if (p.mask_pixels < kMinMaskPixels) {
    probe.reason = "the valid area has only " + std::to_string(p.mask_pixels) +
                   " pixels (at least " + std::to_string(kMinMaskPixels) +
                   " needed)";
    return probe;
  }
  const double r_dc = kDcLobeCycles / p.extent_px;  // cycles per px
  const int wp = p.wp;
  const int hp = p.hp;
  // Strongest bin in the half-plane f_x > 0 (or f_x == 0, f_y > 0) outside
  // the DC lobe; total energy outside the DC lobe.
  std::vector<float> fx2(static_cast<std::size_t>(wp));
  for (int col = 0; col < wp; ++col) {
    const double fx = static_cast<double>(Signed(col, wp)) / wp;
    fx2[static_cast<std::size_t>(col)] = static_cast<float>(fx * fx);
  }
  std::vector<double> row_total(static_cast<std::size_t>(hp), 0.0);
  std::vector<float> row_best(static_cast<std::size_t>(hp), -1.0F);
  std::vector<int> row_col(static_cast<std::size_t>(hp), -1);
  const auto rdc2 = static_cast<float>(r_dc * r_dc);
  const int half = wp / 2;
  cv::parallel_for_(cv::Range(0, hp), [&](const cv::Range& range) {
    for (int row = range.start; row < range.end; ++row) {
      const int ky = Signed(row, hp);
      const double fyd = static_cast<double>(ky) / hp;
      const auto fy2 = static_cast<float>(fyd * fyd);
      const auto* sp = p.spectrum.ptr<cv::Vec2f>(row);
      double acc = 0.0;
      float best_e = -1.0F;
      int best_c = -1;
      const int first = ky > 0 ? 0 : 1;  // f_x == 0 only for f_y > 0
      for (int col = 0; col < wp; ++col) {
        if (fx2[static_cast<std::size_t>(col)] + fy2 < rdc2) continue;
        const float re = sp[col][0];
        const float im = sp[col][1];
        const float e = re * re + im * im;
        acc += static_cast<double>(e);
        if (col >= first && col <= half && e > best_e) {
          best_e = e;
          best_c = col;
        }
      }
      const auto k = static_cast<std::size_t>(row);
      row_total[k] = acc;
      row_best[k] = best_e;
      row_col[k] = best_c;
    }
  });
  double best = -1.0;
  double total = 0.0;
  for (int row = 0; row < hp; ++row) {
    const auto k = static_cast<std::size_t>(row);
    total += row_total[k];
    if (row_col[k] >= 0 && static_cast<double>(row_best[k]) > best) {
      best = static_cast<double>(row_best[k]);
      peak.kx = Signed(row_col[k], wp);
      peak.ky = Signed(row, hp);
    }
  }
  total *= 0.5;  // one half-plane (Hermitian spectrum of a real image)
  if (best <= 0.0 || total <= 0.0) {
    probe.reason =
        "no fringes: the image has no modulation inside the aperture";
    return probe;
  }
  // Sub-bin peak: parabola through the log magnitudes (a Gaussian peak
  // model) [practice: Gaussian interpolation of spectral peaks].
  auto vertex = [](double lm, double l0, double lp) {
    const double den = lm - 2.0 * l0 + lp;
    if (!(den < 0.0)) return 0.0;
    return std::clamp(0.5 * (lm - lp) / den, -0.5, 0.5);
  };
  const double l0 = LogMag(p.spectrum, peak.kx, peak.ky);
  peak.dx = vertex(LogMag(p.spectrum, peak.kx - 1, peak.ky), l0,
                   LogMag(p.spectrum, peak.kx + 1, peak.ky));
  peak.dy = vertex(LogMag(p.spectrum, peak.kx, peak.ky - 1), l0,
                   LogMag(p.spectrum, peak.kx, peak.ky + 1));
  peak.f = {(peak.kx + peak.dx) / wp, (peak.ky + peak.dy) / hp};
  probe.carrier_cycles_per_px = peak.f;
  const double fabs = std::hypot(peak.f.x, peak.f.y);
  probe.fringe_count = fabs * ExtentAlong(p, peak.f.x / fabs, peak.f.y / fabs);

  // Energy share of the sideband disc.
  const double r = kProbeDiscFraction * fabs;
  const int bx = static_cast<int>(std::ceil(r * wp)) + 1;
  const int by = static_cast<int>(std::ceil(r * hp)) + 1;
  double disc = 0.0;
  for (int ky = peak.ky - by; ky <= peak.ky + by; ++ky) {
    for (int kx = peak.kx - bx; kx <= peak.kx + bx; ++kx) {
      const double fx = static_cast<double>(kx) / wp;
      const double fy = static_cast<double>(ky) / hp;
      if (std::hypot(fx - peak.f.x, fy - peak.f.y) > r) continue;
      if (fx * fx + fy * fy < r_dc * r_dc) continue;
      const auto& v =
          p.spectrum.at<cv::Vec2f>(Wrapped(ky, hp), Wrapped(kx, wp));
      disc += Energy(v);
    }
  }
  probe.peak_ratio = std::min(1.0, disc / total);

  const double period = 1.0 / fabs;
  const double reach = 1.5 * fabs;  // carrier plus sideband
  if (period < kMinPeriodPx || std::fabs(peak.f.x) * 1.5 > 0.5 ||
      std::fabs(peak.f.y) * 1.5 > 0.5 || reach > 0.5 * std::sqrt(2.0)) {
    probe.aliased = true;
  }
  char buf[256];
  if (probe.peak_ratio < kProbeMinRatio) {
    std::snprintf(buf, sizeof buf,
                  "no carrier: the strongest spectral peak holds only %.0f%% "
                  "of the fringe "
                  "energy (straight tilt fringes give most of it; closed "
                  "fringes need the "
                  "closed-fringe method)",
                  100.0 * probe.peak_ratio);
    probe.reason = buf;
  } else if (probe.aliased) {
    std::snprintf(buf, sizeof buf,
                  "aliased fringes: carrier period %.2f px (at least %.0f px "
                  "needed, with room "
                  "for the sideband below the Nyquist limit); reduce the tilt "
                  "or use more pixels",
                  period, kMinPeriodPx);
    probe.reason = buf;
  } else if (probe.fringe_count < 3.0) {
    std::snprintf(buf, sizeof buf,
                  "too few carrier fringes: %.1f across the aperture (at least "
                  "3 needed); add "
                  "tilt",
                  probe.fringe_count);
    probe.reason = buf;
  } else {
    probe.found = true;
  }
  return probe;
}

// Tukey (flat-top, cosine-tapered) radial window: 1 up to kFlatFraction of
// the radius, then a raised-cosine taper to 0 at the radius [practice].
constexpr double kFlatFraction = 0.7;
inline float Tukey(double d, double r) {
  const double t = d / r;
  if (t >= 1.0) return 0.0F;
  if (t <= kFlatFraction) return 1.0F;
  return static_cast<float>(0.5 * (1.0 + std::cos(kPi * (t - kFlatFraction) /
                                                  (1.0 - kFlatFraction))));
}

struct Taps {
  std::vector<int> i0;  // lower bilinear index
  std::vector<int> nearest;
  std::vector<float> frac;  // for bilinear
};

// Taps mapping full-resolution index i to reduced coordinate i / scale.
Taps MakeTaps(int full, int reduced, double scale) {
  Taps t;
  t.nearest.resize(static_cast<std::size_t>(full));
  t.frac.resize(static_cast<std::size_t>(full));
  t.i0.resize(static_cast<std::size_t>(full));
  for (int i = 0; i < full; ++i) {
    const double u = i / scale;
    const int b = static_cast<int>(std::floor(u));
    const auto k = static_cast<std::size_t>(i);
    t.i0[k] = std::clamp(b, 0, reduced - 1);
    t.nearest[k] = std::clamp(static_cast<int>(std::lround(u)), 0, reduced - 1);
    t.frac[k] = static_cast<float>(u - b);
  }
  return t;
}

// Applies the window (CV_32FC1, reduced size) to a spectrum in place.
void ApplyWindow(cv::Mat& spec, const cv::Mat& window) {
  for (int y = 0; y < spec.rows; ++y) {
    auto* s = spec.ptr<cv::Vec2f>(y);
    const float* w = window.ptr<float>(y);
    for (int x = 0; x < spec.cols; ++x) s[x] *= w[x];
  }
}

double Dot(const cv::Mat& a, const cv::Mat& b) {  // Re <a, b>
  return a.dot(b);
}

}  // namespace

std::string CarrierOptions::Check() const {
  if (!(sideband_fraction > 0.05 && sideband_fraction < 0.95)) {
    return "carrier sideband fraction must lie between 0.05 and 0.95";
  }
  if (extension_iterations < 0 || extension_iterations > 200) {
    return "carrier extension iterations must lie between 0 and 200";
  }
  if (min_fringes < 1) return "carrier minimum fringe count must be at least 1";
  if (!(min_relative_modulation >= 0.0 && min_relative_modulation < 1.0)) {
    return "carrier minimum relative modulation must lie in [0, 1)";
  }
  if (working_size_px != 0 && working_size_px < 64) {
    return "carrier working size must be 0 (full size) or at least 64 pixels";
  }
  return {};
}

CarrierProbe ProbeCarrier(const cv::Mat& image, const cv::Mat& mask) {
  const Prepared p = Prepare(image, mask, "carrier probe");
  Peak peak;
  return ProbePrepared(p, peak);
}

CarrierResult DemodulateCarrier(const cv::Mat& image, const cv::Mat& mask,
                                const CarrierOptions& options) {
  if (const std::string why = options.Check(); !why.empty())
    throw InputError(why);
  const Prepared p = Prepare(image, mask, "carrier demodulation");
  CarrierResult result;
  Peak peak;
  result.probe = ProbePrepared(p, peak);
  result.carrier_cycles_per_px = result.probe.carrier_cycles_per_px;
  result.fringe_count = result.probe.fringe_count;
  result.aliased = result.probe.aliased;
  const bool enough = result.probe.fringe_count >= options.min_fringes;
  if (!result.probe.found || !enough) {
    result.status = Status::kError;
    result.messages.push_back(
        !result.probe.reason.empty()
            ? result.probe.reason
            : "too few carrier fringes: " +
                  std::to_string(result.probe.fringe_count) +
                  " across the aperture");
    return result;
  }

  const int wp = p.wp;
  const int hp = p.hp;
  const double fabs = std::hypot(peak.f.x, peak.f.y);
  const double r_dc = kDcLobeCycles / p.extent_px;
  double r = options.sideband_fraction * fabs;
  if (r > fabs - r_dc) {
    r = std::max(0.5 * (fabs - r_dc), 0.25 * fabs);
    result.messages.push_back(
        "sideband filter narrowed to keep clear of the DC lobe");
  }
  result.filter_radius_cycles_per_px = r;

  // Reduced grid, centred on zero frequency: it holds the DC lobe and both
  // sidebands with room for products with the mask (twice the highest band
  // frequency on each axis), and about working_size_px on the longer side.
  int wr = wp;
  int hr = hp;
  if (options.working_size_px > 0) {
    const double target =
        static_cast<double>(options.working_size_px) / std::max(wp, hp);
    const int need_w =
        static_cast<int>(std::ceil(4.0 * (std::fabs(peak.f.x) + r) * wp)) + 8;
    const int need_h =
        static_cast<int>(std::ceil(4.0 * (std::fabs(peak.f.y) + r) * hp)) + 8;
    wr = std::min(wp, cv::getOptimalDFTSize(
                          std::max(need_w, static_cast<int>(target * wp))));
    hr = std::min(hp, cv::getOptimalDFTSize(
                          std::max(need_h, static_cast<int>(target * hp))));
  }
  const double sx = static_cast<double>(wp) / wr;
  const double sy = static_cast<double>(hp) / hr;
  const bool extend = options.extension_iterations > 0;

  // The low-frequency part of the spectrum on the reduced grid, limited to
  // the signal bands (B): the DC lobe, the sideband around +f and its
  // mirror around -f. The model of the fringes is real, so the
  // extrapolation below also models the mirror sideband and the residual
  // background, whose leakage through the aperture edge would otherwise be
  // taken for signal.
  const double r_dc_band = std::min(2.0 * r_dc, fabs - r);
  cv::Mat band(hr, wr, CV_32FC1);
  cv::Mat data(hr, wr, CV_32FC2);
  for (int jy = 0; jy < hr; ++jy) {
    const int ky = Signed(jy, hr);
    for (int jx = 0; jx < wr; ++jx) {
      const int kx = Signed(jx, wr);
      const double fx = static_cast<double>(kx) / wp;
      const double fy = static_cast<double>(ky) / hp;
      const bool in = std::hypot(fx, fy) < r_dc_band ||
                      std::hypot(fx - peak.f.x, fy - peak.f.y) < r ||
                      std::hypot(fx + peak.f.x, fy + peak.f.y) < r;
      band.at<float>(jy, jx) = in ? 1.0F : 0.0F;
      data.at<cv::Vec2f>(jy, jx) =
          in ? p.spectrum.at<cv::Vec2f>(Wrapped(ky, hp), Wrapped(kx, wp))
             : cv::Vec2f(0.0F, 0.0F);
    }
  }

  // Mask fraction on the reduced grid: full-res pixels assigned to their
  // nearest reduced sample.
  cv::Mat inside = cv::Mat::zeros(hr, wr, CV_32FC1);
  std::vector<float> col_count(static_cast<std::size_t>(wr), 0.0F);
  std::vector<float> row_count(static_cast<std::size_t>(hr), 0.0F);
  for (int x = 0; x < wp; ++x)
    col_count[static_cast<std::size_t>(
        Wrapped(static_cast<int>(std::lround(x / sx)), wr))] += 1.0F;
  for (int y = 0; y < hp; ++y)
    row_count[static_cast<std::size_t>(
        Wrapped(static_cast<int>(std::lround(y / sy)), hr))] += 1.0F;
  {
    std::vector<int> col_of(static_cast<std::size_t>(p.width));
    for (int x = 0; x < p.width; ++x)
      col_of[static_cast<std::size_t>(x)] =
          Wrapped(static_cast<int>(std::lround(x / sx)), wr);
    for (int y = 0; y < p.height; ++y) {
      const uint8_t* m = p.work_mask.ptr<uint8_t>(y);
      float* dst =
          inside.ptr<float>(Wrapped(static_cast<int>(std::lround(y / sy)), hr));
      const int a = p.row_first[static_cast<std::size_t>(y)];
      if (a < 0) continue;
      for (int x = a; x <= p.row_last[static_cast<std::size_t>(y)]; ++x) {
        if (m[x] != 0) dst[col_of[static_cast<std::size_t>(x)]] += 1.0F;
      }
    }
    for (int y = 0; y < hr; ++y) {
      float* d = inside.ptr<float>(y);
      for (int x = 0; x < wr; ++x) {
        d[x] /= std::max(1.0F, col_count[static_cast<std::size_t>(x)] *
                                   row_count[static_cast<std::size_t>(y)]);
      }
    }
  }
  cv::Mat outside = 1.0 - inside;  // D in the text below

  // Band-limited extrapolation (R. W. Gerchberg, Optica Acta 21(9) 709,
  // 1974; Roddier & Roddier 1987): the real fringe signal g in the bands B
  // whose masked part best matches the observed one in least squares:
  // B m g = B m s, i.e. (I - B D B) g = c with c = B(m s) and D = 1 - m,
  // the fixed point of the Gerchberg iteration g <- c + B D g. Solved by
  // conjugate gradients in the spectral domain (the operator is
  // self-adjoint and positive semi-definite), a fixed number of steps
  // acting as the regularisation [practice: early-stopped CG for
  // band-limited extrapolation].
  cv::Mat low = data.clone();
  if (extend) {
    auto apply = [&](const cv::Mat& x_spec) {  // (I - B D B) x, x in B
      cv::Mat sp;
      cv::dft(x_spec, sp, cv::DFT_INVERSE | cv::DFT_SCALE);
      for (int y = 0; y < hr; ++y) {
        auto* v = sp.ptr<cv::Vec2f>(y);
        const float* d = outside.ptr<float>(y);
        for (int x = 0; x < wr; ++x) v[x] *= d[x];
      }
      cv::Mat t;
      cv::dft(sp, t);
      ApplyWindow(t, band);
      return cv::Mat(x_spec - t);
    };
    cv::Mat res = data - apply(low);
    cv::Mat dir = res.clone();
    double rr = Dot(res, res);
    const double rr0 = rr;
    for (int it = 0; it < options.extension_iterations && rr > 1e-12 * rr0;
         ++it) {
      const cv::Mat ad = apply(dir);
      const double den = Dot(dir, ad);
      if (!(den > 0.0)) break;
      const double alpha = rr / den;
      low += alpha * dir;
      res -= alpha * ad;
      const double rr_new = Dot(res, res);
      dir = res + (rr_new / rr) * dir;
      rr = rr_new;
    }
  }

  // The sideband, shifted to the origin by the integer peak bin; the window
  // is centred on the sub-bin peak: a flat-top taper for the plain method,
  // the ideal disc (already applied) after the extrapolation.
  cv::Mat crop(hr, wr, CV_32FC2);
  for (int jy = 0; jy < hr; ++jy) {
    const int sy_bin = Signed(jy, hr);
    for (int jx = 0; jx < wr; ++jx) {
      const int sx_bin = Signed(jx, wr);
      const double fx = (sx_bin - peak.dx) / wp;
      const double fy = (sy_bin - peak.dy) / hp;
      const double dist = std::hypot(fx, fy);
      const float w = extend ? (dist < r ? 1.0F : 0.0F) : Tukey(dist, r);
      const auto& v = low.at<cv::Vec2f>(Wrapped(peak.ky + sy_bin, hr),
                                        Wrapped(peak.kx + sx_bin, wr));
      crop.at<cv::Vec2f>(jy, jx) = v * w;
    }
  }
  cv::Mat field;  // spatial, CV_32FC2
  cv::dft(crop, field, cv::DFT_INVERSE | cv::DFT_SCALE);

  // Amplitude of the full-size transform: ours is scaled by 1/(wr hr), the
  // full one by 1/(wp hp).
  const float amp_scale = static_cast<float>(static_cast<double>(wr) * hr /
                                             (static_cast<double>(wp) * hp));

  // Residual linear phase (mean local frequency over the fully inside
  // samples) refines the carrier beyond the sub-bin peak estimate
  // [practice: phase-difference frequency estimation].
  std::complex<double> gx(0, 0), gy(0, 0);
  for (int y = 0; y + 1 < hr; ++y) {
    const auto* a = field.ptr<Complex>(y);
    const auto* b = field.ptr<Complex>(y + 1);
    const float* ia = inside.ptr<float>(y);
    const float* ib = inside.ptr<float>(y + 1);
    for (int x = 0; x + 1 < wr; ++x) {
      if (ia[x] < 0.999F) continue;
      if (ia[x + 1] >= 0.999F)
        gx += std::complex<double>(a[x + 1] * std::conj(a[x]));
      if (ib[x] >= 0.999F) gy += std::complex<double>(b[x] * std::conj(a[x]));
    }
  }
  // Phase ramp removed from the field (radians per reduced sample): the
  // measured one where available, else the sub-bin peak offset.
  const double ramp_x = std::abs(gx) > 0 ? std::arg(gx) : kTwoPi * peak.dx / wr;
  const double ramp_y = std::abs(gy) > 0 ? std::arg(gy) : kTwoPi * peak.dy / hr;
  result.carrier_cycles_per_px = {(peak.kx + ramp_x * wr / kTwoPi) / wp,
                                  (peak.ky + ramp_y * hr / kTwoPi) / hp};
  const double ux = std::hypot(result.carrier_cycles_per_px.x,
                               result.carrier_cycles_per_px.y);
  result.fringe_count = ux * ExtentAlong(p, result.carrier_cycles_per_px.x / ux,
                                         result.carrier_cycles_per_px.y / ux);

  // Mean on the reduced grid (for modulation b / a = 2 |u| / mean).
  cv::Mat mean_r(hr, wr, CV_32FC1);
  {
    cv::Mat mx(hr, wr, CV_32FC1), my(hr, wr, CV_32FC1);
    for (int y = 0; y < hr; ++y) {
      for (int x = 0; x < wr; ++x) {
        mx.at<float>(y, x) =
            static_cast<float>((x * sx + 0.5) / p.mean_scale - 0.5);
        my.at<float>(y, x) =
            static_cast<float>((y * sy + 0.5) / p.mean_scale - 0.5);
      }
    }
    cv::remap(p.mean_small, mean_r, mx, my, cv::INTER_LINEAR,
              cv::BORDER_REPLICATE);
  }

  // Wrapped phase and modulation on the reduced grid; the unwrapping region
  // is every sample within 3 of one touching the mask.
  cv::Mat wrapped_r(hr, wr, CV_32FC1);
  cv::Mat modulation_r(hr, wr, CV_32FC1);
  for (int y = 0; y < hr; ++y) {
    const auto* f = field.ptr<Complex>(y);
    float* w = wrapped_r.ptr<float>(y);
    float* mo = modulation_r.ptr<float>(y);
    const float* me = mean_r.ptr<float>(y);
    for (int x = 0; x < wr; ++x) {
      const double ph =
          static_cast<double>(std::arg(f[x])) - ramp_x * x - ramp_y * y;
      w[x] = static_cast<float>(WrapPhase(ph));
      const float a = std::max(me[x], 1e-6F);
      mo[x] = std::min(1.0F, 2.0F * std::abs(f[x]) * amp_scale / a);
    }
  }
  cv::Mat touch;
  cv::compare(inside, 0.0, touch, cv::CMP_GT);
  cv::Mat region;
  cv::dilate(touch, region, cv::getStructuringElement(cv::MORPH_RECT, {7, 7}));
  const UnwrapResult un = UnwrapPhase(wrapped_r, region);

  // Median modulation over the inside samples (the valid threshold).
  std::vector<float> mods;
  for (int y = 0; y < hr; ++y) {
    for (int x = 0; x < wr; ++x) {
      if (inside.at<float>(y, x) >= 0.5F)
        mods.push_back(modulation_r.at<float>(y, x));
    }
  }
  float median = 0.0F;
  if (!mods.empty()) {
    std::nth_element(
        mods.begin(),
        mods.begin() + static_cast<std::ptrdiff_t>(mods.size() / 2),
        mods.end());
    median = mods[mods.size() / 2];
  }
  const auto threshold =
      static_cast<float>(options.min_relative_modulation) * median;

  // Back to full resolution: bilinear phase (nearest sample where a tap is
  // outside the unwrapped region) and modulation, nearest-sample
  // unreliability.
  const Taps tx = MakeTaps(p.width, wr, sx);
  const Taps ty = MakeTaps(p.height, hr, sy);
  const float nan = std::numeric_limits<float>::quiet_NaN();
  result.phase.create(p.height, p.width, CV_32FC1);
  result.unwrapped.create(p.height, p.width, CV_32FC1);
  result.modulation.create(p.height, p.width, CV_32FC1);
  result.valid.create(p.height, p.width, CV_8UC1);
  result.unreliable.create(p.height, p.width, CV_8UC1);
  const cv::Mat& uph = un.phase;
  cv::parallel_for_(cv::Range(0, p.height), [&](const cv::Range& range) {
    for (int y = range.start; y < range.end; ++y) {
      const auto ky = static_cast<std::size_t>(y);
      const uint8_t* m = mask.ptr<uint8_t>(y);
      const uint8_t* wm = p.work_mask.ptr<uint8_t>(y);
      float* ph = result.phase.ptr<float>(y);
      float* uw = result.unwrapped.ptr<float>(y);
      float* mo = result.modulation.ptr<float>(y);
      uint8_t* va = result.valid.ptr<uint8_t>(y);
      uint8_t* bad = result.unreliable.ptr<uint8_t>(y);
      const int y0 = ty.i0[ky];
      const int y1 = std::min(y0 + 1, hr - 1);
      const float fy = ty.frac[ky];
      const int yn = ty.nearest[ky];
      for (int x = 0; x < p.width; ++x) {
        if (m[x] == 0) {
          ph[x] = uw[x] = nan;
          mo[x] = 0.0F;
          va[x] = 0;
          bad[x] = 0;
          continue;
        }
        const auto kx = static_cast<std::size_t>(x);
        const int x0 = tx.i0[kx];
        const int x1 = std::min(x0 + 1, wr - 1);
        const float fx = tx.frac[kx];
        // Bilinear: the phase is smooth on the reduced grid (a few full
        // pixels per sample), so the interpolation error is negligible
        // against the band limit [practice].
        const float p00 = uph.at<float>(y0, x0);
        const float p01 = uph.at<float>(y0, x1);
        const float p10 = uph.at<float>(y1, x0);
        const float p11 = uph.at<float>(y1, x1);
        float acc = (1 - fy) * ((1 - fx) * p00 + fx * p01) +
                    fy * ((1 - fx) * p10 + fx * p11);
        if (std::isnan(acc)) {
          acc = uph.at<float>(yn, tx.nearest[kx]);  // NaN if outside too
        }
        const float mod =
            (1 - fy) * ((1 - fx) * modulation_r.at<float>(y0, x0) +
                        fx * modulation_r.at<float>(y0, x1)) +
            fy * ((1 - fx) * modulation_r.at<float>(y1, x0) +
                  fx * modulation_r.at<float>(y1, x1));
        mo[x] = mod;
        bad[x] = un.unreliable.at<uint8_t>(yn, tx.nearest[kx]);
        const bool usable = !std::isnan(acc) && mod >= threshold && wm[x] != 0;
        va[x] = usable ? 255 : 0;
        uw[x] = usable ? acc : nan;
        ph[x] = std::isnan(acc)
                    ? nan
                    : static_cast<float>(WrapPhase(static_cast<double>(acc)));
      }
    }
  });

  // Summary.
  const double valid_share =
      static_cast<double>(cv::countNonZero(result.valid)) /
      static_cast<double>(std::max(1L, p.mask_pixels));
  long bad_count = 0;
  for (int y = 0; y < p.height; ++y) {
    const uint8_t* b = result.unreliable.ptr<uint8_t>(y);
    const uint8_t* v = result.valid.ptr<uint8_t>(y);
    for (int x = 0; x < p.width; ++x)
      bad_count += (b[x] != 0 && v[x] != 0) ? 1 : 0;
  }
  const long valid_count = cv::countNonZero(result.valid);
  result.unreliable_fraction =
      valid_count > 0
          ? static_cast<double>(bad_count) / static_cast<double>(valid_count)
          : 0.0;
  result.regions = un.regions;
  char buf[256];
  if (valid_share < 0.999) {
    std::snprintf(buf, sizeof buf,
                  "%.1f%% of the aperture masked for low fringe modulation "
                  "(dust, defects)",
                  100.0 * (1.0 - valid_share));
    result.messages.emplace_back(buf);
  }
  if (result.unreliable_fraction > 0.01) {
    std::snprintf(buf, sizeof buf,
                  "unwrapping unreliable over %.1f%% of the valid area (phase "
                  "residues or steep "
                  "phase)",
                  100.0 * result.unreliable_fraction);
    result.messages.emplace_back(buf);
    result.status = Status::kWarning;
  }
  if (valid_count < kMinMaskPixels) {
    result.status = Status::kError;
    result.messages.emplace_back(
        "too little usable area after masking low modulation");
  }
  return result;
}

}  // namespace figura
