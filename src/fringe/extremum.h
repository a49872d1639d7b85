// Sub-pixel location of fringe extrema along a profile and the dominant
// period of a periodic profile. The profile coordinate is generic (r^2 in
// px^2 for Newton's rings, a distance along a trace for other fringes), so
// these pieces serve ring detection and closed-fringe tracing alike.
#pragma once

#include <span>

namespace figura {

// Offset (in sample units, from the middle sample) of the vertex of the
// parabola through three equally spaced samples y(-1), y(0), y(+1):
//   delta = (y_minus - y_plus) / (2 (y_minus - 2 y_zero + y_plus)),
// clamped to [-1, 1]; 0 when the samples are collinear. [practice: the
// three-point parabolic peak interpolation]
double ParabolaVertexOffset(double y_minus, double y_zero, double y_plus);

// Result of a local cosine fit around one extremum.
struct ExtremumFit {
  bool ok = false;
  double position = 0.0;    // profile coordinate of the extremum
  double sigma = 0.0;       // standard uncertainty of position, same unit
  double amplitude = 0.0;   // cosine amplitude (> 0), profile value units
  double offset = 0.0;      // local mean level b at the extremum
  double noise = 0.0;       // RMS residual per unit weight
  int samples = 0;          // samples used in the final window
  double weight_sum = 0.0;  // sum of the weights in the final window
};

// Settings of FitCosineExtremum.
struct ExtremumFitOptions {
  bool fit_slope = true;      // include the linear term c (s - s0)
  int max_iterations = 4;     // window re-centring passes
  double max_shift = 0.5;     // largest allowed move from the guess, in periods
  int min_samples = 8;        // fewer samples with weight > 0: not ok
  double min_coverage = 0.6;  // fraction of the window span that must hold data
};

// Locates the extremum (a minimum when `minimum`, else a maximum) nearest to
// s_guess in a profile sampled at increasing s, by weighted least squares of
//   v(s) = b + c x + a cos(2 pi x) + d sin(2 pi x),  x = (s - s0) / period,
// over one period centred on s0, re-centring s0 on the result. The extremum
// of the fundamental is at x = atan2(d, a) / (2 pi) (maximum) or
// atan2(-d, -a) / (2 pi) (minimum); its variance follows from the fit
// covariance (weights are inverse variances up to a common factor, estimated
// from the residuals). [practice: local sinusoid fit for fringe centres, as
// in Malacara, Servin & Malacara, Interferogram Analysis for Optical
// Testing, ch. on fringe-centre location]
ExtremumFit FitCosineExtremum(std::span<const double> s,
                              std::span<const double> value,
                              std::span<const double> weight, double s_guess,
                              double period, bool minimum,
                              const ExtremumFitOptions& options = {});

// Dominant period of a uniformly sampled profile.
struct PeriodEstimate {
  bool ok = false;
  double period = 0.0;  // in the unit of `spacing`
  double peak_ratio =
      0.0;  // spectral peak power / median power in the search band
};

// Estimates the dominant period of `value` (sample spacing `spacing`,
// samples with weight 0 treated as missing) from the peak of the Hann-
// windowed, zero-padded spectrum (cv::dft, getOptimalDFTSize), with Gaussian
// (log-parabolic) sub-bin interpolation of the peak, searching periods in
// [min_period, max_period]. [practice: windowed-FFT frequency estimation;
// Gaussian interpolation, e.g. Gasior & Gonzalez, CERN AB-Note-2004-021]
PeriodEstimate EstimatePeriod(std::span<const double> value,
                              std::span<const double> weight, double spacing,
                              double min_period, double max_period);

}  // namespace figura
