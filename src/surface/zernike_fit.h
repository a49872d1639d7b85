// Least-squares Zernike fits to surface heights (ISO 24157 single index,
// RMS-normalised basis from surface/zernike.h), with the covariance of the
// coefficients. Used by the surface map (surface_map.h) and the form metrics
// (form_metrics.h).
#pragma once

#include <Eigen/Core>
#include <opencv2/core.hpp>
#include <span>
#include <string>
#include <vector>

#include "core/error.h"
#include "fringe/circle.h"

namespace figura {

// One height sample at normalised surface coordinates (x right, y up, origin
// at the aperture centre, rho = 1 at the evaluated edge; design.md).
struct SurfaceSample {
  double x = 0.0;
  double y = 0.0;
  double height_m = 0.0;  // height in metres
  double weight = 1.0;    // relative weight (> 0), e.g. 1 / variance
};

// Most grid cells across the aperture diameter on which FitZernikeGrid
// measures the residual correlation (a coarser multiple of the stride
// above; keeps the autocorrelation FFT small).
inline constexpr int kCorrelationGridCells = 512;

// Settings of a Zernike fit.
struct ZernikeFitOptions {
  // Highest radial order fitted: all ZernikeCount(max_order) polynomials
  // j = 0 .. (n+1)(n+2)/2 - 1 (piston and tilt included). 1 ..
  // ZernikePolynomial::kMaxOrder (12), so that the fitted surface can be
  // evaluated on pixel grids.
  int max_order = 8;
  // FitZernikeGrid: cap on the samples used. Above it, the valid pixels are
  // taken on a regular stride s x s (s the smallest integer with
  // valid / s^2 <= max_samples) [practice: a regular subsample keeps the
  // basis nearly orthogonal and the fit unbiased for smooth maps].
  int max_samples = 400000;

  // Empty when usable, otherwise a readable reason naming the option.
  [[nodiscard]] std::string Check() const;
};

// The fitted coefficients with their uncertainties.
struct ZernikeFitResult {
  Status status = Status::kOk;
  std::vector<std::string> messages;
  int max_order = 0;  // radial order fitted
  // c_j in metres, ISO j = 0 .. ZernikeCount(max_order) - 1; height =
  // sum_j c_j Z_j(x, y). Empty when status is kError.
  std::vector<double> coefficients_m;
  // Standard uncertainties sqrt(diag(covariance_m2)), metres.
  std::vector<double> u_m;
  // Covariance of the coefficients, f sigma^2 (A^T W A)^-1 with sigma^2 =
  // sum w r^2 / (N - P) from the weighted residuals r (ordinary weighted
  // least squares; e.g. Bevington & Robinson, Data Reduction and Error
  // Analysis, 3rd ed., ch. 7 [memory]) and f = covariance_inflation: 1 for
  // FitZernike (independent samples); FitZernikeGrid sets it for the
  // spatially correlated residuals of a map (see there).
  Eigen::MatrixXd covariance_m2;
  double residual_rms_m = 0.0;  // weighted RMS of the fit residuals, metres
  long samples = 0;             // samples used in the fit
  int stride = 1;               // FitZernikeGrid: subsampling stride (px)
  // Factor applied to the independent-sample covariance (FitZernikeGrid;
  // 1 when the residuals are uncorrelated at the sample spacing).
  double covariance_inflation = 1.0;
  // Effectively independent samples N_eff (FitZernike: the samples;
  // FitZernikeGrid: samples / f, see there).
  double effective_samples = 0.0;
  // FitZernikeGrid: 1/e area of the residual autocorrelation (px^2,
  // surface/correlation_area.h); 0 for FitZernike.
  double correlation_area_px = 0.0;
};

// Weighted least-squares fit of Z_0 .. Z_{P-1}, P = ZernikeCount(max_order),
// to the samples (normal equations, solved by a symmetric eigen
// decomposition of the column-equilibrated matrix). Status kError with a
// readable message for invalid options (Check), fewer than 3 P samples,
// non-finite or non-positive weights, or a singular system (e.g. samples
// along a line, or an aperture too partial to separate the terms: condition
// number above 1e12). Samples outside the unit disk are used as given.
ZernikeFitResult FitZernike(std::span<const SurfaceSample> samples,
                            const ZernikeFitOptions& options);

// The same fit to a height map: `height_m` is CV_32FC1 (or CV_64FC1) in
// metres over image pixels, NaN where invalid. Pixels with finite height and
// rho <= 1 in `aperture_px` are used, at most options.max_samples of them
// (regular stride, see ZernikeFitOptions), all with weight 1. Pixel (px, py)
// maps to surface coordinates by SurfacePoint (y flipped).
// Map residuals are spatially correlated (the filtering of the fringe
// analysis, unfitted smooth detail), so the covariance is that of N_eff =
// N / f effectively independent samples (Bretherton et al., J. Climate 12,
// 1990, 1999 [memory]): f = max(1, A / s^2) with A the 1/e correlation
// area (px^2) of the residual map, measured on the sample grid (stride s;
// coarsened so that at most kCorrelationGridCells cells span the aperture)
// by MeasureCorrelationArea (surface/correlation_area.h), and sigma^2 taken
// on N_eff - P degrees of freedom: covariance_inflation = f (N - P) N_eff /
// (N (N_eff - P)) (N_eff - P at least 1). docs/method.md, section 13.1.
ZernikeFitResult FitZernikeGrid(const cv::Mat& height_m,
                                const Circle& aperture_px,
                                const ZernikeFitOptions& options);

// Normalised surface coordinates of pixel (px, py): x = (px - cx) / r,
// y = (cy - py) / r with the aperture centre (cx, cy) and radius r in px
// (pixel centres at integer coordinates; design.md). Asserts r > 0.
cv::Point2d SurfacePoint(const Circle& aperture_px, double px, double py);

// sum_j coefficients_m[j] Z_j over an image of `size`, CV_32FC1 in metres,
// NaN where `valid` (CV_8UC1, may be empty = everywhere) is zero. Points
// outside the unit disk get the polynomial continuation. Coefficients of
// radial order above ZernikePolynomial::kMaxOrder are not accepted
// (asserted).
cv::Mat EvaluateZernikeGrid(std::span<const double> coefficients_m,
                            const Circle& aperture_px, cv::Size size,
                            const cv::Mat& valid = cv::Mat());

}  // namespace figura
