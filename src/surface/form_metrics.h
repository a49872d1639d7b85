// Form numbers of a surface (gap) height map: PV, robust PV, RMS, and the
// ISO 10110-5 form numbers as ISO 14999-4 evaluates them: sagitta deviation
// A, irregularity B, rotationally symmetric irregularity C, and RMSt, RMSi,
// RMSa. Heights in metres; helpers convert to fringes and waves.
//
// The map is the gap between the part and the reference (test plate or
// reference flat), positive where the gap is wider (surface_map.h).
// Piston, tilt and the best sphere are taken from the Zernike fit
// (zernike_fit.h): Z_0 piston, Z_1 / Z_2 tilt, Z_4 = sqrt3 (2 rho^2 - 1)
// defocus (ISO 24157 index j = 4 is (n, m) = (2, 0)).
//
// Our reading of the standards, from memory where marked:
// - "Best sphere" is the least-squares sphere over the aperture. Over the
//   unit disk the RMS-normalised Zernike polynomials are orthogonal, so the
//   least-squares sphere (paraboloid a + b rho^2 at these sags) is exactly
//   c_0 Z_0 + c_4 Z_4: it absorbs none of the primary spherical Z(4,0) or
//   higher m = 0 terms, which stay in the irregularity and in C. At these
//   sags the sphere is taken as the paraboloid Z(2,0): the r^4 / (8 R^3)
//   term of exact spheres is not absorbed. For a part of radius R_part
//   against a reference of R_ref over aperture radius a it shows in B and C
//   as k / 4 with k = (a^4 / 8)(1/R_part^3 - 1/R_ref^3) (4.6 nm for 100 mm
//   against 100.5 mm over 20 mm; against a flat reference k = a^4 / (8
//   R_part^3), negligible for near-flat parts;
//   tests/surface/form_metrics_test.cpp). (A
//   minimum-PV sphere would absorb part of Z(4,0); ISO 14999-4 names the
//   least-squares sphere as its default evaluation [memory].)
// - ISO 10110-5:2015 3/A(B/C) with RMSt, RMSi, RMSa [memory]; one fringe is
//   lambda / 2 of surface deviation at the test wavelength (ISO 10110-5).
#pragma once

#include <opencv2/core.hpp>

#include "fringe/circle.h"
#include "surface/zernike_fit.h"

namespace figura {

// The form numbers of one map, metres.
struct FormMetrics {
  // PV = max - min over the valid pixels of the map after removing piston
  // and tilt (the fitted c_0 Z_0 + c_1 Z_1 + c_2 Z_2).
  double pv_m = 0.0;
  // Robust PV after Evans, "PVr - a robust amplitude parameter for optical
  // surface specification", Opt. Eng. 48(4) 043605, 2009 [memory: check]:
  // PVr = PV of the fitted Zernike surface without piston and tilt (all
  // fitted orders, here through the fit's max_order, default 8, instead of
  // Evans's 36-term Fringe set), over the valid pixels, + 3 x RMS of the
  // residual map - fit.
  double pvr_m = 0.0;
  // RMS of the map after piston and tilt (= RMSt).
  double rms_m = 0.0;
  // Sagitta deviation A: the centre-to-edge height of the best sphere, 2
  // sqrt3 c_4 (Z_4 runs from -sqrt3 c_4 at rho = 0 to +sqrt3 c_4 at rho = 1).
  // Sign: positive when the gap grows from the aperture centre towards the
  // edge (the part falls away from the reference towards the edge: centre
  // contact, the part more convex than the reference), negative when it
  // shrinks (edge contact, the part more concave).
  double power_m = 0.0;
  // Standard uncertainty of A: 2 sqrt3 u(c_4), u(c_4) from the fit
  // covariance (for a map, corrected for correlated residuals:
  // FitZernikeGrid). B, C, PV and the RMS forms have none: see
  // docs/method.md (the fit covariance does not cover the carrier method's
  // errors in the terms of radial order >= 5 that they depend on).
  double power_u_m = 0.0;
  // Irregularity B: PV over the valid pixels of the map after removing
  // piston, tilt and the best sphere (c_4 Z_4).
  double irregularity_m = 0.0;
  // The same PV on the fitted surface instead of the map (no pixel noise;
  // for noisy maps, and for comparison).
  double irregularity_fit_m = 0.0;
  // Rotationally symmetric irregularity C: PV over 0 <= rho <= 1 of the
  // rotationally symmetric part of the irregularity, taken as the fitted
  // m = 0 terms of radial order >= 4 (Z(4,0), Z(6,0), Z(8,0), ...). Our
  // choice (documented reading of ISO 10110-5 [memory]): the fitted terms
  // are smooth and unbiased by pixel noise, where an azimuthal mean of the
  // map needs radial bins and carries their noise.
  double rsi_m = 0.0;
  // RMSt: RMS after piston and tilt; RMSi: RMS of the irregularity map
  // (after the best sphere); RMSa: RMS of the non-rotationally-symmetric
  // part (the irregularity map minus the C profile). Each RMS is taken
  // about its own mean over the valid pixels. [ISO 10110-5:2015, memory]
  double rmst_m = 0.0;
  double rmsi_m = 0.0;
  double rmsa_m = 0.0;
  // RMS of the residual map - fitted surface (all fitted terms).
  double residual_rms_m = 0.0;
  long pixels = 0;  // valid pixels evaluated
};

// Coverage factor k of the expanded uncertainty U95 = k u of a map's power
// (GUM, JCGM 100:2008, 6.3.3: k = 2, about 95 % for a normal distribution;
// a map's effectively independent samples are many more than its terms).
inline constexpr double kMapCoverageFactor = 2.0;

// The form numbers of `height_m` (CV_32FC1 or CV_64FC1 metres, NaN where
// invalid; pixels with rho <= 1 in `aperture_px` count) with `fit` from
// FitZernikeGrid on the same map (asserted: status not kError, at least 5
// coefficients, i.e. max_order >= 2). Pixels are evaluated in full (no
// subsampling), in parallel over rows.
FormMetrics ComputeFormMetrics(const cv::Mat& height_m,
                               const Circle& aperture_px,
                               const ZernikeFitResult& fit);

// Metres of surface (gap) deviation to fringes: one fringe = lambda / 2
// (ISO 10110-5). `wavelength_m` > 0 (asserted).
double MetresToFringes(double metres, double wavelength_m);
// Metres to waves at the test wavelength: metres / lambda.
double MetresToWaves(double metres, double wavelength_m);

}  // namespace figura
