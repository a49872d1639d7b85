// The whole per-image surface map behind `figura map`: aperture, mode
// (carrier or closed fringes), phase or traced fringe samples, gap height,
// Zernike fit with covariance, form metrics (ISO 10110-5 A, B, C, RMS
// forms), the result JSON of ../shared/design.md and the human summary.
//
// Height map: the gap between the part and the reference, in metres, at
// surface coordinates (x right, y up, origin at the aperture centre, rho = 1
// at the evaluated edge), piston and tilt removed. Positive = a larger gap.
//   carrier:  gap = psi * lambda / (4 pi n_gap), psi the unwrapped phase
//             (one fringe = lambda / (2 n_gap) of gap = 2 pi of phase);
//   closed:   gap = (k + d) * lambda / (2 n_gap) at traced fringe centres,
//             the map evaluated from the Zernike fit.
// Sign: one photograph shows |gap| changes, not their direction. Carrier
// photos take it from `thin_side` (the side of the aperture where the
// surfaces are closest, from the press test), closed fringes from `contact`;
// the assumption used is stated in every result (sign_assumption).
#pragma once

#include <nlohmann/json.hpp>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/light_source.h"
#include "fringe/circle.h"
#include "io/image.h"
#include "optics/media.h"
#include "optics/sphere.h"
#include "phase/carrier.h"
#include "phase/closed_fringe.h"
#include "phase/unwrap.h"
#include "surface/form_metrics.h"
#include "surface/zernike_fit.h"

namespace figura {

// Which fringe analysis a map uses.
enum class MapMode { kAuto, kCarrier, kClosed };
// Parses "auto" / "carrier" / "closed" (case-insensitive). Throws InputError
// naming `what` and the accepted words.
MapMode ParseMapMode(std::string_view text, std::string_view what = "--mode");
// "auto" / "carrier" / "closed".
const char* MapModeName(MapMode mode);

// The side of the aperture (as seen in the photograph) where the gap is
// thinnest, for the sign of a carrier map.
enum class ThinSide { kLeft, kRight, kTop, kBottom };
// Parses "left" / "right" / "top" / "bottom". Throws InputError naming
// `what` and the accepted words.
ThinSide ParseThinSide(std::string_view text,
                       std::string_view what = "--thin-side");
// "left" / "right" / "top" / "bottom".
const char* ThinSideName(ThinSide side);

// Settings of one map.
struct MapOptions {
  Wavelength wavelength{Length::Nanometres(546.074), {}, {}, {}, {}};
  MediaStack stack;  // gap index (and neighbours for the dark/bright rule)
  View view = View::kReflected;
  // Closed fringes: where the surfaces touch (press test). When not given,
  // centre is assumed and every result says so.
  Contact contact = Contact::kCentre;
  bool contact_given = false;
  // Carrier fringes: the thin side of the wedge (press test). When not
  // given, left is assumed and every result says so.
  ThinSide thin_side = ThinSide::kLeft;
  bool thin_side_given = false;
  // Highest Zernike radial order fitted (1..ZernikePolynomial::kMaxOrder).
  int max_order = 8;
  MapMode mode = MapMode::kAuto;
  // Clear aperture given by the user (pixels); detected when absent. Same
  // names as RingDetectionOptions.
  std::optional<cv::Point2d> aperture_centre_px;
  std::optional<double> aperture_diameter_px;
  // Fraction of the aperture radius evaluated (rolled or chipped edge).
  double aperture_fraction = 0.95;
  // Object-side size of one pixel (m), for mm axes; absent = pixel axes.
  std::optional<double> pixel_pitch_m;
  CarrierOptions carrier;

  // An empty string when usable, otherwise a readable reason naming the
  // option.
  [[nodiscard]] std::string Check() const;
};

// Smallest evaluated aperture radius (pixels) a map accepts.
inline constexpr double kMinMapRadiusPx = 24.0;
// A map warns when more than this fraction of the aperture is unreliable.
inline constexpr double kUnreliableWarnFraction = 0.02;

// The outcome for one photograph.
struct MapResult {
  Status status = Status::kError;
  std::vector<std::string> messages;
  MapMode mode = MapMode::kAuto;  // the mode used (carrier or closed)
  std::string sign_assumption;    // stated in every result
  Circle aperture_px;             // evaluated aperture
  bool aperture_detected = false;
  // Gap height (m), CV_32F, NaN outside the evaluated aperture and where
  // invalid; piston and tilt removed.
  cv::Mat height_m;
  // CV_8U, 255 where the unwrapping is unreliable (or dust was masked).
  cv::Mat unreliable;
  double unreliable_fraction = 0.0;
  ZernikeFitResult fit;  // over the evaluated aperture, metres of gap
  FormMetrics metrics;
  // Carrier mode.
  cv::Point2d carrier_cycles_per_px;
  double fringe_count = 0.0;
  // Closed mode.
  int traced_points = 0;
  int traced_rings = 0;
  int order_used = 0;  // radial order actually fitted
};

// Analyses one image. Throws InputError for invalid options; unusable
// photographs (no fringes, aliased, too little area) give status kError
// with a reason.
MapResult AnalyseMap(const Image& image, const MapOptions& options);

// Every setting used, defaults included (the `settings` block).
nlohmann::json MapSettingsJson(const MapOptions& options);

// The result object of design.md for one input (`input` from InputJson).
nlohmann::json MapJson(const MapResult& result, const MapOptions& options,
                       const nlohmann::json& input);

// A human summary (several lines, nm / fringes / waves side by side,
// warnings) for standard output.
std::string MapSummary(const MapResult& result, const MapOptions& options,
                       const std::string& name);

}  // namespace figura
