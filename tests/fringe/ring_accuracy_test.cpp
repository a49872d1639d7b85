// Accuracy and uncertainty of the whole ring analysis (AnalyseRings:
// detection + model fit) on photographs from the project's simulator
// (sim/simulation.h), in process. External checks:
//  - the sim truth: radius and fringe centre of the exact gap (exact sphere
//    sags, optics/sphere.h), independent of the analysis's model;
//  - the Newton's-ring law r_k^2 = k lambda R / n_gap (Hecht, Optics, sec.
//    9.4; ../shared/references.md) fixes what the photographs show;
//  - the GUM (JCGM 100:2008, sec. 6.2-6.3): an expanded uncertainty with
//    k = 2 should cover the true value in about 95 % of cases; we demand
//    >= 90 % over 50 random cases [practice: coverage test of an
//    uncertainty evaluation by simulation, as in JCGM 101:2008, sec. 8].
// The seeds judged here were never used for tuning: tuning used the
// DISABLED_ tuning test below (master seed kTuningSeed).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <iostream>
#include <limits>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "check_record.h"
#include "fringe/ring_analysis.h"
#include "fringe/sim_rings_options.h"
#include "sim/simulation.h"

namespace figura {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kHgE = 546.074e-9;  // mercury e line (references.md)

// How a simulated photo is stored before analysis.
enum class Storage { kRaw, kJpeg };

struct Outcome {
  RingsResult result;
  double true_radius_m = 0.0;  // the part radius of the simulation
  double true_cx = 0.0, true_cy = 0.0;
  double rel_error = 0.0;     // (R - R_true) / R_true
  double centre_error = 0.0;  // px, Euclidean
};

// A base scene: a lens on a flat, 600 x 600, mercury e, 16-bit.
SimulationOptions BaseScene() {
  SimulationOptions sim;
  sim.gap.part_radius_m = 2.0;
  sim.gap.plate_radius_m = kInf;
  sim.wavelength = Wavelength{Length::Metres(kHgE), {}, {}, {}, {}};
  sim.camera.width_px = 600;
  sim.camera.height_px = 600;
  sim.camera.pixel_pitch_m = 20e-6;
  sim.aperture_diameter_m = 520 * 20e-6;
  sim.camera.blur_sigma_px = 0.8;
  sim.camera.falloff = 0.2;
  sim.camera.background = 0.02;
  sim.camera.full_well_e = 20000;
  sim.camera.read_noise_e = 5;
  sim.gap.contact_offset_m = 60e-9;  // dust at the contact
  return sim;
}

// The settings a user types for the photo (wavelength, pitch, media, view).
RingsOptions OptionsFor(const SimulationOptions& sim) {
  return test::RingsOptionsFor(sim, kHgE);
}

Image ToImage(const SimulationResult& photo, const SimulationOptions& sim,
              Storage storage) {
  Image image;
  cv::Mat stored = photo.image;
  if (storage == Storage::kJpeg) {
    std::vector<unsigned char> bytes;
    cv::imencode(".jpg", photo.image, bytes,
                 {cv::IMWRITE_JPEG_QUALITY, sim.camera.jpeg_quality});
    stored = cv::imdecode(bytes, cv::IMREAD_GRAYSCALE);
  }
  stored.convertTo(image.pixels, CV_32F);
  image.info.width = stored.cols;
  image.info.height = stored.rows;
  image.info.channels = 1;
  image.info.bit_depth = sim.camera.bit_depth;
  image.info.full_scale = sim.camera.bit_depth == 8 ? 255.0 : 65535.0;
  image.info.format = storage == Storage::kJpeg ? "jpeg" : "tiff";
  return image;
}

Outcome SimulateAndAnalyse(const SimulationOptions& sim,
                           const RingsOptions& options,
                           Storage storage = Storage::kRaw) {
  const SimulationResult photo = Simulate(sim);
  EXPECT_EQ(photo.status, Status::kOk);
  Outcome out;
  out.result = AnalyseRings(ToImage(photo, sim, storage), options);
  out.true_radius_m = sim.gap.part_radius_m;
  const auto& centre = photo.truth["truth"]["fringe_centre_px"];
  out.true_cx = centre[0].get<double>();
  out.true_cy = centre[1].get<double>();
  if (out.result.status != Status::kError) {
    const RingFitResult& fit = out.result.fit;
    const double r = fit.test_plate ? fit.part_radius_m : fit.radius_m;
    out.rel_error = (r - out.true_radius_m) / out.true_radius_m;
    out.centre_error = std::hypot(fit.centre_px.x - out.true_cx,
                                  fit.centre_px.y - out.true_cy);
  }
  return out;
}

std::string Joined(const RingsResult& r) {
  std::string all;
  for (const std::string& m : r.messages) all += m + " | ";
  return all;
}

double U95Relative(const Outcome& o) {
  const RingFitResult& f = o.result.fit;
  return (f.test_plate ? f.part_radius_u95_m : f.radius_u95_m) /
         std::abs(o.true_radius_m);
}

// Prints the outcome and records it for docs/validation.md against the
// issue's targets (R within `target_percent`, centre within 0.2 px).
void Report(const std::string& name, const Outcome& o,
            double target_percent = 0.05) {
  const RingFitResult& f = o.result.fit;
  const double u95 = U95Relative(o) * std::abs(o.true_radius_m);
  std::cout << "[accuracy] " << name << ": R error " << 100.0 * o.rel_error
            << " %, U95 " << 100.0 * u95 / std::abs(o.true_radius_m)
            << " %, centre error " << o.centre_error << " px, rings "
            << f.ring_count << ", chi2/dof " << f.chi2_reduced << "\n";
  const char* kSource =
      "simulated photo (figura simulate, exact sags); issue target";
  figura::testing::RecordCheck("R error, " + name, kSource, 0.0,
                               100.0 * o.rel_error, target_percent, "%");
  figura::testing::RecordCheck("centre error, " + name, kSource, 0.0,
                               o.centre_error, 0.2, "px");
}

// --- Accuracy targets of the issue --------------------------------------

TEST(RingAccuracy, Reflected16BitBlurNoiseVignettingDust) {
  SimulationOptions sim = BaseScene();
  sim.seed = 9101;
  sim.centre_x_px = 296.4;
  sim.centre_y_px = 305.8;
  sim.gap.contact_x_m = 0.31e-3;
  sim.gap.contact_y_m = -0.17e-3;
  const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
  ASSERT_NE(o.result.status, Status::kError) << o.result.messages.back();
  Report("reflected_16bit", o);
  // Issue target: 0.05 % on 16-bit photos; truth from exact sags.
  EXPECT_LT(std::abs(o.rel_error), 5e-4);
  EXPECT_LT(o.centre_error, 0.2);
  EXPECT_LE(std::abs(o.rel_error), U95Relative(o));  // GUM k = 2
}

// A pixel-rich photo (2600 x 2200, ~3.2 M pixels in the aperture): the
// steps that thin the pixels on such photos (every 2nd row for the period,
// every 3rd pixel of every 3rd row for the sharpness centre) must keep the
// issue's targets; the final sector profiles use every pixel. (Seed and
// scene not among those of the study behind kDetectionFloor.)
TEST(RingAccuracy, PixelRich16Bit) {
  SimulationOptions sim = BaseScene();
  sim.seed = 9177;
  sim.gap.part_radius_m = 1.8;
  sim.camera.width_px = 2600;
  sim.camera.height_px = 2200;
  sim.camera.pixel_pitch_m = 9e-6;
  sim.aperture_diameter_m = 2000 * 9e-6;  // ~82 rings, 6 px at the edge
  sim.centre_x_px = 1322.4;
  sim.centre_y_px = 1071.9;
  sim.gap.contact_x_m = -0.42e-3;
  sim.gap.contact_y_m = 0.23e-3;
  const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
  ASSERT_NE(o.result.status, Status::kError) << o.result.messages.back();
  Report("pixel_rich_16bit", o);
  // Issue target: 0.05 % on 16-bit photos; truth from exact sags.
  EXPECT_LT(std::abs(o.rel_error), 5e-4);
  EXPECT_LT(o.centre_error, 0.2);
  EXPECT_LE(std::abs(o.rel_error), U95Relative(o));  // GUM k = 2
  EXPECT_GE(o.result.fit.ring_count, 75);
}

TEST(RingAccuracy, Jpeg8BitGamma) {
  // Both readings of "gamma 2.2": the usual camera encoding stored =
  // level^(1/2.2), and the simulator's exponent 2.2 itself.
  for (const double gamma : {1.0 / 2.2, 2.2}) {
    SimulationOptions sim = BaseScene();
    sim.seed = gamma < 1.0 ? 9102 : 9107;
    sim.camera.bit_depth = 8;
    sim.camera.gamma = gamma;
    sim.camera.jpeg_quality = 90;
    sim.gap.contact_x_m = -0.22e-3;
    const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim), Storage::kJpeg);
    ASSERT_NE(o.result.status, Status::kError) << o.result.messages.back();
    Report(gamma < 1.0 ? "jpeg_8bit_gamma_1_over_2.2" : "jpeg_8bit_gamma_2.2",
           o, 0.2);
    // Issue target: 0.2 % on 8-bit JPEG with gamma 2.2.
    EXPECT_LT(std::abs(o.rel_error), 2e-3);
    EXPECT_LT(o.centre_error, 0.2);
    EXPECT_LE(std::abs(o.rel_error), U95Relative(o));  // GUM k = 2
  }
}

TEST(RingAccuracy, TransmittedLowContrast) {
  SimulationOptions sim = BaseScene();
  sim.seed = 9103;
  sim.view = View::kTransmitted;
  sim.gap.contact_offset_m = 35e-9;
  const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
  ASSERT_NE(o.result.status, Status::kError) << o.result.messages.back();
  Report("transmitted", o);
  // Transmitted light between glasses: visibility 2 R/(1 + R^2) ~ 8 %
  // (Fresnel R = ((n - 1)/(n + 1))^2 = 0.042 for n = 1.5168; Hecht sec. 9.6).
  EXPECT_LT(o.result.detection.visibility, 0.15);
  EXPECT_LT(std::abs(o.rel_error), 5e-4);
  EXPECT_LT(o.centre_error, 0.2);
  EXPECT_LE(std::abs(o.rel_error), U95Relative(o));  // GUM k = 2
}

TEST(RingAccuracy, ContactFluid) {
  SimulationOptions sim = BaseScene();
  sim.seed = 9104;
  sim.stack.gap_index = 1.40;  // a contact liquid: rings shrink by sqrt(n)
  sim.gap.part_radius_m = 2.8;
  const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
  ASSERT_NE(o.result.status, Status::kError) << o.result.messages.back();
  Report("contact_fluid", o);
  EXPECT_LT(std::abs(o.rel_error), 5e-4);
  EXPECT_LT(o.centre_error, 0.2);
  EXPECT_LE(std::abs(o.rel_error), U95Relative(o));  // GUM k = 2
}

TEST(RingAccuracy, TestPlateMode) {
  // A convex part (+52.00 mm) in a concave plate (-52.30 mm): the rings
  // show the gap radius 1/(1/R + 1/R_plate) (references.md, test plates);
  // the part radius comes from --reference-radius.
  SimulationOptions sim = BaseScene();
  sim.seed = 9105;
  sim.gap.part_radius_m = 52.00e-3;
  sim.gap.plate_radius_m = -52.30e-3;
  sim.camera.pixel_pitch_m = 30e-6;
  sim.aperture_diameter_m = 520 * 30e-6;
  sim.gap.contact_offset_m = 80e-9;
  RingsOptions options = OptionsFor(sim);
  options.fit.reference_radius = Length::Metres(-52.30e-3);
  const Outcome o = SimulateAndAnalyse(sim, options);
  ASSERT_NE(o.result.status, Status::kError) << o.result.messages.back();
  Report("test_plate", o);
  EXPECT_TRUE(o.result.fit.test_plate);
  // The part radius error is the gap-radius error scaled by (R/R_gap)^2 =
  // (0.3/52.3)^2: far below the 0.05 % target.
  EXPECT_LT(std::abs(o.rel_error), 5e-4);
  const double gap_true = 1.0 / (1.0 / 52.00e-3 - 1.0 / 52.30e-3);
  EXPECT_LT(std::abs(o.result.fit.gap_radius_m / gap_true - 1.0), 5e-4);
  EXPECT_LT(o.centre_error, 0.2);
  EXPECT_LE(std::abs(o.rel_error), U95Relative(o));  // GUM k = 2
}

// --- Coverage of U95 ------------------------------------------------------

struct CoverageStats {
  int cases = 0;
  int failed = 0;  // analysis status error
  int covered = 0;
  double median_u95 = 0.0;        // relative
  double median_error = 0.0;      // relative, absolute value
  double rms_pull = 0.0;          // (R - R_true) / u
  double max_abs_error = 0.0;     // relative
  int warned = 0;                 // status warning (any reason)
  int centre_disagrees = 0;       // the centre-state check fired
  int centre_covered = 0;         // centre error within 2.45 u (2-D 95 %)
  double max_centre_error = 0.0;  // px
};

// A random but sensible scene: R log-uniform 0.5..8 m, 8..30 rings over the
// aperture (the pitch follows), centre and contact point off the image
// centre, dust, noise, blur, fall-off.
SimulationOptions RandomScene(std::mt19937_64* rng) {
  auto uni = [rng](double lo, double hi) {
    return std::uniform_real_distribution<double>(lo, hi)(*rng);
  };
  SimulationOptions sim = BaseScene();
  const int size = 560 + 20 * static_cast<int>(uni(0, 6));
  sim.camera.width_px = size;
  sim.camera.height_px = size;
  const double ap_px = size * uni(0.78, 0.86);
  const double radius = std::exp(uni(std::log(0.5), std::log(8.0)));
  const double rings = uni(8.0, 30.0);
  const double period_r2 = (0.5 * ap_px) * (0.5 * ap_px) / rings;  // px^2
  const double pitch = std::sqrt(kHgE * radius / period_r2);
  sim.gap.part_radius_m = radius;
  sim.camera.pixel_pitch_m = pitch;
  sim.aperture_diameter_m = ap_px * pitch;
  sim.centre_x_px = 0.5 * (size - 1) + uni(-12.0, 12.0);
  sim.centre_y_px = 0.5 * (size - 1) + uni(-12.0, 12.0);
  sim.gap.contact_x_m = uni(-0.08, 0.08) * ap_px * pitch;
  sim.gap.contact_y_m = uni(-0.08, 0.08) * ap_px * pitch;
  sim.gap.contact_offset_m = uni(0.0, 200e-9);
  sim.camera.blur_sigma_px = uni(0.3, 1.2);
  sim.camera.falloff = uni(0.0, 0.35);
  sim.camera.background = uni(0.0, 0.05);
  sim.camera.full_well_e = uni(5000.0, 40000.0);
  sim.camera.read_noise_e = uni(2.0, 10.0);
  sim.seed = (*rng)();
  return sim;
}

CoverageStats Coverage(std::uint64_t master_seed, int cases,
                       bool verbose = false) {
  std::mt19937_64 rng(master_seed);
  CoverageStats s;
  std::vector<double> u95s, errors;
  double pull2 = 0.0;
  for (int i = 0; i < cases; ++i) {
    const SimulationOptions sim = RandomScene(&rng);
    const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
    ++s.cases;
    if (o.result.status == Status::kError) {
      ++s.failed;
      std::cout << "[coverage] case " << i << " failed: "
                << (o.result.messages.empty() ? "" : o.result.messages.back())
                << "\n";
      continue;
    }
    if (o.result.status == Status::kWarning) {
      ++s.warned;
      if (verbose)
        std::cout << "[coverage] warning: " << Joined(o.result) << "\n";
    }
    if (o.result.centre_disagrees) ++s.centre_disagrees;
    const double u95 = o.result.fit.radius_u95_m / std::abs(o.true_radius_m);
    const double u = o.result.fit.radius_u_m / std::abs(o.true_radius_m);
    const double err = std::abs(o.rel_error);
    if (err <= u95) ++s.covered;
    // Rayleigh distribution of a 2-D error with equal per-axis sigma u:
    // P(|e| <= 2.45 u) = 1 - exp(-2.45^2 / 2) = 0.95 [practice].
    if (o.centre_error <= 2.45 * o.result.fit.centre_u_px) ++s.centre_covered;
    s.max_centre_error = std::max(s.max_centre_error, o.centre_error);
    u95s.push_back(u95);
    errors.push_back(err);
    pull2 += (o.rel_error / u) * (o.rel_error / u);
    s.max_abs_error = std::max(s.max_abs_error, err);
    if (verbose) {
      std::cout << "[coverage] case " << i << " R " << sim.gap.part_radius_m
                << " m, pitch " << sim.camera.pixel_pitch_m * 1e6
                << " um, rings " << o.result.fit.ring_count << ", err "
                << 1e2 * o.rel_error << " %, U95 " << 1e2 * u95 << " %, pull "
                << o.rel_error / u << ", centre err " << o.centre_error
                << " px, centre u " << o.result.fit.centre_u_px << " px, chi2 "
                << o.result.fit.chi2_reduced << ", u_fit "
                << o.result.fit.uncertainty_note.substr(0, 60) << "\n";
    }
  }
  auto median = [](std::vector<double> v) {
    if (v.empty()) return std::numeric_limits<double>::quiet_NaN();
    std::nth_element(v.begin(), v.begin() + static_cast<long>(v.size() / 2),
                     v.end());
    return v[v.size() / 2];
  };
  s.median_u95 = median(u95s);
  s.median_error = median(errors);
  const int good = s.cases - s.failed;
  s.rms_pull = good > 0 ? std::sqrt(pull2 / good) : 0.0;
  return s;
}

void PrintCoverage(const std::string& name, const CoverageStats& s) {
  const double fraction =
      static_cast<double>(s.covered) / static_cast<double>(s.cases);
  std::cout << "[coverage] " << name << ": " << s.covered << "/" << s.cases
            << " covered (" << 100.0 * fraction << " %), failed " << s.failed
            << ", median |error| " << 100.0 * s.median_error
            << " %, median U95 " << 100.0 * s.median_u95
            << " %, median U95 / median |error| "
            << s.median_u95 / s.median_error << ", RMS pull " << s.rms_pull
            << ", max |error| " << 100.0 * s.max_abs_error
            << " %, centre covered " << s.centre_covered << "/" << s.cases
            << ", max centre error " << s.max_centre_error << " px, warnings "
            << s.warned << ", centre-state disagreements " << s.centre_disagrees
            << "\n";
  ::testing::Test::RecordProperty(name + "_coverage", std::to_string(fraction));
  ::testing::Test::RecordProperty(
      name + "_u95_over_error", std::to_string(s.median_u95 / s.median_error));
}

constexpr std::uint64_t kJudgedSeed = 20261202;
constexpr std::uint64_t kTuningSeed = 77;

#ifdef FIGURA_SANITIZER_BUILD
// The sanitizer tree (FIGURA_SANITIZE, tests/CMakeLists.txt) runs each case
// about 20x slower, so there this test analyses the first 10 of the same 50
// photos and checks what must hold for every case (no failure, error,
// centre); the coverage statistics are judged in the Release tree only.
TEST(RingAccuracy, U95CoversTrueRadiusSanitizerSubset) {
  const CoverageStats s = Coverage(kJudgedSeed, 10);
  PrintCoverage("sanitizer_subset", s);
  EXPECT_EQ(s.failed, 0);
  EXPECT_LT(s.max_abs_error, 5e-4);
  EXPECT_EQ(s.centre_disagrees, 0);
  EXPECT_LT(s.max_centre_error, 0.2);
}
#else
TEST(RingAccuracy, U95CoversTrueRadius) {
  const CoverageStats s = Coverage(kJudgedSeed, 50);
  PrintCoverage("judged", s);
  EXPECT_EQ(s.failed, 0);
  // GUM k = 2: about 95 %; the issue demands at least 90 % of 50 cases.
  EXPECT_GE(s.covered, 45);
  figura::testing::RecordCheck(
      "U95 coverage of the true R, 50 random photos",
      "GUM (JCGM 100:2008) k = 2: about 95 %; issue target >= 90 %", 95.0,
      2.0 * s.covered, 5.0, "%");
  figura::testing::RecordCheck("median U95 / median |error|",
                               "issue target: under 5", 2.5,
                               s.median_u95 / s.median_error, 2.5, "");
  // Not wildly wide: median U95 under 5x the median actual error.
  EXPECT_LT(s.median_u95, 5.0 * s.median_error);
  // Every case within the 16-bit accuracy target.
  EXPECT_LT(s.max_abs_error, 5e-4);
  // The centre uncertainty (per axis) covers the 2-D centre error likewise.
  EXPECT_GE(s.centre_covered, 45);
  // Spherical surfaces with many rings: no false centre-state warnings.
  EXPECT_EQ(s.centre_disagrees, 0);
  EXPECT_LT(s.max_centre_error, 0.2);  // issue target: centre within 0.2 px
}
#endif  // FIGURA_SANITIZER_BUILD

// Run by hand (--gtest_also_run_disabled_tests) while calibrating; its
// seeds are separate from the judged ones.
TEST(RingAccuracy, DISABLED_Tuning) {
  const CoverageStats s = Coverage(kTuningSeed, 50, true);
  PrintCoverage("tuning", s);
}

}  // namespace
}  // namespace figura

namespace figura {
namespace {

// --- Bad input: status error with a reason, never a made-up radius ------

// An error result carries no radius in the result JSON (design.md: no
// numbers without a fit).
void ExpectErrorWithoutRadius(const RingsResult& r, const RingsOptions& options,
                              const std::string& expected_words) {
  EXPECT_EQ(r.status, Status::kError);
  ASSERT_FALSE(r.messages.empty());
  std::cout << "[bad input] " << Joined(r) << "\n";
  EXPECT_NE(Joined(r).find(expected_words), std::string::npos) << Joined(r);
  const nlohmann::json j = RingsJson(r, options, nlohmann::json::object());
  EXPECT_FALSE(j.contains("radius_of_curvature_mm"));
}

TEST(RingAccuracyBadInput, NoFringes) {
  // A lit aperture with shot-like noise and no fringes (fixed seed).
  cv::Mat pixels(500, 500, CV_32F, cv::Scalar(0.03 * 65535));
  cv::circle(pixels, {250, 250}, 220, cv::Scalar(0.5 * 65535), cv::FILLED);
  cv::Mat noise(pixels.size(), CV_32F);
  cv::RNG rng(1234);
  rng.fill(noise, cv::RNG::NORMAL, 0.0, 150.0);
  pixels += noise;
  Image image;
  image.pixels = pixels;
  image.info.full_scale = 65535.0;
  image.info.bit_depth = 16;
  const RingsOptions options = OptionsFor(BaseScene());
  ExpectErrorWithoutRadius(AnalyseRings(image, options), options, "no fringes");
}

TEST(RingAccuracyBadInput, Saturated) {
  SimulationOptions sim = BaseScene();
  sim.seed = 9201;
  sim.camera.exposure = 5.0;  // most of the aperture clips at full scale
  const RingsOptions options = OptionsFor(sim);
  ExpectErrorWithoutRadius(SimulateAndAnalyse(sim, options).result, options,
                           "saturated");
}

TEST(RingAccuracyBadInput, TooFewRings) {
  // About one ring over the aperture: r_1^2 = lambda R / n (references.md)
  // with R = 41 m, pitch 20 um puts the first dark ring at ~240 px.
  SimulationOptions sim = BaseScene();
  sim.seed = 9202;
  sim.gap.part_radius_m = 41.0;
  sim.gap.contact_offset_m = 0.0;
  const RingsOptions options = OptionsFor(sim);
  ExpectErrorWithoutRadius(SimulateAndAnalyse(sim, options).result, options,
                           "ring");
}

TEST(RingAccuracyBadInput, CentreOutsideImage) {
  // The contact point 350 px right of the image centre of a 500 px image,
  // the aperture filling the frame.
  SimulationOptions sim = BaseScene();
  sim.seed = 9203;
  sim.camera.width_px = 500;
  sim.camera.height_px = 500;
  sim.aperture_diameter_m = 900 * 20e-6;
  sim.gap.part_radius_m = 5.86;  // period in r^2 ~ 8000 px^2
  sim.gap.contact_x_m = 350 * 20e-6;
  const RingsOptions options = OptionsFor(sim);
  ExpectErrorWithoutRadius(SimulateAndAnalyse(sim, options).result, options,
                           "outside the image");
}

// --- Weak fits: warnings, and the radius still honest ---------------------

TEST(RingAccuracyWarnings, FewRings) {
  // About 3.5 rings: r_k^2 = k lambda R / n (references.md), R = 14 m.
  SimulationOptions sim = BaseScene();
  sim.seed = 9204;
  sim.gap.part_radius_m = 14.0;
  const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
  std::cout << "[warning] " << Joined(o.result) << "\n";
  ASSERT_NE(o.result.status, Status::kError);
  EXPECT_EQ(o.result.status, Status::kWarning);
  EXPECT_LT(o.result.fit.ring_count, kFewRings);
  EXPECT_NE(Joined(o.result).find("dark rings"), std::string::npos);
  Report("few_rings", o, 100.0 * U95Relative(o));  // judged by its U95
  EXPECT_LE(std::abs(o.rel_error), U95Relative(o));
}

TEST(RingAccuracyWarnings, LargeResiduals) {
  // Primary spherical aberration of the gap (ISO 24157 j = 12, n = 4, m = 0)
  // of 120 nm RMS: rings no longer follow r^2 = k lambda R / n.
  SimulationOptions sim = BaseScene();
  sim.seed = 9205;
  sim.gap.zernike_m.assign(13, 0.0);
  sim.gap.zernike_m[12] = 120e-9;
  const Outcome o = SimulateAndAnalyse(sim, OptionsFor(sim));
  std::cout << "[warning] " << Joined(o.result)
            << " rms fringes: " << o.result.fit.residual_rms_fringes << "\n";
  ASSERT_NE(o.result.status, Status::kError);
  EXPECT_EQ(o.result.status, Status::kWarning);
  EXPECT_GT(o.result.fit.residual_rms_fringes, kLargeResidualFringes);
  EXPECT_NE(Joined(o.result).find("large fit residuals"), std::string::npos);
}

TEST(RingAccuracyWarnings, CentreStateDisagrees) {
  // A dark contact (reflection between glasses, half-wave rule: Hecht sec.
  // 9.4) covered by a bright glint (a reflection off dust) inside the
  // central dark spot: the centre looks bright while the rings, by
  // r_k^2 = k lambda R / n, extrapolate to a dark centre.
  SimulationOptions sim = BaseScene();
  sim.seed = 9206;
  sim.gap.contact_offset_m = 0.0;
  const SimulationResult photo = Simulate(sim);
  ASSERT_EQ(photo.status, Status::kOk);
  Image image = ToImage(photo, sim, Storage::kRaw);
  const auto& centre = photo.truth["truth"]["fringe_centre_px"];
  // The central dark spot: r^2 < P / 4, P = lambda R / p^2 ~ 2730 px^2.
  cv::circle(image.pixels,
             {static_cast<int>(std::lround(centre[0].get<double>())),
              static_cast<int>(std::lround(centre[1].get<double>()))},
             20, cv::Scalar(0.8 * 65535), cv::FILLED);
  const RingsOptions options = OptionsFor(sim);
  const RingsResult r = AnalyseRings(image, options);
  std::cout << "[warning] " << Joined(r) << "\n";
  ASSERT_NE(r.status, Status::kError);
  EXPECT_EQ(r.status, Status::kWarning);
  EXPECT_TRUE(r.centre_disagrees);
  EXPECT_EQ(r.fit.centre_predicted, FringeState::kDark);
  EXPECT_EQ(r.centre_observed, FringeState::kBright);
  EXPECT_EQ(RingsJson(r, options, nlohmann::json::object())["centre_fringe"],
            "bright");
  EXPECT_NE(Joined(r).find("the centre looks bright"), std::string::npos);
}

}  // namespace
}  // namespace figura
