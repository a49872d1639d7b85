// Closed fringes (no carrier, e.g. the rings between a part and its test
// plate): fringe-centre tracing with order numbering. Every traced dark and
// bright fringe centre becomes a sample of the gap,
//   gap = (k + d) lambda / (2 n_gap) + constant,
// with k the fringe order (half-integers for bright fringes), d the minimum
// offset of the media rule (optics/media.h RuleFor) and an unknown constant
// (piston). Tracing follows Malacara, Servin & Malacara, Interferogram
// Analysis for Optical Testing (fringe-centre methods with order numbering);
// the centres come from the ring detection of fringe/ring_detection.h
// (sub-pixel extrema along the radii of many azimuth sectors about the ring
// centre), which copes with off-centre and elliptical rings.
//
// Sign: one photograph cannot tell whether the gap grows or shrinks away
// from the ring centre. It comes from the press test (`--contact`): contact
// at the centre means the orders (and the gap) increase outward; contact at
// the edge means they decrease outward (the gap is largest at the centre).
#pragma once

#include <opencv2/core.hpp>
#include <string>
#include <vector>

#include "core/error.h"
#include "fringe/circle.h"
#include "fringe/ring_detection.h"
#include "optics/media.h"
#include "optics/sphere.h"

namespace figura {

// Fraction of the clear aperture's radius over which a map traces closed
// fringes: more than the map's evaluated fraction (0.95), so that a photo
// with about 3 fringes of power still shows the 3 fringes the ring
// detection needs, and the fit is held by samples just beyond rho = 1
// [practice: the edge 1 % is lost to the blurred rim].
inline constexpr double kClosedTraceFraction = 0.99;

// Settings of closed-fringe tracing.
struct ClosedFringeOptions {
  // Aperture overrides, evaluated fraction, sectors (72 by default here:
  // a map wants denser sampling than a radius fit).
  RingDetectionOptions detection = [] {
    RingDetectionOptions d;
    d.sectors = 72;
    d.aperture_fraction = kClosedTraceFraction;
    return d;
  }();
  MediaStack stack;
  View view = View::kReflected;
  // Test wavelength in air (m).
  double wavelength_m = 546.074e-9;
  // Where the surfaces touch (from the press test); sets the sign.
  Contact contact = Contact::kCentre;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// One traced fringe centre as a sample of the gap.
struct GapSample {
  double x_px = 0.0;  // image position (pixel centres at integers, y down)
  double y_px = 0.0;
  double gap_m = 0.0;    // gap up to a constant (piston), signed by `contact`
  double sigma_m = 0.0;  // standard uncertainty of gap_m from the position
                         // uncertainty and the local fringe slope
  double order = 0.0;    // fringe order k + d (bright fringes at + 1/2)
  int sector = 0;
};

// The outcome of tracing.
struct ClosedFringeResult {
  Status status = Status::kError;
  std::vector<std::string> messages;  // warnings and the reason on error
  RingDetectionResult detection;      // the located fringe centres
  Circle aperture_px;                 // evaluated aperture (pixels)
  std::vector<GapSample> samples;
  double fringes_in_aperture = 0.0;  // fringe periods across the aperture
  int rings = 0;                     // distinct fringe orders traced
};

// Traces the closed fringes of a grey image (CV_32FC1, any scale) into gap
// samples. Unusable photographs (no fringes, too few, saturated) give status
// kError with a reason; throws InputError only for invalid options.
ClosedFringeResult TraceClosedFringes(const cv::Mat& image,
                                      const ClosedFringeOptions& options);

// Highest Zernike radial order the traced samples support: the number of
// distinct fringes limits the radial resolution and the sector count the
// azimuthal one; at most `requested`. Rule [practice]: radial order <= 2 *
// (rings - 1) and <= sectors / 4, never below 2.
int SupportedClosedOrder(int rings, int sectors, int requested);

}  // namespace figura
