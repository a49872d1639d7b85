// Exact sphere geometry and test-plate relations (no small-sag
// approximation).
//
// Sign convention (used by every function here, by the ring analysis and by
// `--reference-radius`):
//   * A surface's radius is signed as seen FROM THE GAP: positive for a
//     surface that is convex towards the gap, negative for one that is
//     concave towards it, infinity for a flat.
//   * A test plate's radius is signed the same way, which is how it is
//     written on the plate's tag: a concave plate (CC) is negative, a convex
//     plate (CX) positive. A plate that fits a +100 mm convex part is
//     therefore -100 mm (job file: `reference-radius = -100mm`).
//   * Sag s(R, r) has the sign of R: it is how far a surface recedes from
//     the tangent plane at its vertex towards its own side, counted positive
//     when it recedes away from the gap (convex).
// With two surfaces facing each other and touching on axis, the gap at
// height r is the sum of their sags, s(R_part, r) + s(R_plate, r): zero
// everywhere for a perfect match (R_plate = -R_part).
#pragma once

#include <string_view>

namespace figura {

// Where two spheres touch: on axis (the gap opens towards the edge), or
// around the rim of the test diameter (a part flatter than its plate). The
// press test tells which: pressed at the centre, fringes moving outward mean
// contact at the centre ([practice], ../shared/references.md).
enum class Contact { kCentre, kEdge };

// Parses "centre" (or "center") / "edge". Throws InputError naming `what`.
Contact ParseContact(std::string_view text,
                     std::string_view what = "--contact");

// "centre" / "edge".
const char* ContactName(Contact contact);

// Sag (m) of a sphere of signed radius R (m) at height r (m) from its axis:
// s = R - sign(R) sqrt(R^2 - r^2) = r^2 / (R (1 + sqrt(1 - r^2/R^2))) (the
// second form is used: no cancellation for long radii); s has the sign of R.
// Requires |r| <= |R| (asserts). R = +-infinity (a flat) gives 0.
double SphereSag(double radius_m, double height_m);

// Radius (m) of the sphere whose sag over height r is s: R = (s^2 + r^2) /
// (2 s) (the exact inverse of SphereSag), signed like s. s = 0 gives
// +infinity (a flat).
double RadiusFromSag(double sag_m, double height_m);

// Fringe count (half-waves of gap, in the gap medium) between two spheres
// of radii R1 and R2, SIGNED ALIKE (e.g. a part's radius and the radius it
// should have, both positive for convex parts), laid on each other touching
// on axis, over a test diameter D:
//   N = (2 n_gap / lambda) |s(R1, D/2) - s(R2, D/2)|
// (exact; Saayman, "Tutorial on Test Plates", OPTI 515, U. Arizona gives the
// small-sag form, ApproxRadiusDifference). For a part against a plate with
// radii signed as seen from the gap, use GapFringes(SphereGap(...)).
double FringesBetweenSpheres(double r1_m, double r2_m, double diameter_m,
                             double wavelength_m, double gap_index = 1.0);

// Small-sag estimate of the radius difference (m) for N fringes over
// diameter D against a plate of radius R: dR = 4 N lambda R^2 / D^2
// (Saayman, "Tutorial on Test Plates"). For comparison only; the exact
// relations are used everywhere else.
double ApproxRadiusDifference(double fringes, double radius_m,
                              double diameter_m, double wavelength_m);

// Gap (m) at height r between a part of radius Rp and a test plate of radius
// Rt that touch on axis, both signed as seen from the gap (see the top of
// this file): gap(r) = s(Rp, r) + s(Rt, r). Zero for a perfect match (Rt =
// -Rp). Positive: the gap opens towards the edge (contact at the centre; for
// a convex part on a concave plate, the part is steeper than the plate).
// Negative: the surfaces would meet at the edge instead; the gap measured
// from an edge contact at r_e is then gap(r) - gap(r_e). A flat plate is Rt =
// infinity, giving Newton's rings gap(r) = s(Rp, r).
double SphereGap(double part_radius_m, double plate_radius_m, double r_m);

// Gap (m) expressed in fringes: N = 2 n_gap gap / lambda (one fringe is half
// a wavelength of gap in the gap medium; ../shared/design.md).
double GapFringes(double gap_m, double wavelength_m, double gap_index = 1.0);

// The part radius Rp (m, signed as seen from the gap) that leaves the gap
// `gap_sag_m` at the edge of diameter D against a plate of radius Rt
// (signed as seen from the gap), touching on axis: the exact inverse of
// SphereGap, s(Rp, D/2) = gap_sag - s(Rt, D/2). Returns +infinity when the
// part comes out flat. Requires the resulting sag to be shorter than D/2
// (asserts).
double PartRadiusFromSagDifference(double plate_radius_m, double diameter_m,
                                   double gap_sag_m);

}  // namespace figura
