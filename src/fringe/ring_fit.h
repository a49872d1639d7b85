// The Newton's-ring model fit: from located fringe centres (or measured ring
// diameters) to the radius of curvature with its uncertainty, the order
// offset, sag, power and astigmatism in fringes, and, against a test plate
// of known radius, the part's radius.
//
// Model. A fringe of order m lies where the gap t satisfies
//   2 n_gap t / lambda = m + e
// (minima at m = k + d with d from the half-wave rule, RuleFor(stack,
// view).minimum_offset; maxima half an order further). For a sphere of
// radius R on a flat the paraxial form is r^2 = (lambda R / n_gap)(m + e)
// (Hecht, Optics, sec. 9.4; ../shared/references.md). The fit uses the
// paraxial quadratic form of the gap plus the exact higher-order sag terms:
//   sigma_c (m_i) - k H(r_i) = a x^2 + 2 b x y + c y^2 + d x + f y + g,
// k = 2 n_gap / lambda, H = exact gap - paraxial gap (exact sphere sag),
// sigma_c = +1 for contact at the centre, -1 at the edge. The conic's centre
// is the fringe centre, its mean curvature (a + c)/2 = n_gap/(lambda R_gap)
// gives the radius, its principal values the astigmatism. Weighted least
// squares with iterated robust (MAD) outlier rejection.
//
// Uncertainty (GUM, JCGM 100:2008, first-order propagation): the fit
// covariance (inflated by the Birge ratio when the reduced chi-square
// exceeds 1, or replaced by the sector-clustered sandwich covariance when
// that is larger, so that errors shared by the points of one azimuth sector
// are not averaged away), combined with the pixel-pitch uncertainty (R
// scales with pitch^2) and the wavelength uncertainty (R scales with
// 1/lambda); U95 = k u with coverage factor k = 2. For points from ring
// detection (RingFitOptions::detected_points) the fit covariance follows the
// residual scatter and a Type B ring-detection systematic is added (R and
// centre), calibrated by simulation: with it U95 covered the true R in 96 %
// of 50 random simulated photos (tests/fringe/ring_accuracy_test.cpp).
#pragma once

#include <limits>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/light_source.h"
#include "core/quantity.h"
#include "optics/media.h"
#include "optics/sphere.h"

namespace figura {

// Accepted range of the object-side pixel pitch (m): wider than any camera
// and lens but keeps the radius (proportional to pitch^2) finite.
inline constexpr double kMinPixelPitchM = 1e-9;
inline constexpr double kMaxPixelPitchM = 1.0;

// Settings of the ring model fit.
struct RingFitOptions {
  Wavelength
      wavelength;      // test wavelength in air, with its standard uncertainty
  Length pixel_pitch;  // object-side size of one pixel (image mode)
  Length pixel_pitch_u;          // standard uncertainty of the pixel pitch
  MediaStack stack;              // upper, gap and lower indices
  View view = View::kReflected;  // reflected or transmitted light
  // Test plate radius, signed as seen from the gap like every radius here
  // (optics/sphere.h): a concave plate that fits a +100 mm convex part is
  // -100 mm. Absent: a flat (plain Newton's rings, R of the part itself).
  std::optional<Length> reference_radius;
  Length reference_radius_u;           // its standard uncertainty
  Contact contact = Contact::kCentre;  // where the surfaces touch
  // Evaluated aperture diameter (object side). Absent: twice the largest
  // fringe radius used.
  std::optional<Length> aperture_diameter;
  // Test diameter (object side): the region over which sag, power and
  // astigmatism are reported (ISO 10110-5 tolerances apply over a stated
  // test region). Absent: the evaluated aperture.
  std::optional<Length> test_diameter;
  double outlier_threshold =
      4.0;  // rejection limit in robust (MAD) standard deviations
  double coverage_factor =
      2.0;  // k in U = k u (about 95 % for a normal distribution)
  int max_iterations = 12;  // of the reject-and-refit loop
  // True when the points' sigma_px are real standard uncertainties (image
  // mode): the covariance is then inflated only when the reduced chi-square
  // exceeds 1. False (measured diameters without stated uncertainties):
  // equal weights in radius, covariance scaled by the residual scatter.
  bool point_sigmas_known = true;
  // True when the points were located by ring detection in a photograph
  // (AnalyseRings). Then (1) the detection's point sigmas serve as relative
  // weights and the covariance follows the residual scatter (reduced
  // chi-square scaling in both directions; the sigmas were measured to be
  // about twice the real scatter), and (2) a Type B ring-detection
  // systematic term u_rel_detection (see RingFitResult) enters the budget.
  bool detected_points = false;
  // With detected_points: the relative bias of R that the blur read from
  // the photo implies (RingDetectionResult::blur_bias_rel; set by
  // AnalyseRings, not a user setting). It replaces the calibrated
  // short-period term of u_rel_detection when larger.
  double detection_blur_bias_rel = 0.0;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// One observation for the fit: a fringe point in pixels (image mode) or a
// ring radius on the x axis in pixels of size pixel_pitch (diameter mode).
struct RingFitPoint {
  double x_px = 0.0;
  double y_px = 0.0;
  double sigma_px = 1.0;  // standard uncertainty of the radial position
  double order = 0.0;  // relative fringe order (increasing outward), minima at
                       // integers + d
  int sector = 0;      // azimuth sector: points of one sector share errors
};

// How the conic is fitted.
enum class RingModel {
  kConic,      // free centre, astigmatism: a, b, c, d, f, g (image mode)
  kIsotropic,  // fixed centre, r^2 and a constant (diameter mode, >= 2 rings)
  kNoOffset,   // fixed centre, r^2 only, e = 0 assumed (a single ring)
};

// The outcome of the fit. Lengths in metres unless the name says otherwise.
struct RingFitResult {
  Status status = Status::kError;
  std::vector<std::string> messages;

  RingModel model = RingModel::kConic;
  // Radius of curvature of the part (with a reference radius: the part's
  // radius from the exact sags), signed as seen from the gap (sphere.h).
  double radius_m = 0.0;
  double radius_u_m =
      0.0;  // standard uncertainty (0 with has_uncertainty false)
  double radius_u95_m = 0.0;  // expanded, coverage_factor * u
  bool has_uncertainty = false;
  std::string uncertainty_note;  // the method, or why there is none
  double coverage_factor = 2.0;
  // Budget: relative standard uncertainty contributions of R.
  double u_rel_fit = 0.0, u_rel_pitch = 0.0, u_rel_wavelength = 0.0,
         u_rel_reference = 0.0;
  // Type B relative standard uncertainty of the ring-detection systematic
  // (detected_points only; 0 otherwise), a bias of the located fringe
  // centres that grows with few fringes (residual illumination fall-off
  // and blur in the extremum fits) and with short fringe periods (blur
  // changes the phase curvature of a quadratic-phase signal by
  // 1/(1 + 4 c^2 sigma^4), c = 2 pi / P; Gaussian-beam algebra, e.g.
  // Goodman, Introduction to Fourier Optics, ch. 4). Modelled as
  //   hypot(kDetectionFewFringes / N^3 +
  //             max(kDetectionShortPeriod / P^2, detection_blur_bias_rel),
  //         kDetectionFloor),
  // N fringes over the evaluated aperture, P the period in r^2 (px^2);
  // constants from a simulation study (tests/fringe/ring_accuracy_test.cpp,
  // tuning seeds only; the floor from pixel-rich photos, see
  // kDetectionFloor); the blur term from the photo itself (see
  // RingFitOptions::detection_blur_bias_rel).
  double u_rel_detection = 0.0;

  // Radius of the gap's paraxial curvature (1/R_gap = 1/R + 1/R_plate).
  double gap_radius_m = 0.0;
  // Test-plate mode.
  bool test_plate = false;
  double reference_radius_m = 0.0;  // the plate radius as given
  double part_radius_m = 0.0, part_radius_u_m = 0.0, part_radius_u95_m = 0.0;
  // Part radius minus the radius that matches the plate (R + R_plate).
  double deviation_m = 0.0;

  double order_offset =
      0.0;  // e in [-0.5, 0.5): gap at the centre in fringes (centre contact)
  double order_offset_u = 0.0;  // its standard uncertainty
  cv::Point2d centre_px;        // fitted fringe centre (image mode)
  double centre_u_px =
      0.0;  // standard uncertainty of each coordinate (rms of the two)
  FringeState centre_predicted = FringeState::kDark;
  double centre_order_fraction =
      0.0;  // relative order at the centre, mod 1 (0 dark, 0.5 bright)
  int ring_count = 0;  // distinct dark fringes used (bright ones when the
                       // data hold no dark fringe)

  // Diameter over which sag, power and astigmatism are given: the test
  // diameter, else the evaluated aperture.
  double aperture_diameter_m = 0.0;
  bool over_test_diameter = false;  // aperture_diameter_m is the test diameter
  // Sag and power are NaN, with a warning, when the aperture is wider than
  // the fitted sphere (half of it beyond |R|).
  double sag_m = 0.0;  // exact sphere sag of the part over the aperture
  double power_fringes =
      0.0;  // gap change centre -> edge in fringes (exact sags), signed:
            // positive when the gap opens towards the edge
  double power_u_fringes = 0.0;
  double astigmatism_fringes =
      0.0;  // difference of the principal-axis fringe counts
  double astigmatism_u_fringes = 0.0;
  double astigmatism_axis_deg =
      0.0;  // axis of the larger count, surface coordinates (y up), 0..180

  double residual_rms_px = 0.0;       // radial residual rms of the inliers
  double residual_rms_fringes = 0.0;  // the same in orders
  double chi2_reduced = 0.0;
  int sectors_used = 0;
  int points_used = 0;
  int points_rejected = 0;
  // Per input point, radial (measured - model), in pixels (micrometres in
  // the measured-diameter mode); NaN for unusable points.
  std::vector<double> residuals_px;
  std::vector<bool> outlier;  // per input point
  // The fitted conic about the fitted centre, for drawing: at pixel offset
  // (u, v) from centre_px the model's signed order is
  //   contact_sign * order = centre_value + a u^2 + 2 b u v + c v^2,
  // quad_px2 = {a, b, c} in orders per px^2 (paraxial; exact terms omitted).
  double quad_px2[3] = {0.0, 0.0, 0.0};
  double centre_value = 0.0;
  double contact_sign = 1.0;
  // The exact higher-order terms of the model (FittedRadiusPx): the part
  // and reference radii as the fit uses them internally (the reference
  // mirrored, infinity for a flat), fringes per metre of gap (2 n_gap /
  // lambda) and the pixel pitch (m).
  double model_part_radius_m = std::numeric_limits<double>::quiet_NaN();
  double model_reference_radius_m = std::numeric_limits<double>::infinity();
  double fringes_per_metre = 0.0;
  double pixel_pitch_m = 0.0;
};

// Constants of the ring-detection systematic (RingFitResult::u_rel_detection).
inline constexpr double kDetectionFewFringes = 0.2;    // relative * N^3
inline constexpr double kDetectionShortPeriod = 50.0;  // relative * px^4
// Relative floor: pixel-rich simulated photos with many fringes (2-5 M
// pixels in the aperture, 59-124 rings, P 4000-21000 px^2) showed biases of
// R up to 3.7e-6 whose cause was not isolated (sector binning or the
// simulator's rendering); without a floor their U95 fell to 2.4e-6.
inline constexpr double kDetectionFloor = 2e-6;
// Type B ring-detection systematic of each centre coordinate (px), divided
// by the number of fringes N (same study): added in quadrature to the fit's
// centre uncertainty when detected_points.
inline constexpr double kDetectionCentrePx = 0.08;  // px * N

// Fits the ring model. `centre_guess_px` anchors the coordinates (and is the
// fixed centre of the isotropic models). Throws InputError for invalid
// options; returns status kError with a reason for unusable data, and for a
// result with a reported number (radius, uncertainties, order offset,
// aperture, centre, astigmatism, and sag and power where defined) that is
// not finite.
RingFitResult FitRings(const std::vector<RingFitPoint>& points,
                       const RingFitOptions& options,
                       cv::Point2d centre_guess_px,
                       RingModel model = RingModel::kConic);

// The radial position (px from the fitted centre, along the direction
// `angle_rad` in image coordinates) where the fitted model (the conic plus
// the exact higher-order sag terms) reaches `order`; NaN when it does not.
// For overlays and plots.
double FittedRadiusPx(const RingFitResult& fit, double order, double angle_rad);

// Offset of the minima d (0 or 1/2) for a stack and view.
double MinimumOffset(const MediaStack& stack, View view);

// Part radius (m, signed as seen from the gap) from a fringe count N over
// diameter D against a test plate of radius R_plate (signed likewise), from
// the exact sags (references.md, test plates): s(R_part) + s(R_plate) =
// sign * N lambda / (2 n_gap), sign + for contact at the centre.
double PartRadiusFromFringes(double plate_radius_m, double diameter_m,
                             double fringes, double wavelength_m,
                             double gap_index, Contact contact);

// Refractive index of a liquid filling the gap, from the diameter of the
// same ring in air and with the liquid: n = (D_air / D_liquid)^2 (r^2 scales
// with 1/n_gap).
double LiquidIndexFromDiameters(double diameter_air_m,
                                double diameter_liquid_m);

}  // namespace figura
