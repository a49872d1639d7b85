// The exact gap between a part and a flat or a test plate, as the
// simulator renders it: a sphere (or the difference of two spheres) about a
// contact point, a uniform contact offset (dust), a wedge (tilt) and Zernike
// terms. Surface coordinates (../shared/design.md): x right, y up, origin at
// the aperture centre, lengths in metres.
//
//   gap(x, y) = offset + S(|p - c|) + tilt_x x/a + tilt_y y/a
//               + sum_j c_j Z_j(x/a, y/a)
// with p = (x, y), c the contact point, a the aperture radius, and S the
// rotational part from the exact sphere sags (optics/sphere.h, radii signed
// as seen from the gap):
//   contact at the centre: S(r) = SphereGap(R_part, R_plate, r), >= 0;
//   contact at the edge:   S(r) = SphereGap(R_part, R_plate, r)
//                                 - SphereGap(R_part, R_plate, a), >= 0.
#pragma once

#include <limits>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "optics/sphere.h"
#include "surface/zernike.h"

namespace figura {

// The gap's description. Lengths in metres.
struct GapOptions {
  // Part radius, signed as seen from the gap (positive = convex towards
  // it); infinity for a flat.
  double part_radius_m = 0.1;
  // Test plate (or reference flat) radius, signed as seen from the gap: a
  // plate fitting a +100 mm part is -100 mm; infinity for a flat.
  double plate_radius_m = kFlat;
  Contact contact = Contact::kCentre;
  // Uniform extra gap everywhere (dust or a spacer), >= 0.
  double contact_offset_m = 0.0;
  // Where the spheres touch, from the aperture centre (x right, y up).
  // Must be zero for an edge contact.
  double contact_x_m = 0.0;
  double contact_y_m = 0.0;
  // Gap change from the aperture centre to the edge along +x and +y (a
  // wedge). A slope s (radians) is s * a.
  double tilt_x_m = 0.0;
  double tilt_y_m = 0.0;
  // Zernike coefficients of gap (metres), index = ISO 24157 j
  // (surface/zernike.h); radial order <= ZernikePolynomial::kMaxOrder.
  std::vector<double> zernike_m;

  // A flat surface's radius.
  static constexpr double kFlat = std::numeric_limits<double>::infinity();

  // Empty when the description is usable over an aperture of radius
  // `aperture_radius_m`, else a readable reason that starts with the
  // offending key as "section.key: " (gap.part_radius, zernike.z7, ...).
  [[nodiscard]] std::string Check(double aperture_radius_m) const;
};

// Row-wise evaluation state (see GapModel::PrepareRow).
struct GapRow {
  double y_m = 0.0;
  double dy2 = 0.0;             // (y - contact_y)^2
  double linear = 0.0;          // offset + tilt_y y/a (+ the edge constant)
  std::vector<double> zernike;  // row polynomial in x/a
};

// Evaluates a GapOptions quickly at many points. Construct only from options
// that pass Check().
class GapModel {
 public:
  GapModel(const GapOptions& options, double aperture_radius_m);

  // The gap (m) at (x, y).
  [[nodiscard]] double At(double x_m, double y_m) const;

  // Prepares the per-row terms for y; then AtRow(row, x) == At(x, y) up to
  // rounding, at a fraction of the cost (one square root per sphere, one
  // Horner pass).
  void PrepareRow(double y_m, GapRow* row) const;
  [[nodiscard]] double AtRow(const GapRow& row, double x_m) const;

  // The rotational part S(r) at distance r (m) from the contact point.
  [[nodiscard]] double Rotational(double r_m) const;

  // True when the model has a curved (sphere) part.
  [[nodiscard]] bool curved() const { return curved_; }

  // Distance r (m, 0 <= r <= r_max) from the contact point at which the
  // rotational part plus the offset equals `gap_m`, by bisection on the
  // exact monotonic S; nullopt when the gap is not reached within r_max.
  [[nodiscard]] std::optional<double> RadiusForGap(double gap_m,
                                                   double r_max_m) const;

  // The stationary point of the whole gap (the centre of the rings: the
  // contact point moved by tilt and Zernike terms), by Newton's method with
  // central differences, started at the contact point; nullopt for a model
  // without a sphere or when it leaves the aperture.
  [[nodiscard]] std::optional<std::pair<double, double>> Stationary() const;

  [[nodiscard]] const GapOptions& options() const { return options_; }
  [[nodiscard]] double aperture_radius_m() const { return radius_; }

 private:
  GapOptions options_;
  double radius_ = 0.0;
  double edge_constant_ = 0.0;
  bool curved_ = false;
  bool has_zernike_ = false;
  ZernikePolynomial zernike_;  // of x/a, y/a, in metres of gap
};

}  // namespace figura
