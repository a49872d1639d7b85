// Ring detection: from a photograph of Newton's rings to located fringe
// centres. Flattens the illumination, finds the clear aperture, the ring
// centre (sub-pixel), the fringe period in r^2, and the sub-pixel radius of
// every dark and bright fringe in many azimuth sectors. The model fit (orders,
// radius of curvature, uncertainty) lives in ring_fit.h.
#pragma once

#include <limits>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/error.h"
#include "optics/media.h"

namespace figura {

// Settings of ring detection.
struct RingDetectionOptions {
  // Clear aperture given by the user (pixels); detected when absent.
  std::optional<cv::Point2d> aperture_centre_px;
  std::optional<double> aperture_diameter_px;
  // Fraction of the aperture radius evaluated (the polished edge is often
  // rolled or chipped).
  double aperture_fraction = 0.95;
  // Number of azimuth sectors in which fringes are located.
  int sectors = 36;
  // Pixel value of a saturated pixel (e.g. 65535 for 16-bit, 255 for 8-bit
  // photos); when absent, the image maximum is taken as full scale.
  std::optional<double> full_scale;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// One located fringe centre: an intensity extremum along a radius of one
// azimuth sector.
struct FringePoint {
  double x_px = 0.0;  // image position, pixel centres at integer coordinates
  double y_px = 0.0;
  double angle_rad =
      0.0;  // sector azimuth about the ring centre, atan2(y - cy, x - cx)
  double radius_px = 0.0;  // distance from the ring centre
  double sigma_px = 0.0;   // standard uncertainty of radius_px
  FringeState kind = FringeState::kDark;
  // Fringe number counted outward in half-periods from the innermost dark
  // fringe of the azimuthal mean profile: dark fringes even (0, 2, 4, ...),
  // bright fringes odd. Consistent across sectors, so that the fit can
  // assign absolute orders as order = index / 2 + constant.
  int index = 0;
  int sector = 0;
};

// Time spent in one stage of a computation.
struct StageTime {
  std::string name;
  double wall_s = 0.0;  // elapsed (wall-clock) seconds
  double cpu_s = 0.0;   // processor seconds of the whole process (all threads)
};

// The outcome of ring detection.
struct RingDetectionResult {
  Status status = Status::kError;
  std::vector<std::string> messages;  // warnings and the reason on error

  cv::Point2d aperture_centre_px;
  double aperture_radius_px =
      0.0;                         // evaluated radius (after aperture_fraction)
  bool aperture_detected = false;  // false: taken from the options

  cv::Point2d centre_px;         // ring centre
  double centre_sigma_px = 0.0;  // standard uncertainty of each coordinate
  double period_r2_px2 =
      0.0;                  // fringe period in r^2 (px^2) = lambda R / (n p^2)
  double visibility = 0.0;  // (Imax - Imin)/(Imax + Imin) of the raw fringes
  FringeState centre_observed = FringeState::kDark;  // state at the ring centre
  int sectors = 0;
  std::vector<FringePoint> points;

  // r^2 (px^2) of the dark fringe numbered 0 in the azimuthal mean profile,
  // in [-P/4, 3P/4) with P = period_r2_px2 (negative: the dark fringe lies
  // "before" the centre, e.g. a gap at contact). Dark fringe 2k is expected
  // at first_dark_r2_px2 + k P, bright fringe 2k+1 half a period further.
  double first_dark_r2_px2 = 0.0;
  // Number of fringe periods spanned by r^2 over the evaluated aperture.
  double fringes_in_aperture = 0.0;
  // Fraction of the evaluated aperture's pixels at full scale.
  double saturated_fraction = 0.0;
  // Blur read from the fringe contrast: under a Gaussian PSF of standard
  // deviation sigma the chirp cos(c r^2), c = 2 pi / P, keeps the
  // visibility exp(-k r^2) with k = 2 c^2 sigma^2 and reads its period in
  // r^2 (1 + 4 c^2 sigma^4) = (1 + k^2 / c^2) times too long (convolution
  // of a Gaussian with a quadratic phase; e.g. Goodman, Introduction to
  // Fourier Optics, ch. 4 [from memory]). k comes from a least-squares
  // line of ln(a / m) against r^2 over the flattening's envelopes (local
  // amplitude a over local mean m: illumination fall-off cancels).
  // blur_sigma_px = sqrt(k / (2 c^2)) (NaN when not estimated; 0 when the
  // contrast does not fall) and blur_bias_rel = k^2 / c^2, the fraction by
  // which that blur makes R read high. A broad-band source also lowers the
  // contrast with r^2 (without that bias): both read as blur here.
  double blur_sigma_px = std::numeric_limits<double>::quiet_NaN();
  double blur_bias_rel = 0.0;
  // Time spent in each detection stage, in order, for speed measurements
  // (tests/benchmarks/bench_rings.cpp).
  std::vector<StageTime> stage_times;
};

// Detects rings in a grey image (CV_32FC1, any scale). Returns status kError
// with a reason (no fringes, saturated, too few rings, centre outside the
// image) rather than throwing; throws InputError only for invalid options.
RingDetectionResult DetectRings(const cv::Mat& image,
                                const RingDetectionOptions& options);

}  // namespace figura
