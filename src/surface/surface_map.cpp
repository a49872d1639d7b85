#include "surface/surface_map.h"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <opencv2/imgproc.hpp>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "fringe/aperture.h"
#include "fringe/ring_fit.h"
#include "io/result_json.h"
#include "surface/zernike.h"

namespace figura {

namespace {

// Lower-case copy with surrounding blanks removed.
std::string Lower(std::string_view text) {
  std::string s(Trim(text));
  for (char& c : s)
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

// Fixed-point text with `digits` decimals.
std::string Fixed(double v, int digits) {
  if (!std::isfinite(v)) return "n/a";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", digits, v);
  return buffer;
}

// Appends `messages` with a prefix.
void Append(std::vector<std::string>* out, const std::vector<std::string>& in,
            const std::string& prefix) {
  for (const std::string& m : in) out->push_back(prefix + m);
}

Status Worse(Status a, Status b) {
  return static_cast<int>(a) > static_cast<int>(b) ? a : b;
}

// The disc of `c` as a CV_8U mask (255 inside, pixel centres at integers).
cv::Mat DiscMask(cv::Size size, const Circle& c) {
  cv::Mat mask(size, CV_8UC1, cv::Scalar(0));
  for (int y = 0; y < size.height; ++y) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(c, y, size.width, x0, x1);
    if (x1 >= x0) mask.row(y).colRange(x0, x1 + 1).setTo(255);
  }
  return mask;
}

// Direction (image axes, y down) from the thin side across the aperture:
// the gap grows along it.
cv::Point2d ThickDirection(ThinSide side) {
  switch (side) {
    case ThinSide::kLeft:
      return {1.0, 0.0};
    case ThinSide::kRight:
      return {-1.0, 0.0};
    case ThinSide::kTop:
      return {0.0, 1.0};
    case ThinSide::kBottom:
      return {0.0, -1.0};
  }
  return {1.0, 0.0};
}

// Removes piston and tilt (j = 0, 1, 2) from the map and the coefficients.
void RemovePistonTilt(MapResult* r, const cv::Mat& valid) {
  std::vector<double> low(3, 0.0);
  for (int j = 0; j < 3; ++j) low[j] = r->fit.coefficients_m[j];
  const cv::Mat plane =
      EvaluateZernikeGrid(low, r->aperture_px, r->height_m.size(), valid);
  cv::subtract(r->height_m, plane, r->height_m, valid);
  for (int j = 0; j < 3; ++j) r->fit.coefficients_m[j] = 0.0;
}

// The mode-independent sign statement.
std::string SignText(const MapOptions& o, MapMode mode) {
  if (mode == MapMode::kCarrier) {
    return std::string("gap grows away from the ") + ThinSideName(o.thin_side) +
           " side of the photo (thin side " +
           (o.thin_side_given ? "given by --thin-side"
                              : "assumed: --thin-side not given") +
           "); positive heights are a wider gap";
  }
  return std::string("contact at the ") + ContactName(o.contact) + " (" +
         (o.contact_given ? "given by --contact"
                          : "assumed: --contact not given") +
         "): the gap " +
         (o.contact == Contact::kCentre ? "grows outward from the centre"
                                        : "is largest at the centre") +
         "; positive heights are a wider gap";
}

// Whether the carrier probe was refused for aliasing: an aliased peak that
// holds enough of the fringe energy to be a carrier at all (the probe's
// kProbeMinRatio, phase/carrier.cpp); below that the reason is "no carrier".
bool AliasingIsTheReason(const CarrierProbe& probe) {
  return probe.aliased && probe.peak_ratio >= 0.5;
}

// The carrier path: demodulate (with unwrapping), scale to gap, fit.
void CarrierMap(const Image& image, const MapOptions& o, const cv::Mat& mask,
                MapResult* r) {
  CarrierResult c = DemodulateCarrier(image.pixels, mask, o.carrier);
  Append(&r->messages, c.messages, "carrier: ");
  r->carrier_cycles_per_px = c.carrier_cycles_per_px;
  r->fringe_count = c.fringe_count;
  if (c.status == Status::kError) {
    r->status = Status::kError;
    // The reason goes last (as in every result: the command prints it).
    if (AliasingIsTheReason(c.probe)) {
      r->messages.push_back(
          "aliased fringes: the carrier period is too short for "
          "the pixel grid (use a finer pixel pitch or less tilt)");
    }
    return;
  }
  r->status = Worse(r->status, c.status);
  // Sign: the carrier is reported with f_x > 0; the gap grows along the
  // thick direction, so psi has the gap's sign when f points that way.
  const cv::Point2d dir = ThickDirection(o.thin_side);
  const cv::Point2d f = c.carrier_cycles_per_px;
  const double fn = std::hypot(f.x, f.y);
  const double along = fn > 0.0 ? (f.x * dir.x + f.y * dir.y) / fn : 0.0;
  const double sign = along >= 0.0 ? 1.0 : -1.0;
  if (std::abs(along) < 0.26) {  // within ~15 deg of the fringes' direction
    r->status = Worse(r->status, Status::kWarning);
    r->messages.push_back(
        std::string("the thin side (") + ThinSideName(o.thin_side) +
        ") lies almost along the fringes: the sign of the map is uncertain; "
        "give the side across the fringes with --thin-side");
  }
  // gap = psi lambda / (4 pi n_gap) (one fringe = 2 pi = lambda / 2n).
  const double scale = sign * o.wavelength.value.metres /
                       (4.0 * std::numbers::pi * o.stack.gap_index);
  cv::Mat valid = c.valid.empty() ? mask.clone() : c.valid.clone();
  cv::Mat unwrapped = c.unwrapped;
  if (unwrapped.empty()) {
    UnwrapResult u = UnwrapPhase(c.phase, valid);
    unwrapped = u.phase;
    c.unreliable = u.unreliable;
    c.unreliable_fraction = u.unreliable_fraction;
    c.regions = u.regions;
  }
  r->height_m = cv::Mat(mask.size(), CV_32FC1,
                        cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  cv::Mat finite = (unwrapped == unwrapped);  // NaN != NaN
  cv::bitwise_and(valid, finite, valid);
  cv::Mat scaled;
  unwrapped.convertTo(scaled, CV_32F, scale);
  scaled.copyTo(r->height_m, valid);
  r->unreliable = c.unreliable.empty()
                      ? cv::Mat(mask.size(), CV_8UC1, cv::Scalar(0))
                      : c.unreliable;
  r->unreliable_fraction = c.unreliable_fraction;
  if (c.regions > 1) {
    r->status = Worse(r->status, Status::kWarning);
    r->messages.push_back(
        "the valid area falls into " + std::to_string(c.regions) +
        " separately unwrapped pieces: their relative heights are not tied");
  }
  ZernikeFitOptions fo;
  fo.max_order = o.max_order;
  r->fit = FitZernikeGrid(r->height_m, r->aperture_px, fo);
  r->order_used = o.max_order;
  Append(&r->messages, r->fit.messages, "zernike fit: ");
  if (r->fit.status == Status::kError) {
    r->status = Status::kError;
    return;
  }
  RemovePistonTilt(r, valid);
}

// The closed-fringe path: trace, fit the samples, evaluate the fit.
void ClosedMap(const Image& image, const MapOptions& o, const cv::Mat& mask,
               const Circle& clear, MapResult* r) {
  ClosedFringeOptions co;
  co.detection.aperture_centre_px = clear.centre;
  co.detection.aperture_diameter_px = 2.0 * clear.radius;
  co.detection.aperture_fraction =
      std::max(kClosedTraceFraction, o.aperture_fraction);
  if (image.info.full_scale > 0.0 && !image.info.is_float) {
    co.detection.full_scale = image.info.full_scale;
  }
  co.stack = o.stack;
  co.view = o.view;
  co.wavelength_m = o.wavelength.value.metres;
  co.contact = o.contact;
  const ClosedFringeResult t = TraceClosedFringes(image.pixels, co);
  Append(&r->messages, t.messages, "closed fringes: ");
  r->traced_points = static_cast<int>(t.samples.size());
  r->traced_rings = t.rings;
  r->fringe_count = t.fringes_in_aperture;
  if (t.status == Status::kError) {
    r->status = Status::kError;
    return;
  }
  r->status = Worse(r->status, t.status);
  r->order_used =
      SupportedClosedOrder(t.rings, co.detection.sectors, o.max_order);
  if (r->order_used < o.max_order) {
    r->status = Worse(r->status, Status::kWarning);
    r->messages.push_back(
        "the traced fringes (" + std::to_string(t.rings) +
        " dark and bright) support Zernike terms up to radial order " +
        std::to_string(r->order_used) + " only; fitted to that order, not " +
        std::to_string(o.max_order));
  }
  std::vector<SurfaceSample> samples;
  samples.reserve(t.samples.size());
  for (const GapSample& g : t.samples) {
    const cv::Point2d p = SurfacePoint(r->aperture_px, g.x_px, g.y_px);
    samples.push_back({p.x, p.y, g.gap_m, 1.0});
  }
  ZernikeFitOptions fo;
  fo.max_order = r->order_used;
  r->fit = FitZernike(samples, fo);
  Append(&r->messages, r->fit.messages, "zernike fit: ");
  if (r->fit.status == Status::kError) {
    r->status = Status::kError;
    return;
  }
  // Between the traced fringes the map is the fitted surface.
  r->height_m = EvaluateZernikeGrid(r->fit.coefficients_m, r->aperture_px,
                                    mask.size(), mask);
  r->unreliable = cv::Mat(mask.size(), CV_8UC1, cv::Scalar(0));
  RemovePistonTilt(r, mask);
  const double fringe = o.wavelength.value.metres / 2.0;
  if (r->fit.residual_rms_m > 0.1 * fringe) {
    r->status = Worse(r->status, Status::kWarning);
    r->messages.push_back(
        "the traced fringes scatter by " +
        Fixed(r->fit.residual_rms_m / fringe, 2) +
        " fringe RMS about the fitted surface: misnumbered or broken fringes?");
  }
}

}  // namespace

MapMode ParseMapMode(std::string_view text, std::string_view what) {
  const std::string s = Lower(text);
  if (s == "auto") return MapMode::kAuto;
  if (s == "carrier") return MapMode::kCarrier;
  if (s == "closed") return MapMode::kClosed;
  throw InputError(std::string(what) + ": '" + std::string(text) +
                   "' is not a mode; accepted: auto, carrier, closed");
}

const char* MapModeName(MapMode mode) {
  switch (mode) {
    case MapMode::kAuto:
      return "auto";
    case MapMode::kCarrier:
      return "carrier";
    case MapMode::kClosed:
      return "closed";
  }
  return "auto";
}

ThinSide ParseThinSide(std::string_view text, std::string_view what) {
  const std::string s = Lower(text);
  if (s == "left") return ThinSide::kLeft;
  if (s == "right") return ThinSide::kRight;
  if (s == "top") return ThinSide::kTop;
  if (s == "bottom") return ThinSide::kBottom;
  throw InputError(std::string(what) + ": '" + std::string(text) +
                   "' is not a side; accepted: left, right, top, bottom");
}

const char* ThinSideName(ThinSide side) {
  switch (side) {
    case ThinSide::kLeft:
      return "left";
    case ThinSide::kRight:
      return "right";
    case ThinSide::kTop:
      return "top";
    case ThinSide::kBottom:
      return "bottom";
  }
  return "left";
}

std::string MapOptions::Check() const {
  if (!(wavelength.value.metres > 0.0 &&
        std::isfinite(wavelength.value.metres))) {
    return "--wavelength must be a positive length";
  }
  if (std::string why = stack.Check(); !why.empty()) return why;
  if (max_order < 2 || max_order > ZernikePolynomial::kMaxOrder) {
    return "--terms: the radial order must lie between 2 and " +
           std::to_string(ZernikePolynomial::kMaxOrder);
  }
  if (aperture_centre_px.has_value() != aperture_diameter_px.has_value()) {
    return "the aperture needs both --aperture-centre and --aperture-diameter, "
           "or neither";
  }
  if (aperture_centre_px && (!std::isfinite(aperture_centre_px->x) ||
                             !std::isfinite(aperture_centre_px->y))) {
    return "--aperture-centre must be finite";
  }
  if (aperture_diameter_px &&
      !(*aperture_diameter_px > 0.0 && std::isfinite(*aperture_diameter_px))) {
    return "--aperture-diameter must be a positive number of pixels";
  }
  if (!(aperture_fraction > 0.0 && aperture_fraction <= 1.0)) {
    return "the aperture fraction must lie in (0, 1]";
  }
  if (pixel_pitch_m &&
      !(*pixel_pitch_m > 0.0 && std::isfinite(*pixel_pitch_m))) {
    return "--pixel-pitch must be a positive length";
  }
  if (pixel_pitch_m &&
      (*pixel_pitch_m < kMinPixelPitchM || *pixel_pitch_m > kMaxPixelPitchM)) {
    return "--pixel-pitch must lie between 1 nm and 1 m (the object-side "
           "size of one pixel)";
  }
  return carrier.Check();
}

MapResult AnalyseMap(const Image& image, const MapOptions& options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  MapResult r;
  r.status = Status::kOk;
  const cv::Mat& px = image.pixels;
  if (px.empty() || px.type() != CV_32FC1) {
    throw InputError("the image is empty or not a grey float image");
  }
  // Aperture.
  if (options.aperture_centre_px) {
    r.aperture_px = {*options.aperture_centre_px,
                     *options.aperture_diameter_px / 2.0};
  } else {
    const ApertureResult a = DetectAperture(px);
    if (!a.ok) {
      r.status = Status::kError;
      r.messages.push_back("no aperture edge found (" + a.message +
                           "); give --aperture-centre and --aperture-diameter");
      return r;
    }
    r.aperture_px = a.circle;
    r.aperture_detected = true;
  }
  const Circle clear = r.aperture_px;
  r.aperture_px.radius *= options.aperture_fraction;
  if (r.aperture_px.radius < kMinMapRadiusPx) {
    r.status = Status::kError;
    r.messages.push_back("too little area: the evaluated aperture is " +
                         Fixed(2.0 * r.aperture_px.radius, 1) +
                         " px across; a map needs at least " +
                         Fixed(2.0 * kMinMapRadiusPx, 0) + " px");
    return r;
  }
  const cv::Mat mask = DiscMask(px.size(), r.aperture_px);
  if (cv::countNonZero(mask) <
      0.5 * std::numbers::pi * r.aperture_px.radius * r.aperture_px.radius) {
    r.status = Status::kError;
    r.messages.push_back(
        "too little area: most of the aperture lies outside the image");
    return r;
  }
  // Mode.
  MapMode mode = options.mode;
  CarrierProbe probe;
  if (mode == MapMode::kAuto) {
    probe = ProbeCarrier(px, mask);
    mode = probe.found ? MapMode::kCarrier : MapMode::kClosed;
  }
  r.mode = mode;
  r.sign_assumption = SignText(options, mode);
  if (mode == MapMode::kCarrier) {
    CarrierMap(image, options, mask, &r);
  } else {
    ClosedMap(image, options, mask, clear, &r);
    if (r.status == Status::kError && options.mode == MapMode::kAuto) {
      // Neither method found fringes: say why the carrier was refused too,
      // last (the reason the command prints).
      const std::string why =
          probe.reason.empty() ? std::string("none found") : probe.reason;
      if (AliasingIsTheReason(probe)) {
        r.messages.push_back("aliased fringes: " + why +
                             " (use a finer pixel pitch or less tilt)");
      } else {
        r.messages.push_back("no fringes to map: no carrier (" + why +
                             ") and no closed fringes" +
                             (probe.aliased
                                  ? "; the strongest spectral peak lies near "
                                    "the sampling limit (aliased fringes?)"
                                  : ""));
      }
    }
  }
  if (r.status == Status::kError) return r;
  r.metrics = ComputeFormMetrics(r.height_m, r.aperture_px, r.fit);
  if (r.unreliable_fraction > kUnreliableWarnFraction) {
    r.status = Worse(r.status, Status::kWarning);
    r.messages.push_back("the unwrapping is unreliable over " +
                         Fixed(100.0 * r.unreliable_fraction, 1) +
                         " % of the aperture (marked on the picture)");
  }
  if (!options.contact_given && mode == MapMode::kClosed) {
    r.messages.push_back(
        "sign: contact at the centre assumed (give --contact from the press "
        "test)");
  }
  if (!options.thin_side_given && mode == MapMode::kCarrier) {
    r.messages.push_back(
        "sign: thin side on the left assumed (give --thin-side from the press "
        "test)");
  }
  return r;
}

nlohmann::json MapSettingsJson(const MapOptions& o) {
  nlohmann::json s = {
      {"wavelength_nm", o.wavelength.value.metres * 1e9},
      {"upper_index", o.stack.upper_index},
      {"gap_index", o.stack.gap_index},
      {"lower_index", o.stack.lower_index},
      {"view", ViewName(o.view)},
      {"contact", ContactName(o.contact)},
      {"contact_given", o.contact_given},
      {"thin_side", ThinSideName(o.thin_side)},
      {"thin_side_given", o.thin_side_given},
      {"terms_max_order", o.max_order},
      {"mode", MapModeName(o.mode)},
      {"aperture_fraction", o.aperture_fraction},
      {"aperture_centre_px",
       o.aperture_centre_px ? nlohmann::json::array({o.aperture_centre_px->x,
                                                     o.aperture_centre_px->y})
                            : nlohmann::json(nullptr)},
      {"aperture_diameter_px", o.aperture_diameter_px
                                   ? nlohmann::json(*o.aperture_diameter_px)
                                   : nlohmann::json(nullptr)},
      {"pixel_pitch_um", o.pixel_pitch_m
                             ? nlohmann::json(*o.pixel_pitch_m * 1e6)
                             : nlohmann::json(nullptr)},
      {"sideband_fraction", o.carrier.sideband_fraction},
      {"extension_iterations", o.carrier.extension_iterations},
      {"min_fringes", o.carrier.min_fringes},
      {"min_relative_modulation", o.carrier.min_relative_modulation},
  };
  if (!o.wavelength.source_name.empty())
    s["wavelength_source"] = o.wavelength.source_name;
  if (!o.wavelength.citation.empty())
    s["wavelength_citation"] = o.wavelength.citation;
  return s;
}

nlohmann::json MapJson(const MapResult& r, const MapOptions& o,
                       const nlohmann::json& input) {
  nlohmann::json j;
  j["input"] = input;
  j["settings"] = MapSettingsJson(o);
  j["tool"] = ToolJson();
  j["status"] = StatusJson(r.status, r.messages);
  if (r.status == Status::kError) return j;
  const double lambda = o.wavelength.value.metres;
  j["mode"] = MapModeName(r.mode);
  j["sign_assumption"] = r.sign_assumption;
  j["aperture_centre_px"] = {r.aperture_px.centre.x, r.aperture_px.centre.y};
  j["aperture_diameter_px"] = 2.0 * r.aperture_px.radius;
  j["aperture_detected"] = r.aperture_detected;
  if (o.pixel_pitch_m) {
    j["aperture_diameter_mm"] =
        2.0 * r.aperture_px.radius * *o.pixel_pitch_m * 1e3;
  }
  j["zernike_max_order"] = r.fit.max_order;
  j["zernike_note"] =
      "ISO 24157 index, RMS-normalised, gap in nm over the evaluated aperture "
      "(x right, y up); piston and tilt (j = 0..2) removed and not listed";
  nlohmann::json z = nlohmann::json::array();
  for (std::size_t k = 3; k < r.fit.coefficients_m.size(); ++k) {
    const ZernikeMode m = ZernikeModeOf(static_cast<int>(k));
    z.push_back(
        {{"j", k},
         {"n", m.n},
         {"m", m.m},
         {"coefficient_nm", FiniteOrNull(r.fit.coefficients_m[k] * 1e9)},
         {"u_nm", k < r.fit.u_m.size() ? FiniteOrNull(r.fit.u_m[k] * 1e9)
                                       : nlohmann::json(nullptr)}});
  }
  j["zernike"] = z;
  const FormMetrics& f = r.metrics;
  auto triple = [&](const std::string& name, double metres) {
    j[name + "_nm"] = FiniteOrNull(metres * 1e9);
    j[name + "_fringes"] = FiniteOrNull(MetresToFringes(metres, lambda));
    j[name + "_waves"] = FiniteOrNull(MetresToWaves(metres, lambda));
  };
  triple("pv", f.pv_m);
  triple("pvr", f.pvr_m);
  triple("rms", f.rms_m);
  triple("power", f.power_m);
  triple("power_u", f.power_u_m);
  triple("power_u95", kMapCoverageFactor * f.power_u_m);
  triple("irregularity", f.irregularity_m);
  triple("rsi", f.rsi_m);
  triple("rmst", f.rmst_m);
  triple("rmsi", f.rmsi_m);
  triple("rmsa", f.rmsa_m);
  j["coverage_factor"] = kMapCoverageFactor;
  j["uncertainty_method"] =
      "power: Zernike fit covariance for the effective number of independent "
      "pixels (1/e area of the residual autocorrelation); PV, PVr, B, C and "
      "the RMS forms: none (docs/method.md)";
  j["fit_residual_rms_nm"] = FiniteOrNull(r.fit.residual_rms_m * 1e9);
  j["correlation_area_px"] = FiniteOrNull(r.fit.correlation_area_px);
  j["covariance_inflation"] = FiniteOrNull(r.fit.covariance_inflation);
  j["effective_samples"] = FiniteOrNull(r.fit.effective_samples);
  j["valid_pixels"] = f.pixels;
  j["unreliable_fraction"] = r.unreliable_fraction;
  j["fringe_unit_note"] =
      "one fringe = half the test wavelength of gap (ISO 10110-5); one wave = "
      "the test wavelength";
  if (r.mode == MapMode::kCarrier) {
    j["carrier_cycles_per_px"] = {r.carrier_cycles_per_px.x,
                                  r.carrier_cycles_per_px.y};
    j["carrier_fringes"] = r.fringe_count;
  } else {
    j["traced_points"] = r.traced_points;
    j["traced_fringes"] = r.traced_rings;
    j["fringes_in_aperture"] = r.fringe_count;
  }
  return j;
}

std::string MapSummary(const MapResult& r, const MapOptions& o,
                       const std::string& name) {
  std::ostringstream out;
  out << name << ": " << StatusName(r.status) << "\n";
  if (r.status != Status::kError) {
    const double lambda = o.wavelength.value.metres;
    auto line = [&](const char* label, double metres) {
      out << "  " << label << " " << Fixed(metres * 1e9, 1) << " nm  "
          << Fixed(MetresToFringes(metres, lambda), 3) << " fringes  "
          << Fixed(MetresToWaves(metres, lambda), 3) << " waves\n";
    };
    out << "  mode " << MapModeName(r.mode) << ", aperture ("
        << Fixed(r.aperture_px.centre.x, 1) << ", "
        << Fixed(r.aperture_px.centre.y, 1) << ") px, "
        << Fixed(2.0 * r.aperture_px.radius, 1)
        << " px across, Zernike to order " << r.fit.max_order << "\n";
    out << "  sign: " << r.sign_assumption << "\n";
    const FormMetrics& f = r.metrics;
    line("PV            ", f.pv_m);
    line("PVr           ", f.pvr_m);
    line("RMS           ", f.rms_m);
    line("power A       ", f.power_m);
    const double u95 = kMapCoverageFactor * f.power_u_m;
    out << "    (U95 = " << Fixed(u95 * 1e9, 1) << " nm, "
        << Fixed(MetresToFringes(u95, lambda), 3)
        << " fringes, k = " << Fixed(kMapCoverageFactor, 0)
        << "; u = " << Fixed(f.power_u_m * 1e9, 1) << " nm)\n";
    line("irregularity B", f.irregularity_m);
    line("rot. sym. C   ", f.rsi_m);
    line("RMSi          ", f.rmsi_m);
    line("RMSa          ", f.rmsa_m);
  }
  for (const std::string& m : r.messages)
    out << "  " << (r.status == Status::kError ? "error: " : "note: ") << m
        << "\n";
  return out.str();
}

}  // namespace figura
