// The surface map (surface/surface_map.h AnalyseMap) on photographs from the
// project's simulator, in process, against the simulator's exact gap
// (sim/gap.h: exact sphere sags, wedge and Zernike terms, evaluated at every
// pixel centre). The truth's Zernike terms and form numbers are taken over
// the same evaluated aperture as the map's (the truth map fitted with the
// same FitZernikeGrid / ComputeFormMetrics), so that the check is of the
// fringe analysis, not of the metric definitions.
// Targets (issue "Surface maps"): carrier photos with noise, blur and gamma:
// every Zernike coefficient through radial order 4 within 2 nm, map RMS
// error < 3 nm, A, B, C within 0.05 fringe; closed-fringe test-plate photos
// (3 fringes power, 0.6 fringe astigmatism, 0.25 fringe spherical): A, B, C
// within 0.1 fringe and the sign right with --contact.
// One fringe = half the test wavelength (ISO 10110-5, references.md).
#include "surface/surface_map.h"

#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <limits>
#include <numbers>
#include <opencv2/imgproc.hpp>
#include <string>
#include <utility>
#include <vector>

#include "map_truth.h"
#include "sim/gap.h"
#include "sim/simulation.h"
#include "surface/zernike.h"

namespace figura {
namespace {

constexpr double kHeD = 587.5618e-9;  // helium d line (references.md)
constexpr double kHgE = 546.074e-9;   // mercury e line (references.md)

// Two flats with a wedge and shape terms through order 4 (invented window),
// 16-bit camera with noise, blur, fall-off and gamma.
SimulationOptions CarrierScene(double tilt_x_m, double tilt_y_m) {
  SimulationOptions sim;
  sim.gap.part_radius_m = GapOptions::kFlat;
  sim.gap.plate_radius_m = GapOptions::kFlat;
  sim.gap.contact_offset_m = 4.0e-6;
  sim.gap.tilt_x_m = tilt_x_m;
  sim.gap.tilt_y_m = tilt_y_m;
  sim.gap.zernike_m = {0,      0,     0,    25e-9, 40e-9, -30e-9, 8e-9, 15e-9,
                       -10e-9, -6e-9, 5e-9, 6e-9,  12e-9, -4e-9,  3e-9};
  sim.wavelength = Wavelength{Length::Metres(kHeD), {}, {}, {}, {}};
  sim.aperture_diameter_m = 30e-3;
  sim.camera.width_px = 640;
  sim.camera.height_px = 560;
  sim.camera.pixel_pitch_m = 60e-6;  // 500 px across
  sim.centre_x_px = 322.5;
  sim.centre_y_px = 277.25;
  sim.camera.blur_sigma_px = 1.0;
  sim.camera.falloff = 0.15;
  sim.camera.background = 0.02;
  sim.camera.full_well_e = 12000;
  sim.camera.read_noise_e = 6;
  sim.camera.gamma = 0.8;
  sim.seed = 3107;
  return sim;
}

// A test plate against a part: 3 fringes of power over the evaluated
// aperture, 0.6 fringe PV of astigmatism, 0.25 fringe PV of spherical
// aberration (invented part), mercury e line.
SimulationOptions TestPlateScene(Contact contact) {
  const double half_wave = kHgE / 2.0;
  SimulationOptions sim;
  sim.gap.part_radius_m = 0.050;
  const double r = 0.95 * 0.01;
  const double curvature = 2.0 * 3.0 * half_wave / (r * r);
  sim.gap.contact = contact;
  sim.gap.plate_radius_m =
      -1.0 /
      (1.0 / 0.050 - (contact == Contact::kCentre ? curvature : -curvature));
  sim.gap.contact_offset_m = 180e-9;
  sim.gap.zernike_m.assign(13, 0.0);
  sim.gap.zernike_m[5] = 0.6 * half_wave / (2.0 * std::sqrt(6.0));
  sim.gap.zernike_m[12] = (contact == Contact::kCentre ? 1.0 : -1.0) * 0.25 *
                          half_wave / (1.5 * std::sqrt(5.0));
  sim.wavelength = Wavelength{Length::Metres(kHgE), {}, {}, {}, {}};
  sim.camera.width_px = 600;
  sim.camera.height_px = 560;
  sim.camera.pixel_pitch_m = 40e-6;
  sim.aperture_diameter_m = 20e-3;
  sim.centre_x_px = 303.5;
  sim.centre_y_px = 276.0;
  sim.camera.blur_sigma_px = 1.0;
  sim.camera.falloff = 0.2;
  sim.camera.background = 0.02;
  sim.camera.full_well_e = 15000;
  sim.camera.read_noise_e = 6;
  sim.camera.gamma = 0.9;
  sim.seed = 29;
  return sim;
}

MapOptions OptionsFor(const SimulationOptions& sim) {
  MapOptions o;
  o.wavelength = sim.wavelength;
  o.stack = sim.stack;
  o.view = sim.view;
  return o;
}

using testing::MapTruth;
using testing::ToImage;
using testing::TruthOver;

// RMS of (map - truth) over pixels valid in both, about the mean.
double MapRmsError(const cv::Mat& map, const cv::Mat& truth) {
  double s = 0.0;
  double ss = 0.0;
  long n = 0;
  for (int y = 0; y < map.rows; ++y) {
    for (int x = 0; x < map.cols; ++x) {
      const double a = static_cast<double>(map.at<float>(y, x));
      const double b = static_cast<double>(truth.at<float>(y, x));
      if (!std::isfinite(a) || !std::isfinite(b)) continue;
      s += a - b;
      ss += (a - b) * (a - b);
      ++n;
    }
  }
  if (n == 0) return std::numeric_limits<double>::infinity();
  const double mean = s / n;
  return std::sqrt(std::max(ss / n - mean * mean, 0.0));
}

double Fringes(double metres, double lambda) { return metres / (lambda / 2); }

TEST(SurfaceMap, CarrierPhotoMeetsTheAccuracyTargets) {
  // Gap growing to the right and downwards: the thin side is the left.
  const SimulationOptions sim = CarrierScene(3.0e-6, -1.0e-6);
  const SimulationResult photo = Simulate(sim);
  MapOptions o = OptionsFor(sim);
  o.thin_side = ThinSide::kLeft;
  o.thin_side_given = true;
  const MapResult r = AnalyseMap(ToImage(photo), o);
  ASSERT_NE(r.status, Status::kError) << r.messages.front();
  EXPECT_EQ(r.mode, MapMode::kCarrier);
  const MapTruth t = TruthOver(sim, r);
  for (int j = 3; j < ZernikeCount(4); ++j) {
    SCOPED_TRACE("j = " + std::to_string(j));
    EXPECT_NEAR(r.fit.coefficients_m[j] * 1e9, t.fit.coefficients_m[j] * 1e9,
                2.0);
  }
  const double rms_error = MapRmsError(r.height_m, t.height_m);
  std::cout << "carrier map: rms error " << rms_error * 1e9 << " nm, "
            << r.metrics.pixels << " valid pixels of " << t.metrics.pixels
            << ", B fit " << Fringes(r.metrics.irregularity_fit_m, kHeD)
            << " truth " << Fringes(t.metrics.irregularity_fit_m, kHeD) << "\n";
  EXPECT_LT(rms_error, 3e-9);
  EXPECT_NEAR(Fringes(r.metrics.power_m, kHeD),
              Fringes(t.metrics.power_m, kHeD), 0.05);
  EXPECT_NEAR(Fringes(r.metrics.irregularity_m, kHeD),
              Fringes(t.metrics.irregularity_m, kHeD), 0.05);
  EXPECT_NEAR(Fringes(r.metrics.rsi_m, kHeD), Fringes(t.metrics.rsi_m, kHeD),
              0.05);
  EXPECT_NE(r.sign_assumption.find("given"), std::string::npos);
}

TEST(SurfaceMap, CarrierSignFollowsTheThinSide) {
  // Gap growing to the left: the thin side is the right. The same shape.
  const SimulationOptions sim = CarrierScene(-3.0e-6, 0.8e-6);
  const SimulationResult photo = Simulate(sim);
  MapOptions o = OptionsFor(sim);
  o.thin_side = ThinSide::kRight;
  o.thin_side_given = true;
  const MapResult r = AnalyseMap(ToImage(photo), o);
  ASSERT_NE(r.status, Status::kError) << r.messages.front();
  const MapTruth t = TruthOver(sim, r);
  EXPECT_NEAR(r.fit.coefficients_m[4] * 1e9, t.fit.coefficients_m[4] * 1e9,
              2.0);
  EXPECT_NEAR(r.fit.coefficients_m[5] * 1e9, t.fit.coefficients_m[5] * 1e9,
              2.0);
  // The wrong side flips every term (the photo cannot tell).
  o.thin_side = ThinSide::kLeft;
  const MapResult w = AnalyseMap(ToImage(photo), o);
  ASSERT_NE(w.status, Status::kError);
  EXPECT_NEAR(w.fit.coefficients_m[4] * 1e9, -t.fit.coefficients_m[4] * 1e9,
              2.0);
}

TEST(SurfaceMap, ClosedFringeTestPlateMeetsTheTargets) {
  for (Contact contact : {Contact::kCentre, Contact::kEdge}) {
    SCOPED_TRACE(ContactName(contact));
    const SimulationOptions sim = TestPlateScene(contact);
    const SimulationResult photo = Simulate(sim);
    MapOptions o = OptionsFor(sim);
    o.contact = contact;
    o.contact_given = true;
    const MapResult r = AnalyseMap(ToImage(photo), o);
    ASSERT_NE(r.status, Status::kError) << r.messages.front();
    EXPECT_EQ(r.mode, MapMode::kClosed);
    const MapTruth t = TruthOver(sim, r);
    const double a = Fringes(r.metrics.power_m, kHgE);
    const double b = Fringes(r.metrics.irregularity_m, kHgE);
    const double c = Fringes(r.metrics.rsi_m, kHgE);
    std::cout << ContactName(contact) << ": A " << a << " (truth "
              << Fringes(t.metrics.power_m, kHgE) << "), B " << b << " ("
              << Fringes(t.metrics.irregularity_m, kHgE) << "), C " << c << " ("
              << Fringes(t.metrics.rsi_m, kHgE) << ") fringes\n";
    EXPECT_NEAR(a, Fringes(t.metrics.power_m, kHgE), 0.1);
    EXPECT_NEAR(b, Fringes(t.metrics.irregularity_m, kHgE), 0.1);
    EXPECT_NEAR(c, Fringes(t.metrics.rsi_m, kHgE), 0.1);
    // Sign: centre contact = gap growing outward = positive power.
    EXPECT_EQ(a > 0.0, contact == Contact::kCentre);
    EXPECT_NEAR(std::abs(a), 3.0, 0.3);
  }
}

TEST(SurfaceMap, ClosedFringesWithoutContactStateTheAssumption) {
  const SimulationOptions sim = TestPlateScene(Contact::kCentre);
  const MapResult r = AnalyseMap(ToImage(Simulate(sim)), OptionsFor(sim));
  ASSERT_NE(r.status, Status::kError) << r.messages.front();
  EXPECT_NE(r.sign_assumption.find("assumed"), std::string::npos);
  const nlohmann::json j =
      MapJson(r, OptionsFor(sim), nlohmann::json::object());
  EXPECT_EQ(j["sign_assumption"], r.sign_assumption);
  EXPECT_EQ(j["mode"], "closed");
  EXPECT_TRUE(j["zernike"].is_array());
  EXPECT_EQ(j["zernike"][0]["j"], 3);
  EXPECT_TRUE(j.contains("power_fringes") && j.contains("power_waves") &&
              j.contains("irregularity_fringes") && j.contains("rsi_fringes"));
}

TEST(SurfaceMap, UniformImageHasNoFringes) {
  Image image;
  image.pixels = cv::Mat(400, 400, CV_32F, cv::Scalar(20.0));
  cv::circle(image.pixels, {200, 200}, 150, cv::Scalar(30000.0), cv::FILLED);
  image.info.full_scale = 65535.0;
  MapOptions o;
  const MapResult r = AnalyseMap(image, o);
  EXPECT_EQ(r.status, Status::kError);
  ASSERT_FALSE(r.messages.empty());
  // The reason is the last message (the one `figura map` prints).
  EXPECT_NE(r.messages.back().find("no fringes to map"), std::string::npos)
      << r.messages.back();
  // Forced carrier: the spectrum holds no carrier at all, which is the
  // reason, not aliasing (the probe's peak ratio is low).
  o.mode = MapMode::kCarrier;
  const MapResult c = AnalyseMap(image, o);
  EXPECT_EQ(c.status, Status::kError);
  ASSERT_FALSE(c.messages.empty());
  EXPECT_NE(c.messages.back().find("no carrier"), std::string::npos)
      << c.messages.back();
  for (const std::string& m : c.messages) {
    EXPECT_EQ(m.find("aliased fringes"), std::string::npos) << m;
  }
}

TEST(SurfaceMap, AliasedFringesAreAnError) {
  // Straight fringes of 2.6 px period: under the ~3 px a carrier needs.
  Image image;
  image.pixels = cv::Mat(400, 400, CV_32F, cv::Scalar(20.0));
  for (int y = 0; y < 400; ++y) {
    for (int x = 0; x < 400; ++x) {
      if (std::hypot(x - 200.0, y - 200.0) > 160.0) continue;
      image.pixels.at<float>(y, x) = static_cast<float>(
          30000.0 +
          20000.0 * std::cos(2.0 * std::numbers::pi * (x + 0.3 * y) / 2.6));
    }
  }
  image.info.full_scale = 65535.0;
  MapOptions o;
  o.aperture_centre_px = cv::Point2d(200, 200);
  o.aperture_diameter_px = 320.0;
  const MapResult r = AnalyseMap(image, o);
  EXPECT_EQ(r.status, Status::kError);
  ASSERT_FALSE(r.messages.empty());
  EXPECT_NE(r.messages.back().find("alias"), std::string::npos)
      << r.messages.back();
}

TEST(SurfaceMap, TinyApertureIsTooLittleArea) {
  const SimulationOptions sim = CarrierScene(3.0e-6, -1.0e-6);
  MapOptions o = OptionsFor(sim);
  o.aperture_centre_px = cv::Point2d(sim.CentreX(), sim.CentreY());
  o.aperture_diameter_px = 30.0;
  const MapResult r = AnalyseMap(ToImage(Simulate(sim)), o);
  EXPECT_EQ(r.status, Status::kError);
  ASSERT_FALSE(r.messages.empty());
  EXPECT_NE(r.messages.back().find("too little area"), std::string::npos);
}

TEST(SurfaceMap, OptionsAreChecked) {
  MapOptions o;
  EXPECT_TRUE(o.Check().empty());
  o.max_order = 20;
  EXPECT_NE(o.Check().find("--terms"), std::string::npos);
  o = MapOptions{};
  o.aperture_diameter_px = 100.0;
  EXPECT_FALSE(o.Check().empty());
  EXPECT_THROW(ParseMapMode("spiral"), InputError);
  EXPECT_EQ(ParseThinSide(" Top "), ThinSide::kTop);
  EXPECT_THROW(ParseThinSide("up"), InputError);
  // The pixel pitch: positive and within 1 nm .. 1 m, as for rings.
  o = MapOptions{};
  o.pixel_pitch_m = 60e-6;
  EXPECT_TRUE(o.Check().empty());
  for (const double bad : {0.0, -1e-6, 1e200, 1e-200}) {
    o.pixel_pitch_m = bad;
    EXPECT_NE(o.Check().find("--pixel-pitch"), std::string::npos) << bad;
  }
}

}  // namespace
}  // namespace figura
