// Exact sphere geometry and test-plate relations (no small-sag
// approximation).
#pragma once

namespace figura {

// Sag (m) of a sphere of signed radius R (m) at height r (m) from its axis:
// s = R - sign(R) sqrt(R^2 - r^2); s has the sign of R. Requires |r| <= |R|
// (asserts). R = infinity (a flat) gives 0.
double SphereSag(double radius_m, double height_m);

// Radius (m) of the sphere whose sag over height r is s: R = (s^2 + r^2) /
// (2 s), signed like s. s = 0 gives infinity.
double RadiusFromSag(double sag_m, double height_m);

// Fringe count (half-waves of gap, in the gap medium) between two spheres
// touching on axis over a test diameter D:
//   N = (2 n_gap / lambda) |s(R1, D/2) - s(R2, D/2)|
// (exact; Saayman, "Tutorial on Test Plates", OPTI 515, U. Arizona gives the
// small-sag form below).
double FringesBetweenSpheres(double r1_m, double r2_m, double diameter_m, double wavelength_m,
                             double gap_index = 1.0);

// Small-sag estimate of the radius difference for N fringes over diameter D
// against a plate of radius R: dR = 4 N lambda R^2 / D^2 (Saayman, "Tutorial
// on Test Plates"). For comparison only; the exact relations are used.
double ApproxRadiusDifference(double fringes, double radius_m, double diameter_m,
                              double wavelength_m);

// The part radius (m, signed) whose sag over diameter D differs from the
// plate radius R's sag by `gap_sag_m` (part sag = plate sag + gap_sag_m):
// exact inverse of the sag.
double PartRadiusFromSagDifference(double plate_radius_m, double diameter_m, double gap_sag_m);

}  // namespace figura
