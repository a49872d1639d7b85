#include "fringe/extremum.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cassert>
#include <cmath>
#include <numbers>
#include <opencv2/core.hpp>
#include <vector>

namespace figura {

double ParabolaVertexOffset(double y_minus, double y_zero, double y_plus) {
  const double denominator = y_minus - 2.0 * y_zero + y_plus;
  if (denominator == 0.0 || !std::isfinite(denominator)) return 0.0;
  const double delta = 0.5 * (y_minus - y_plus) / denominator;
  return std::clamp(delta, -1.0, 1.0);
}

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

// One weighted least-squares pass over the window centred on s0. The basis
// (1, cos 2 pi x, sin 2 pi x[, x]) of each sample is evaluated once and kept
// for the residuals.
ExtremumFit FitOnce(std::span<const double> s, std::span<const double> value,
                    std::span<const double> weight, double s0, double period,
                    bool minimum, const ExtremumFitOptions& options) {
  ExtremumFit fit;
  const double half = 0.5 * period;
  const auto begin = std::lower_bound(s.begin(), s.end(), s0 - half);
  const auto end = std::upper_bound(s.begin(), s.end(), s0 + half);
  const auto first = static_cast<std::size_t>(begin - s.begin());
  const auto last = static_cast<std::size_t>(end - s.begin());
  // Unknowns b, a, d (and c with the slope). The residual degrees of
  // freedom subtract one more than the unknowns, as this fit always has
  // (a slightly conservative noise estimate).
  const int unknowns = options.fit_slope ? 4 : 3;
  const int parameters = unknowns + 1;
  struct Sample {
    double w, v, cos_u, sin_u, x;
  };
  // The window's samples, kept for the residuals; one buffer per thread
  // (this runs thousands of times per photo, from parallel sectors).
  thread_local std::vector<Sample> used_samples;
  used_samples.clear();
  // Upper triangle of the normal matrix of the basis (1, cos, sin, x),
  // accumulated by hand (a 4 x 4 rank update per sample).
  double n00 = 0.0, n01 = 0.0, n02 = 0.0, n03 = 0.0, n11 = 0.0, n12 = 0.0,
         n13 = 0.0, n22 = 0.0, n23 = 0.0, n33 = 0.0;
  Eigen::Vector4d rhs = Eigen::Vector4d::Zero();
  double x_min = 1.0;
  double x_max = -1.0;
  double weight_sum = 0.0;
  for (std::size_t i = first; i < last; ++i) {
    const double w = weight[i];
    if (!(w > 0.0) || !std::isfinite(value[i])) continue;
    const double x = (s[i] - s0) / period;
    const double c = std::cos(kTwoPi * x);
    const double d = std::sin(kTwoPi * x);
    const double t = options.fit_slope ? x : 0.0;
    const double wc = w * c;
    const double wd = w * d;
    const double wt = w * t;
    n00 += w;
    n01 += wc;
    n02 += wd;
    n03 += wt;
    n11 += wc * c;
    n12 += wc * d;
    n13 += wc * t;
    n22 += wd * d;
    n23 += wd * t;
    n33 += wt * t;
    const double wv = w * value[i];
    rhs(0) += wv;
    rhs(1) += wv * c;
    rhs(2) += wv * d;
    rhs(3) += wv * t;
    weight_sum += w;
    x_min = std::min(x_min, x);
    x_max = std::max(x_max, x);
    used_samples.push_back({w, value[i], c, d, x});
  }
  const auto used = static_cast<int>(used_samples.size());
  fit.samples = used;
  fit.weight_sum = 0.0;
  if (used < std::max(options.min_samples, parameters + 2)) return fit;
  if (x_max - x_min < options.min_coverage) return fit;
  Eigen::Matrix4d normal;
  normal << n00, n01, n02, n03,  //
      n01, n11, n12, n13,        //
      n02, n12, n22, n23,        //
      n03, n13, n23, n33;
  if (!options.fit_slope) normal(3, 3) = 1.0;  // c fixed at 0 (rhs(3) = 0)
  const Eigen::LDLT<Eigen::Matrix4d> ldlt(normal);
  if (ldlt.info() != Eigen::Success) return fit;
  const Eigen::Vector4d coefficients = ldlt.solve(rhs);
  // Residuals.
  double residual_sum = 0.0;
  for (const Sample& sample : used_samples) {
    const double model = coefficients(0) + coefficients(1) * sample.cos_u +
                         coefficients(2) * sample.sin_u +
                         coefficients(3) * sample.x;
    const double r = sample.v - model;
    residual_sum += sample.w * r * r;
  }
  const double variance = residual_sum / static_cast<double>(used - parameters);
  // Only the (cos, sin) block of the covariance is needed: two columns of
  // the inverse normal matrix.
  Eigen::Matrix<double, 4, 2> unit = Eigen::Matrix<double, 4, 2>::Zero();
  unit(1, 0) = 1.0;
  unit(2, 1) = 1.0;
  const Eigen::Matrix<double, 4, 2> columns = variance * ldlt.solve(unit);
  const double cov11 = columns(1, 0);
  const double cov22 = columns(2, 1);
  const double cov12 = columns(1, 1);
  const double ca = coefficients(1);
  const double cd = coefficients(2);
  const double amplitude2 = ca * ca + cd * cd;
  if (!(amplitude2 > 0.0)) return fit;
  const double u = minimum ? std::atan2(-cd, -ca) : std::atan2(cd, ca);
  const double var_u =
      (cd * cd * cov11 + ca * ca * cov22 - 2.0 * ca * cd * cov12) /
      (amplitude2 * amplitude2);
  fit.position = s0 + u / kTwoPi * period;
  fit.sigma = std::sqrt(std::max(var_u, 0.0)) / kTwoPi * period;
  fit.amplitude = std::sqrt(amplitude2);
  fit.offset = coefficients(0) + coefficients(3) * u / kTwoPi;
  fit.noise = std::sqrt(variance * static_cast<double>(used) / weight_sum);
  fit.weight_sum = weight_sum;
  fit.ok = std::isfinite(fit.position) && std::isfinite(fit.sigma);
  return fit;
}

}  // namespace

ExtremumFit FitCosineExtremum(std::span<const double> s,
                              std::span<const double> value,
                              std::span<const double> weight, double s_guess,
                              double period, bool minimum,
                              const ExtremumFitOptions& options) {
  assert(s.size() == value.size() && s.size() == weight.size());
  ExtremumFit fit;
  if (!(period > 0.0) || s.empty()) return fit;
  double s0 = s_guess;
  for (int iteration = 0; iteration < std::max(1, options.max_iterations);
       ++iteration) {
    fit = FitOnce(s, value, weight, s0, period, minimum, options);
    if (!fit.ok) return fit;
    if (std::abs(fit.position - s_guess) > options.max_shift * period) {
      fit.ok = false;
      return fit;
    }
    const bool converged = std::abs(fit.position - s0) < 1e-4 * period;
    s0 = fit.position;
    if (converged) break;
  }
  return fit;
}

PeriodEstimate EstimatePeriod(std::span<const double> value,
                              std::span<const double> weight, double spacing,
                              double min_period, double max_period) {
  assert(value.size() == weight.size());
  PeriodEstimate estimate;
  const int n = static_cast<int>(value.size());
  if (n < 8 || !(spacing > 0.0) || !(min_period > 0.0) ||
      !(max_period > min_period)) {
    return estimate;
  }
  double sum = 0.0;
  double weight_sum = 0.0;
  for (int i = 0; i < n; ++i) {
    if (weight[i] > 0.0 && std::isfinite(value[i])) {
      sum += weight[i] * value[i];
      weight_sum += weight[i];
    }
  }
  if (!(weight_sum > 0.0)) return estimate;
  const double mean = sum / weight_sum;
  const int padded = cv::getOptimalDFTSize(4 * n);
  cv::Mat signal = cv::Mat::zeros(1, padded, CV_64F);
  auto* data = signal.ptr<double>();
  for (int i = 0; i < n; ++i) {
    if (weight[i] > 0.0 && std::isfinite(value[i])) {
      const double hann =
          0.5 - 0.5 * std::cos(2.0 * std::numbers::pi * (i + 0.5) /
                               static_cast<double>(n));
      data[i] = (value[i] - mean) * hann;
    }
  }
  cv::Mat spectrum;
  cv::dft(signal, spectrum, cv::DFT_COMPLEX_OUTPUT);
  const auto* complex = spectrum.ptr<double>();
  const double length = spacing * static_cast<double>(padded);
  const int k_low =
      std::max(2, static_cast<int>(std::floor(length / max_period)));
  const int k_high = std::min(padded / 2 - 2,
                              static_cast<int>(std::ceil(length / min_period)));
  if (k_high <= k_low + 2) return estimate;
  std::vector<double> power(static_cast<std::size_t>(padded / 2), 0.0);
  for (int k = 1; k < padded / 2; ++k) {
    const double re = complex[2 * static_cast<std::ptrdiff_t>(k)];
    const double im = complex[2 * static_cast<std::ptrdiff_t>(k) + 1];
    power[static_cast<std::size_t>(k)] = re * re + im * im;
  }
  int best = k_low;
  for (int k = k_low; k <= k_high; ++k) {
    if (power[static_cast<std::size_t>(k)] >
        power[static_cast<std::size_t>(best)])
      best = k;
  }
  std::vector<double> band(power.begin() + k_low, power.begin() + k_high + 1);
  std::nth_element(band.begin(),
                   band.begin() + static_cast<std::ptrdiff_t>(band.size() / 2),
                   band.end());
  const double median = band[band.size() / 2];
  const double peak = power[static_cast<std::size_t>(best)];
  if (!(peak > 0.0)) return estimate;
  const double tiny = peak * 1e-300;
  const double delta = ParabolaVertexOffset(
      std::log(power[static_cast<std::size_t>(best) - 1] + tiny),
      std::log(peak),
      std::log(power[static_cast<std::size_t>(best) + 1] + tiny));
  estimate.period = length / (static_cast<double>(best) + delta);
  estimate.peak_ratio = median > 0.0 ? peak / median : 1e300;
  estimate.ok = std::isfinite(estimate.period) && best > k_low && best < k_high;
  return estimate;
}

}  // namespace figura
