// Carrier (open-fringe) demodulation by the Fourier-transform method
// (M. Takeda, H. Ina, S. Kobayashi, "Fourier-transform method of
// fringe-pattern analysis for computer-based topography and
// interferometry", J. Opt. Soc. Am. 72(1), 156-160, 1982), with the fringes
// extended beyond the aperture by a Gerchberg-type band-limited
// extrapolation (F. Roddier, C. Roddier, "Interferogram analysis using
// Fourier transform techniques", Appl. Opt. 26(9), 1668-1673, 1987) so that
// the aperture edge does not bias the low-order terms.
//
// Image axes here: x right (column), y down (row), pixel centres at integer
// coordinates, origin at the top-left pixel.
//
// Sign: the returned phase is psi(x, y) with
//   I(x, y) ~ a + b cos(2 pi (f_x x + f_y y) + psi(x, y)),
// f = carrier_cycles_per_px chosen in the half-plane f_x > 0 (or f_x == 0,
// f_y > 0). The phase including the carrier is 2 pi f.x + psi; a caller that
// wants the total adds the plane back after unwrapping.
#pragma once

#include <opencv2/core.hpp>
#include <string>
#include <vector>

#include "core/error.h"

namespace figura {

// Settings of DemodulateCarrier.
struct CarrierOptions {
  // Sideband filter radius as a fraction of the carrier frequency distance
  // |f| (0 < value < 1). The radius actually used may be smaller where the
  // DC lobe of the spectrum reaches closer (see CarrierResult messages).
  double sideband_fraction = 0.5;
  // Gerchberg extrapolation iterations (0 = none, plain Takeda).
  int extension_iterations = 10;
  // Fewest carrier fringes across the mask's extent for a usable carrier.
  int min_fringes = 3;
  // Pixels whose modulation is below this fraction of the mask's median
  // modulation are not valid (dust, defects, dead areas).
  double min_relative_modulation = 0.3;
  // The demodulated field is computed on a reduced grid (the sideband is
  // band-limited, so this loses nothing) whose longer side is about this
  // many pixels, or more when the sideband needs it; the results are
  // interpolated back to full resolution. 0 = the padded full size.
  int working_size_px = 1024;

  // Empty when usable, else a readable reason.
  [[nodiscard]] std::string Check() const;
};

// Outcome of the spectral carrier test.
struct CarrierProbe {
  bool found = false;
  // Carrier frequency (cycles per pixel, image axes), sub-bin estimate,
  // in the half-plane described above. Zero when no peak was found.
  cv::Point2d carrier_cycles_per_px;
  // Share of the spectral energy outside the DC lobe (one half-plane) that
  // lies within the sideband disc around the peak: near 1 for clean
  // straight fringes, small for closed fringes or noise.
  double peak_ratio = 0.0;
  // Carrier fringes across the mask's extent along the carrier direction.
  double fringe_count = 0.0;
  // Carrier period shorter than about 3 px, or its sideband overlapping the
  // DC lobe or the Nyquist limit.
  bool aliased = false;
  // Why no usable carrier was found (empty when found).
  std::string reason;
};

// The demodulated field.
struct CarrierResult {
  Status status = Status::kOk;
  std::vector<std::string> messages;
  // CV_32FC1, full resolution: wrapped phase psi (radians, in [-pi, pi)),
  // carrier removed, NaN outside the mask.
  cv::Mat phase;
  // CV_32FC1: fringe modulation b / a (0..1, larger is better), 0 outside
  // the mask.
  cv::Mat modulation;
  // CV_8UC1: 255 where usable (mask minus dust / low modulation).
  cv::Mat valid;
  // Carrier frequency used (cycles per pixel, image axes), sub-bin.
  cv::Point2d carrier_cycles_per_px;
  // Carrier fringes across the mask.
  double fringe_count = 0.0;
  bool aliased = false;
  // The probe the demodulation started from (no need to call ProbeCarrier
  // first: it costs one more full-size FFT).
  CarrierProbe probe;
  // Sideband filter radius used (cycles per pixel).
  double filter_radius_cycles_per_px = 0.0;

  // Already unwrapped (UnwrapPhase on the reduced grid, interpolated back):
  // CV_32FC1 radians, NaN outside `valid`; psi + 2 pi k, continuous. Use
  // this rather than UnwrapPhase(phase, valid) on a large image: it is the
  // same phase at a fraction of the cost.
  cv::Mat unwrapped;
  // CV_8UC1: 255 where the unwrapping is unreliable (from UnwrapResult).
  cv::Mat unreliable;
  double unreliable_fraction = 0.0;
  int regions = 0;  // separately unwrapped pieces
};

// Detects whether `image` (CV_32FC1 or CV_16UC1 or CV_8UC1) has a usable
// carrier inside `mask` (CV_8UC1, 255 inside): the strongest spectral peak
// of the masked, mean-removed image outside the DC lobe, and its energy
// share. Throws InputError on an empty image or a size mismatch.
CarrierProbe ProbeCarrier(const cv::Mat& image, const cv::Mat& mask);

// Demodulates the carrier fringes of `image` inside `mask` (see the file
// comment). status kError (with a message, and aliased set where that is
// the reason) when there is no usable carrier; kWarning when parts are
// unreliable. Throws InputError for invalid options, an empty image or a
// size mismatch.
CarrierResult DemodulateCarrier(const cv::Mat& image, const cv::Mat& mask,
                                const CarrierOptions& options);

}  // namespace figura
