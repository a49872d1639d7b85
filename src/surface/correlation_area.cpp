#include "surface/correlation_area.h"

#include <cassert>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <numbers>
#include <utility>
#include <vector>

namespace figura {
namespace {

// Below this many cells the central lobe is measured from rho_1 (see the
// header): lattice-point counts are too coarse there.
constexpr double kSmallLobeCells = 21.0;  // pi L^2 for L ~ 2.5 cells

// Linear autocorrelation of `f` (CV_32FC1, zero-padded to `padded`) by FFT:
// out(dy, dx) = sum f(y, x) f(y + dy, x + dx), lags wrapped modulo the
// padded size.
cv::Mat AutoCorrelation(const cv::Mat& f, cv::Size padded) {
  cv::Mat p = cv::Mat::zeros(padded, CV_32FC1);
  f.copyTo(p(cv::Rect(0, 0, f.cols, f.rows)));
  cv::Mat spectrum;
  cv::dft(p, spectrum);  // CCS packed
  cv::Mat power;
  cv::mulSpectrums(spectrum, spectrum, power, 0, true);
  cv::Mat out;
  cv::idft(power, out, cv::DFT_SCALE | cv::DFT_REAL_OUTPUT);
  return out;
}

}  // namespace

CorrelationArea MeasureCorrelationArea(const cv::Mat& field) {
  assert(field.type() == CV_32FC1 || field.type() == CV_64FC1);
  CorrelationArea result;
  cv::Mat values;
  field.convertTo(values, CV_64FC1);
  double sum = 0.0;
  long n = 0;
  for (int y = 0; y < values.rows; ++y) {
    const auto* row = values.ptr<double>(y);
    for (int x = 0; x < values.cols; ++x) {
      if (std::isfinite(row[x])) {
        sum += row[x];
        ++n;
      }
    }
  }
  result.samples = n;
  if (n < 2) return result;
  const double mean = sum / static_cast<double>(n);
  cv::Mat f(values.size(), CV_32FC1);
  cv::Mat m(values.size(), CV_32FC1);
  double ss = 0.0;
  for (int y = 0; y < values.rows; ++y) {
    const auto* row = values.ptr<double>(y);
    auto* fr = f.ptr<float>(y);
    auto* mr = m.ptr<float>(y);
    for (int x = 0; x < values.cols; ++x) {
      const bool ok = std::isfinite(row[x]);
      const double v = ok ? row[x] - mean : 0.0;
      ss += v * v;
      fr[x] = static_cast<float>(v);
      mr[x] = ok ? 1.0F : 0.0F;
    }
  }
  if (!(ss > 0.0)) return result;
  const cv::Size padded(cv::getOptimalDFTSize(2 * values.cols - 1),
                        cv::getOptimalDFTSize(2 * values.rows - 1));
  const cv::Mat acf = AutoCorrelation(f, padded);
  const cv::Mat pairs = AutoCorrelation(m, padded);
  const double var0 = ss / static_cast<double>(n);
  const double min_pairs = 0.25 * static_cast<double>(n);
  // rho at lag (dx, dy); NaN where too few pairs or beyond the field.
  auto rho = [&](int dx, int dy) {
    if (std::abs(dx) >= values.cols || std::abs(dy) >= values.rows) {
      return std::numeric_limits<double>::quiet_NaN();
    }
    const int px = (dx + padded.width) % padded.width;
    const int py = (dy + padded.height) % padded.height;
    const double count = static_cast<double>(pairs.at<float>(py, px));
    if (count < min_pairs) return std::numeric_limits<double>::quiet_NaN();
    return static_cast<double>(acf.at<float>(py, px)) / count / var0;
  };
  double r1 = 0.0;
  int k1 = 0;
  for (const auto& [dx, dy] : {std::pair{1, 0}, {-1, 0}, {0, 1}, {0, -1}}) {
    const double r = rho(dx, dy);
    if (std::isfinite(r)) {
      r1 += r;
      ++k1;
    }
  }
  result.rho1 = k1 > 0 ? r1 / k1 : 0.0;

  // Central lobe above 1/e: flood fill over the lags from lag 0.
  const double threshold = std::exp(-1.0);
  const int w = 2 * values.cols - 1;
  const int h = 2 * values.rows - 1;
  std::vector<unsigned char> seen(static_cast<std::size_t>(w) * h, 0);
  std::vector<std::pair<int, int>> stack = {{0, 0}};
  auto index = [&](int dx, int dy) {
    return static_cast<std::size_t>(dy + values.rows - 1) * w +
           static_cast<std::size_t>(dx + values.cols - 1);
  };
  seen[index(0, 0)] = 1;
  long count = 0;
  while (!stack.empty()) {
    const auto [dx, dy] = stack.back();
    stack.pop_back();
    ++count;
    for (const auto& [ex, ey] : {std::pair{1, 0}, {-1, 0}, {0, 1}, {0, -1}}) {
      const int nx = dx + ex;
      const int ny = dy + ey;
      if (std::abs(nx) >= values.cols || std::abs(ny) >= values.rows) continue;
      if (seen[index(nx, ny)] != 0) continue;
      seen[index(nx, ny)] = 1;
      const double r = rho(nx, ny);
      if (std::isfinite(r) && r > threshold) stack.emplace_back(nx, ny);
    }
  }
  if (static_cast<double>(count) < kSmallLobeCells) {
    // Gaussian model from the lags of one cell (header).
    result.area_cells =
        result.rho1 <= 0.0
            ? 0.0
            : (result.rho1 >= 1.0 ? static_cast<double>(count)
                                  : std::numbers::pi / -std::log(result.rho1));
    if (result.area_cells > kSmallLobeCells) {
      result.area_cells = static_cast<double>(count);
    }
  } else {
    result.area_cells = static_cast<double>(count);
  }
  return result;
}

}  // namespace figura
