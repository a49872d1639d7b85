#include "sim/gap.h"

#include <cmath>
#include <sstream>

#include "core/quantity.h"
#include "optics/sphere.h"

namespace figura {

namespace {

std::string Mm(double metres) { return FormatLength(Length{metres}, 6); }

std::string CheckRadius(double radius_m, double reach_m, const char* key) {
  std::ostringstream out;
  if (std::isnan(radius_m) || radius_m == 0.0) {
    out << key << ": a radius must be nonzero (use 'flat' for a plane)";
  } else if (std::isfinite(radius_m) && std::abs(radius_m) <= reach_m) {
    out << key << ": |radius| " << Mm(std::abs(radius_m))
        << " is not larger than the aperture radius plus the contact point "
           "offset ("
        << Mm(reach_m) << ")";
  }
  return out.str();
}

}  // namespace

std::string GapOptions::Check(double aperture_radius_m) const {
  std::ostringstream out;
  if (!std::isfinite(aperture_radius_m) || aperture_radius_m <= 0.0) {
    return "aperture.diameter: must be a positive length";
  }
  if (!std::isfinite(contact_x_m) || !std::isfinite(contact_y_m)) {
    return "gap.contact-x: the contact point must be finite";
  }
  const double reach = aperture_radius_m + std::hypot(contact_x_m, contact_y_m);
  if (std::string m = CheckRadius(part_radius_m, reach, "gap.part-radius");
      !m.empty()) {
    return m;
  }
  if (std::string m = CheckRadius(plate_radius_m, reach, "gap.plate-radius");
      !m.empty()) {
    return m;
  }
  if (!std::isfinite(contact_offset_m) || contact_offset_m < 0.0) {
    return "gap.contact-offset: must be a length >= 0 (the gap can only open)";
  }
  if (!std::isfinite(tilt_x_m) || !std::isfinite(tilt_y_m)) {
    return "gap.tilt-x: tilt must be finite";
  }
  const bool curved =
      std::isfinite(part_radius_m) || std::isfinite(plate_radius_m);
  if (curved) {
    const double at_reach = SphereGap(part_radius_m, plate_radius_m, reach);
    if (contact == Contact::kCentre && at_reach < 0.0) {
      return "gap.contact: the part is flatter than the plate, so the gap "
             "closes towards the edge; set contact = edge";
    }
    if (contact == Contact::kEdge) {
      if (contact_x_m != 0.0 || contact_y_m != 0.0) {
        return "gap.contact-x: an edge contact is centred on the aperture; "
               "remove contact_x/contact_y";
      }
      if (at_reach > 0.0) {
        return "gap.contact: the part is steeper than the plate, so they "
               "touch at the centre; set contact = centre";
      }
    }
  }
  for (std::size_t j = 0; j < zernike_m.size(); ++j) {
    if (zernike_m[j] == 0.0) continue;
    const std::string key = "zernike.z" + std::to_string(j);
    if (!std::isfinite(zernike_m[j])) return key + ": must be finite";
    const ZernikeMode mode = ZernikeModeOf(static_cast<int>(j));
    if (mode.n > ZernikePolynomial::kMaxOrder) {
      out << key << ": radial order " << mode.n << " is above the "
          << ZernikePolynomial::kMaxOrder << " the simulator renders (j <= "
          << ZernikeCount(ZernikePolynomial::kMaxOrder) - 1 << ")";
      return out.str();
    }
  }
  return {};
}

GapModel::GapModel(const GapOptions& options, double aperture_radius_m)
    : options_(options),
      radius_(aperture_radius_m),
      curved_(std::isfinite(options.part_radius_m) ||
              std::isfinite(options.plate_radius_m)),
      zernike_(options.zernike_m) {
  for (double c : options.zernike_m) has_zernike_ = has_zernike_ || c != 0.0;
  if (curved_ && options.contact == Contact::kEdge) {
    edge_constant_ =
        SphereGap(options.part_radius_m, options.plate_radius_m, radius_);
  }
}

double GapModel::Rotational(double r_m) const {
  if (!curved_) return 0.0;
  return SphereGap(options_.part_radius_m, options_.plate_radius_m, r_m) -
         edge_constant_;
}

double GapModel::At(double x_m, double y_m) const {
  GapRow row;
  PrepareRow(y_m, &row);
  return AtRow(row, x_m);
}

void GapModel::PrepareRow(double y_m, GapRow* row) const {
  row->y_m = y_m;
  const double dy = y_m - options_.contact_y_m;
  row->dy2 = dy * dy;
  row->linear = options_.contact_offset_m - edge_constant_ +
                options_.tilt_y_m * y_m / radius_;
  if (has_zernike_) {
    zernike_.RowCoefficients(y_m / radius_, &row->zernike);
  } else {
    row->zernike.clear();
  }
}

double GapModel::AtRow(const GapRow& row, double x_m) const {
  double gap = row.linear + options_.tilt_x_m * x_m / radius_;
  if (curved_) {
    const double dx = x_m - options_.contact_x_m;
    gap += SphereGap(options_.part_radius_m, options_.plate_radius_m,
                     std::sqrt(dx * dx + row.dy2));
  }
  if (!row.zernike.empty()) {
    gap += ZernikePolynomial::EvaluateRow(row.zernike, x_m / radius_);
  }
  return gap;
}

std::optional<double> GapModel::RadiusForGap(double gap_m,
                                             double r_max_m) const {
  if (!curved_) return std::nullopt;
  const double target = gap_m - options_.contact_offset_m;
  double lo = 0.0;
  double hi = r_max_m;
  const double f_lo = Rotational(lo) - target;
  const double f_hi = Rotational(hi) - target;
  if (f_lo == 0.0) return lo;
  if ((f_lo > 0.0) == (f_hi > 0.0)) return std::nullopt;
  for (int it = 0; it < 200 && hi - lo > 1e-16 * r_max_m; ++it) {
    const double mid = 0.5 * (lo + hi);
    if ((Rotational(mid) - target > 0.0) == (f_lo > 0.0)) {
      lo = mid;
    } else {
      hi = mid;
    }
  }
  return 0.5 * (lo + hi);
}

std::optional<std::pair<double, double>> GapModel::Stationary() const {
  if (!curved_) return std::nullopt;
  double x = options_.contact_x_m;
  double y = options_.contact_y_m;
  const double h = 1e-4 * radius_;
  for (int it = 0; it < 60; ++it) {
    const double f0 = At(x, y);
    const double fxp = At(x + h, y);
    const double fxm = At(x - h, y);
    const double fyp = At(x, y + h);
    const double fym = At(x, y - h);
    const double gx = (fxp - fxm) / (2 * h);
    const double gy = (fyp - fym) / (2 * h);
    const double hxx = (fxp - 2 * f0 + fxm) / (h * h);
    const double hyy = (fyp - 2 * f0 + fym) / (h * h);
    const double hxy = (At(x + h, y + h) - At(x + h, y - h) - At(x - h, y + h) +
                        At(x - h, y - h)) /
                       (4 * h * h);
    const double det = hxx * hyy - hxy * hxy;
    if (det == 0.0 || !std::isfinite(det)) return std::nullopt;
    const double sx = (hyy * gx - hxy * gy) / det;
    const double sy = (hxx * gy - hxy * gx) / det;
    x -= sx;
    y -= sy;
    if (std::hypot(x, y) > radius_) return std::nullopt;
    if (std::hypot(sx, sy) < 1e-13) return std::make_pair(x, y);
  }
  return std::make_pair(x, y);
}

}  // namespace figura
