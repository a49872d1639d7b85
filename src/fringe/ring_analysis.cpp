#include "fringe/ring_analysis.h"

#include <cmath>
#include <cstdio>
#include <optional>
#include <sstream>

#include "io/result_json.h"

namespace figura {
namespace {

std::string Num(double value, int digits) {
  if (!std::isfinite(value)) return "n/a";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*g", digits, value);
  return buf;
}

std::string Fixed(double value, int decimals) {
  if (!std::isfinite(value)) return "n/a";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, value);
  return buf;
}

void Append(std::vector<std::string>* to, const std::vector<std::string>& from,
            const std::string& prefix) {
  for (const std::string& m : from) to->push_back(prefix + m);
}

Status Worse(Status a, Status b) {
  return static_cast<int>(a) > static_cast<int>(b) ? a : b;
}

// The fringe state of the pixels at the fitted centre, judged against the
// first fringes around it: the mean level of the central spot (within 0.1
// order of the centre) is compared with the mean levels of the dark and of
// the bright fringes (within 0.1 order of their extrema) over the next
// three orders, using the fitted conic's order at every pixel. Empty when
// too few pixels qualify.
std::optional<FringeState> CentreStateSeen(const cv::Mat& pixels,
                                           const RingFitResult& fit,
                                           double minimum_offset) {
  const double a = fit.quad_px2[0];
  const double b = fit.quad_px2[1];
  const double c = fit.quad_px2[2];
  const double mean_curv = std::abs(0.5 * (a + c));
  if (!(mean_curv > 0.0) || pixels.type() != CV_32FC1) return std::nullopt;
  const double reach = std::sqrt(3.6 / mean_curv) * 1.5 + 2.0;
  const int x0 = std::max(0, static_cast<int>(fit.centre_px.x - reach));
  const int x1 =
      std::min(pixels.cols - 1, static_cast<int>(fit.centre_px.x + reach));
  const int y0 = std::max(0, static_cast<int>(fit.centre_px.y - reach));
  const int y1 =
      std::min(pixels.rows - 1, static_cast<int>(fit.centre_px.y + reach));
  double sum[3] = {0.0, 0.0, 0.0};  // spot, dark, bright
  double count[3] = {0.0, 0.0, 0.0};
  const double order_c = fit.contact_sign * fit.centre_value;
  for (int y = y0; y <= y1; ++y) {
    const float* row = pixels.ptr<float>(y);
    const double v = y - fit.centre_px.y;
    for (int x = x0; x <= x1; ++x) {
      const double u = x - fit.centre_px.x;
      const double order = fit.contact_sign * (fit.centre_value + a * u * u +
                                               2.0 * b * u * v + c * v * v);
      const double away = std::abs(order - order_c);
      const double value = static_cast<double>(row[x]);
      if (!std::isfinite(value)) continue;
      if (away < 0.1) {
        sum[0] += value;
        count[0] += 1.0;
      } else if (away > 0.5 && away < 3.5) {
        const double frac =
            order - minimum_offset - std::floor(order - minimum_offset);
        if (frac < 0.1 || frac > 0.9) {
          sum[1] += value;
          count[1] += 1.0;
        } else if (std::abs(frac - 0.5) < 0.1) {
          sum[2] += value;
          count[2] += 1.0;
        }
      }
    }
  }
  if (count[0] < 5.0 || count[1] < 20.0 || count[2] < 20.0) {
    return std::nullopt;
  }
  const double spot = sum[0] / count[0];
  const double dark = sum[1] / count[1];
  const double bright = sum[2] / count[2];
  return std::abs(spot - dark) <= std::abs(spot - bright)
             ? FringeState::kDark
             : FringeState::kBright;
}

}  // namespace

std::string RingsOptions::Check() const {
  if (std::string s = detection.Check(); !s.empty()) return s;
  return fit.Check();
}

std::vector<RingFitPoint> FitPointsFrom(const RingDetectionResult& detection,
                                        const MediaStack& stack, View view) {
  const double d = MinimumOffset(stack, view);
  std::vector<RingFitPoint> out;
  out.reserve(detection.points.size());
  for (const FringePoint& p : detection.points) {
    RingFitPoint q;
    q.x_px = p.x_px;
    q.y_px = p.y_px;
    q.sigma_px = p.sigma_px;
    q.order = p.index / 2.0 + d;
    q.sector = p.sector;
    out.push_back(q);
  }
  return out;
}

RingsResult AnalyseRings(const Image& image, const RingsOptions& options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  RingsResult out;
  RingDetectionOptions det = options.detection;
  if (!det.full_scale && image.info.full_scale > 0.0 && !image.info.is_float) {
    det.full_scale = image.info.full_scale;
  }
  out.detection = DetectRings(image.pixels, det);
  out.centre_observed = out.detection.centre_observed;
  Append(&out.messages, out.detection.messages, "detection: ");
  if (out.detection.status == Status::kError) {
    out.status = Status::kError;
    return out;
  }
  RingFitOptions fit_options = options.fit;
  fit_options.detected_points = true;
  fit_options.detection_blur_bias_rel = out.detection.blur_bias_rel;
  if (!fit_options.aperture_diameter) {
    fit_options.aperture_diameter =
        Length::Metres(2.0 * out.detection.aperture_radius_px *
                       options.fit.pixel_pitch.metres);
  }
  out.fit_points =
      FitPointsFrom(out.detection, options.fit.stack, options.fit.view);
  out.fit = FitRings(out.fit_points, fit_options, out.detection.centre_px,
                     RingModel::kConic);
  Append(&out.messages, out.fit.messages, "fit: ");
  out.status = Worse(out.detection.status, out.fit.status);
  if (out.fit.status == Status::kError) {
    out.status = Status::kError;
    return out;
  }
  // Weak fits: few rings determine R poorly, and large residuals mean the
  // surface is not a sphere (irregularity) or fringes were misplaced.
  if (out.fit.ring_count < kFewRings) {
    out.status = Worse(out.status, Status::kWarning);
    out.messages.push_back(
        "only " + std::to_string(out.fit.ring_count) +
        " dark rings: the radius is weakly determined; for a radius "
        "measurement, more rings help (a flat or a plate of more different "
        "radius, a larger aperture)");
  }
  if (out.fit.residual_rms_fringes > kLargeResidualFringes) {
    out.status = Worse(out.status, Status::kWarning);
    out.messages.push_back(
        "large fit residuals (" + Fixed(out.fit.residual_rms_fringes, 3) +
        " fringe rms): the surface departs from a sphere or fringes were "
        "misplaced; see the surface map");
  }
  // Blur (or a broad-band source) that lowers the contrast towards the
  // edge enough to bias R noticeably: its bias is in U95; say why.
  if (out.detection.blur_bias_rel > kBlurWarningRel) {
    out.status = Worse(out.status, Status::kWarning);
    out.messages.push_back(
        "the fringe contrast falls towards the edge as a blur of about " +
        Num(out.detection.blur_sigma_px, 2) +
        " px would make it (or a broad-band source); such blur makes R read "
        "high, here by about " +
        Num(100.0 * out.detection.blur_bias_rel, 2) +
        " %, and U95 allows for twice that; focus the camera on the fringes");
  }
  // The centre state seen in the photo against the one the fit predicts
  // from the fractional order at the centre (ambiguous near a quarter).
  const double frac = out.fit.centre_order_fraction;
  const bool clear = std::abs(frac - 0.25) > 0.1 && std::abs(frac - 0.75) > 0.1;
  // Seen: the central pixels themselves (a glint or dust at the contact
  // shows here); else the detection's state from the mean profile's phase.
  const std::optional<FringeState> seen =
      CentreStateSeen(image.pixels, out.fit,
                      MinimumOffset(options.fit.stack, options.fit.view));
  const FringeState observed = seen ? *seen : out.detection.centre_observed;
  out.centre_observed = observed;
  if (clear && out.fit.centre_predicted != observed) {
    out.centre_disagrees = true;
    out.status = Worse(out.status, Status::kWarning);
    out.messages.push_back(
        std::string("the centre looks ") + FringeStateName(observed) +
        " but the fitted orders predict " +
        FringeStateName(out.fit.centre_predicted) +
        ": check the media indices and --view, or dust at the contact");
  }
  const double shift =
      std::hypot(out.fit.centre_px.x - out.detection.centre_px.x,
                 out.fit.centre_px.y - out.detection.centre_px.y);
  if (shift > 1.0 + 5.0 * out.detection.centre_sigma_px) {
    out.status = Worse(out.status, Status::kWarning);
    out.messages.push_back("the fitted fringe centre is " + Num(shift, 3) +
                           " px from the detected ring centre");
  }
  return out;
}

RingsResult AnalyseRingDiameters(const std::vector<RingDiameter>& rings,
                                 const RingFitOptions& options) {
  RingsResult out;
  out.from_diameters = true;
  out.fit_points = DiameterFitPoints(rings, options.stack, options.view);
  out.fit = FitRingDiameters(rings, options);
  Append(&out.messages, out.fit.messages, "");
  out.status = out.fit.status;
  return out;
}

nlohmann::json RingsSettingsJson(const RingsOptions& options,
                                 bool from_diameters) {
  const RingFitOptions& f = options.fit;
  nlohmann::json s = {
      {"wavelength_nm", f.wavelength.value.nm()},
      {"wavelength_u_nm", f.wavelength.uncertainty.nm()},
      {"wavelength_source", f.wavelength.source_name},
      {"upper_index", f.stack.upper_index},
      {"gap_index", f.stack.gap_index},
      {"lower_index", f.stack.lower_index},
      {"view", ViewName(f.view)},
      {"minimum_offset", MinimumOffset(f.stack, f.view)},
      {"reference_radius_mm", f.reference_radius
                                  ? nlohmann::json(f.reference_radius->mm())
                                  : nlohmann::json(nullptr)},
      {"contact", ContactName(f.contact)},
      {"aperture_diameter_mm", f.aperture_diameter
                                   ? nlohmann::json(f.aperture_diameter->mm())
                                   : nlohmann::json(nullptr)},
      {"test_diameter_mm", f.test_diameter
                               ? nlohmann::json(f.test_diameter->mm())
                               : nlohmann::json(nullptr)},
      {"outlier_threshold", f.outlier_threshold},
      {"coverage_factor", f.coverage_factor},
  };
  if (!f.wavelength.citation.empty())
    s["wavelength_citation"] = f.wavelength.citation;
  if (from_diameters) {
    s["mode"] = "diameters";
  } else {
    const RingDetectionOptions& d = options.detection;
    s["mode"] = "image";
    s["pixel_pitch_um"] = f.pixel_pitch.um();
    s["pixel_pitch_u_um"] = f.pixel_pitch_u.um();
    s["sectors"] = d.sectors;
    s["aperture_fraction"] = d.aperture_fraction;
    s["aperture_centre_px"] =
        d.aperture_centre_px ? nlohmann::json::array({d.aperture_centre_px->x,
                                                      d.aperture_centre_px->y})
                             : nlohmann::json(nullptr);
    s["aperture_diameter_px"] = d.aperture_diameter_px
                                    ? nlohmann::json(*d.aperture_diameter_px)
                                    : nlohmann::json(nullptr);
  }
  return s;
}

nlohmann::json RingsJson(const RingsResult& r, const RingsOptions& options,
                         const nlohmann::json& input) {
  nlohmann::json j;
  j["input"] = input;
  j["settings"] = RingsSettingsJson(options, r.from_diameters);
  j["tool"] = ToolJson();
  j["status"] = StatusJson(r.status, r.messages);
  if (r.status == Status::kError) return j;  // no numbers without a fit
  const RingFitResult& f = r.fit;
  j["radius_of_curvature_mm"] = FiniteOrNull(f.radius_m * 1e3);
  if (f.has_uncertainty) {
    j["radius_of_curvature_u_mm"] = FiniteOrNull(f.radius_u_m * 1e3);
    j["radius_of_curvature_u95_mm"] = FiniteOrNull(f.radius_u95_m * 1e3);
  } else {
    j["radius_of_curvature_u_mm"] = nullptr;
    j["radius_of_curvature_u95_mm"] = nullptr;
  }
  j["coverage_factor"] = f.coverage_factor;
  j["uncertainty_method"] = f.uncertainty_note;
  j["uncertainty_budget_relative"] = {{"fit", f.u_rel_fit},
                                      {"ring_detection", f.u_rel_detection},
                                      {"pixel_pitch", f.u_rel_pitch},
                                      {"wavelength", f.u_rel_wavelength},
                                      {"reference_radius", f.u_rel_reference}};
  j["order_offset"] = FiniteOrNull(f.order_offset);
  j["order_offset_u"] =
      f.has_uncertainty ? FiniteOrNull(f.order_offset_u) : nullptr;
  j["ring_count"] = f.ring_count;
  j["centre_fringe_predicted"] = FringeStateName(f.centre_predicted);
  j["aperture_diameter_mm"] = FiniteOrNull(f.aperture_diameter_m * 1e3);
  j["sag_um"] = FiniteOrNull(f.sag_m * 1e6);
  j["power_fringes"] = FiniteOrNull(f.power_fringes);
  j["power_u_fringes"] =
      f.has_uncertainty ? FiniteOrNull(f.power_u_fringes) : nullptr;
  j["residual_rms_fringes"] = FiniteOrNull(f.residual_rms_fringes);
  j["points_used"] = f.points_used;
  j["points_rejected"] = f.points_rejected;
  if (f.test_plate) {
    j["part_radius_mm"] = FiniteOrNull(f.part_radius_m * 1e3);
    j["part_radius_u_mm"] =
        f.has_uncertainty ? FiniteOrNull(f.part_radius_u_m * 1e3) : nullptr;
    j["part_radius_u95_mm"] =
        f.has_uncertainty ? FiniteOrNull(f.part_radius_u95_m * 1e3) : nullptr;
    j["reference_radius_mm"] = f.reference_radius_m * 1e3;
    j["radius_deviation_um"] = FiniteOrNull(f.deviation_m * 1e6);
  }
  if (!r.from_diameters) {
    j["fringe_centre_px"] = {FiniteOrNull(f.centre_px.x),
                             FiniteOrNull(f.centre_px.y)};
    j["fringe_centre_u_px"] = FiniteOrNull(f.centre_u_px);
    j["centre_fringe"] = FringeStateName(r.centre_observed);
    j["astigmatism_fringes"] = FiniteOrNull(f.astigmatism_fringes);
    j["astigmatism_u_fringes"] =
        f.has_uncertainty ? FiniteOrNull(f.astigmatism_u_fringes) : nullptr;
    j["astigmatism_axis_deg"] = FiniteOrNull(f.astigmatism_axis_deg);
    j["visibility"] = FiniteOrNull(r.detection.visibility);
    j["blur_sigma_px"] = FiniteOrNull(r.detection.blur_sigma_px);
    j["residual_rms_px"] = FiniteOrNull(f.residual_rms_px);
    j["sectors_used"] = f.sectors_used;
    j["chi2_reduced"] = FiniteOrNull(f.chi2_reduced);
  }
  return j;
}

std::string RingsSummary(const RingsResult& r, const std::string& name) {
  std::ostringstream out;
  out << name << ": " << StatusName(r.status) << "\n";
  if (r.status != Status::kError) {
    const RingFitResult& f = r.fit;
    const char* label = f.test_plate ? "part radius" : "radius of curvature";
    out << "  " << label << "  " << Num(f.radius_m * 1e3, 8) << " mm";
    if (f.has_uncertainty) {
      out << "  u = " << Num(f.radius_u_m * 1e3, 3)
          << " mm, U95 = " << Num(f.radius_u95_m * 1e3, 3)
          << " mm (k = " << Num(f.coverage_factor, 3) << ")";
    } else {
      out << "  (" << f.uncertainty_note << ")";
    }
    out << "\n";
    if (f.test_plate) {
      out << "  against plate " << Num(f.reference_radius_m * 1e3, 8)
          << " mm: deviation " << Num(f.deviation_m * 1e6, 4) << " um\n";
    }
    out << "  order offset e  " << Fixed(f.order_offset, 3);
    if (f.has_uncertainty && f.model != RingModel::kNoOffset) {
      out << " +- " << Fixed(f.order_offset_u, 3);
    }
    out << "   rings " << f.ring_count << "\n";
    out << (f.over_test_diameter ? "  test diameter " : "  aperture ")
        << Fixed(f.aperture_diameter_m * 1e3, 3) << " mm: sag "
        << Num(f.sag_m * 1e6, 6) << " um, power " << Fixed(f.power_fringes, 2)
        << " fringes";
    if (f.has_uncertainty) out << " +- " << Fixed(f.power_u_fringes, 2);
    out << "\n";
    if (!r.from_diameters) {
      out << "  fringe centre (" << Fixed(f.centre_px.x, 2) << ", "
          << Fixed(f.centre_px.y, 2) << ") px +- " << Fixed(f.centre_u_px, 2)
          << " px, centre " << FringeStateName(r.centre_observed)
          << " (predicted " << FringeStateName(f.centre_predicted)
          << "), visibility " << Fixed(r.detection.visibility, 3) << "\n";
      out << "  astigmatism " << Fixed(f.astigmatism_fringes, 3) << " +- "
          << Fixed(f.astigmatism_u_fringes, 3) << " fringes at "
          << Fixed(f.astigmatism_axis_deg, 1) << " deg\n";
      out << "  residual rms " << Num(f.residual_rms_px, 3) << " px, "
          << f.points_used << " points in " << f.sectors_used << " sectors, "
          << f.points_rejected << " rejected\n";
    }
  }
  for (const std::string& m : r.messages)
    out << "  " << (r.status == Status::kError ? "error: " : "note: ") << m
        << "\n";
  return out.str();
}

}  // namespace figura
