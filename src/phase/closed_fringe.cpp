#include "phase/closed_fringe.h"

#include <algorithm>
#include <cmath>
#include <set>
#include <string>
#include <vector>

namespace figura {

std::string ClosedFringeOptions::Check() const {
  if (std::string why = detection.Check(); !why.empty()) return why;
  if (std::string why = stack.Check(); !why.empty()) return why;
  if (!(std::isfinite(wavelength_m) && wavelength_m > 0.0)) {
    return "the wavelength must be a positive length";
  }
  return {};
}

int SupportedClosedOrder(int rings, int sectors, int requested) {
  // Radial: a radial polynomial of order n has n/2 + 1 free coefficients
  // for m = 0; keep two distinct fringe radii in hand per coefficient
  // beyond the first [practice: a least-squares fit wants more samples than
  // unknowns along every direction it resolves].
  const int radial = 2 * std::max(rings - 2, 1);
  // Azimuthal: |m| <= n and sectors / 4 samples per half-period of cos(m t).
  const int azimuthal = std::max(sectors / 4, 2);
  return std::max(2, std::min({requested, radial, azimuthal}));
}

ClosedFringeResult TraceClosedFringes(const cv::Mat& image,
                                      const ClosedFringeOptions& options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  ClosedFringeResult out;
  out.detection = DetectRings(image, options.detection);
  const RingDetectionResult& det = out.detection;
  for (const std::string& m : det.messages) {
    out.messages.push_back("ring detection: " + m);
  }
  out.aperture_px = {det.aperture_centre_px, det.aperture_radius_px};
  if (det.status == Status::kError) {
    out.status = Status::kError;
    return out;
  }
  out.status = det.status;
  out.fringes_in_aperture = det.fringes_in_aperture;

  const FringeRule rule = RuleFor(options.stack, options.view);
  // One fringe (dark to dark) is half a wavelength of gap in the gap medium.
  const double half_wave =
      options.wavelength_m / (2.0 * options.stack.gap_index);
  const double sign = options.contact == Contact::kCentre ? 1.0 : -1.0;
  std::set<int> indices;
  out.samples.reserve(det.points.size());
  for (const FringePoint& p : det.points) {
    GapSample s;
    s.x_px = p.x_px;
    s.y_px = p.y_px;
    // Index counts half-periods outward from the first dark fringe: dark
    // fringes at gap (k + d) half_wave, bright ones half a fringe further.
    s.order = p.index / 2.0 + rule.minimum_offset;
    s.gap_m = sign * s.order * half_wave;
    // Local slope of the gap along the radius: one period in r^2 per
    // fringe, so d(gap)/dr = half_wave * 2 r / P (P in px^2).
    const double slope_m_per_px =
        det.period_r2_px2 > 0.0
            ? half_wave * 2.0 * p.radius_px / det.period_r2_px2
            : 0.0;
    s.sigma_m = std::max(p.sigma_px, 1e-3) * slope_m_per_px;
    s.sector = p.sector;
    indices.insert(p.index);
    out.samples.push_back(s);
  }
  out.rings = static_cast<int>(indices.size());
  if (out.samples.empty()) {
    out.status = Status::kError;
    out.messages.push_back("no fringe centres could be traced");
  }
  return out;
}

}  // namespace figura
