#include "optics/sphere.h"

#include <cassert>
#include <cmath>
#include <limits>
#include <string>

#include "core/error.h"
#include "core/quantity.h"

namespace figura {

Contact ParseContact(std::string_view text, std::string_view what) {
  const std::string_view t = Trim(text);
  if (t == "centre" || t == "center") return Contact::kCentre;
  if (t == "edge") return Contact::kEdge;
  throw InputError(std::string(what) + ": expected centre or edge, got '" +
                   std::string(text) + "'");
}

const char* ContactName(Contact contact) {
  return contact == Contact::kCentre ? "centre" : "edge";
}

double SphereSag(double radius_m, double height_m) {
  assert(radius_m != 0.0 && !std::isnan(radius_m));
  if (std::isinf(radius_m)) return 0.0;
  const double u = height_m / radius_m;
  assert(std::abs(u) <= 1.0);
  return height_m * height_m / (radius_m * (1.0 + std::sqrt(1.0 - u * u)));
}

double RadiusFromSag(double sag_m, double height_m) {
  if (sag_m == 0.0) return std::numeric_limits<double>::infinity();
  return (sag_m * sag_m + height_m * height_m) / (2.0 * sag_m);
}

double FringesBetweenSpheres(double r1_m, double r2_m, double diameter_m,
                             double wavelength_m, double gap_index) {
  const double h = 0.5 * diameter_m;
  return GapFringes(std::abs(SphereSag(r1_m, h) - SphereSag(r2_m, h)),
                    wavelength_m, gap_index);
}

double ApproxRadiusDifference(double fringes, double radius_m,
                              double diameter_m, double wavelength_m) {
  return 4.0 * fringes * wavelength_m * radius_m * radius_m /
         (diameter_m * diameter_m);
}

double SphereGap(double part_radius_m, double plate_radius_m, double r_m) {
  return SphereSag(part_radius_m, r_m) + SphereSag(plate_radius_m, r_m);
}

double GapFringes(double gap_m, double wavelength_m, double gap_index) {
  assert(wavelength_m > 0.0);
  return 2.0 * gap_index * gap_m / wavelength_m;
}

double PartRadiusFromSagDifference(double plate_radius_m, double diameter_m,
                                   double gap_sag_m) {
  const double h = 0.5 * diameter_m;
  const double part_sag = gap_sag_m - SphereSag(plate_radius_m, h);
  assert(std::abs(part_sag) <= std::abs(h));
  return RadiusFromSag(part_sag, h);
}

}  // namespace figura
