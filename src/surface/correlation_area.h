// Correlation area of a sampled field (e.g. the residual map of a Zernike
// fit) from its normalised autocorrelation, for the effective number of
// independent samples of spatially correlated data.
//
// Least squares on N correlated samples behaves like least squares on N_eff
// independent ones: for a field with normalised autocorrelation rho(lag),
// the variance of a mean (and of any linear estimate over many correlation
// lengths) is sigma^2 / N * sum_lag rho(lag), so N_eff = N / sum_lag rho
// (the effective sample size of autocorrelated data; Bretherton, Widmann,
// Dymnikov, Wallace & Blade, "The effective number of spatial degrees of
// freedom of a time-varying field", J. Climate 12, 1990, 1999 [memory]; von
// Storch & Zwiers, Statistical Analysis in Climate Research, sec. 17.1
// [memory]). The sum over all lags of a fit residual is zero (the fit
// removes its mean), so the sum is not estimated directly: we take the
// area (in grid cells) of the central lobe where rho > 1/e, which equals
// sum_lag rho for a Gaussian autocorrelation exp(-d^2 / L^2) (both pi L^2).
#pragma once

#include <opencv2/core.hpp>

namespace figura {

// The correlation area of one field, in cells of its grid.
struct CorrelationArea {
  // Area of the central lobe of the normalised autocorrelation where rho >
  // 1/e, cells (0 for uncorrelated samples). Counted over the lags connected
  // to lag 0; when that lobe is small (L under about 2.5 cells, where
  // counting lattice points is too coarse) it is pi L^2 with L^2 = -1 / ln
  // rho_1 from the mean autocorrelation rho_1 of the four lags of one cell
  // (the Gaussian model above).
  double area_cells = 0.0;
  // Mean normalised autocorrelation at the four lags of one cell.
  double rho1 = 0.0;
  long samples = 0;  // finite samples used
};

// The correlation area of `field` (CV_32FC1 or CV_64FC1, NaN where there is
// no sample), its mean removed. The autocorrelation is taken by FFT (cv::dft
// on optimal sizes, zero-padded to avoid wrap-around) and normalised by the
// number of sample pairs at each lag; lags with fewer than a quarter of the
// samples' pairs are not used. A field with fewer than 2 samples or no
// variance has area 0.
CorrelationArea MeasureCorrelationArea(const cv::Mat& field);

}  // namespace figura
