// Tests of the measured-diameter mode against the worked examples of
// ../shared/references.md (textbook problems as quoted in public solution
// pages) and a least-squares check on synthetic rings.
#include "fringe/ring_diameters.h"

#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <random>
#include <sstream>
#include <string>

#include "check_record.h"
#include "core/error.h"
#include "fringe/ring_analysis.h"
#include "optics/sphere.h"

namespace figura {
namespace {

using figura::testing::CheckNear;

RingFitOptions Options(double lambda_m) {
  RingFitOptions o;
  o.wavelength.value = Length::Metres(lambda_m);
  o.pixel_pitch = Length::Micrometres(1.0);
  return o;
}

TEST(RingDiameters, WalkerTwelfthDarkRing) {
  // lambda = 648 nm, radius of the 12th dark ring 1.56 cm -> R = 31.3 m
  // (J. S. Walker, Physics). Counting: the central dark spot is order 0,
  // the 12th dark ring is order 12 (r^2 = m lambda R).
  const auto rows =
      ParseRingDiameters("order,diameter,kind\n12,3.12cm,dark\n", "walker.csv");
  const RingFitResult fit = FitRingDiameters(rows, Options(648e-9));
  ASSERT_NE(fit.status, Status::kError);
  CheckNear("R from the 12th dark ring at 648 nm",
            "J. S. Walker, Physics (worked example)", 31.3, fit.radius_m, 0.05,
            "m");
  EXPECT_FALSE(fit.has_uncertainty);  // one ring: e = 0 assumed, no u
  EXPECT_NE(fit.uncertainty_note.find("e = 0"), std::string::npos);
  EXPECT_EQ(fit.status, Status::kWarning);
}

TEST(RingDiameters, TenthDarkRing500nm) {
  // lambda = 500 nm, 10th dark ring diameter 5.00 mm -> R = 1.25 m
  // (references.md worked example; order counted as m = 10, centre = 0).
  const auto rows =
      ParseRingDiameters("order,diameter,kind\n10,5.00mm,dark\n", "t.csv");
  const RingFitResult fit = FitRingDiameters(rows, Options(500e-9));
  ASSERT_NE(fit.status, Status::kError);
  CheckNear("R from the 10th dark ring at 500 nm",
            "textbook worked example (references.md)", 1.25, fit.radius_m, 1e-5,
            "m");
}

TEST(RingDiameters, SodiumDifferenceMethod) {
  // Sodium 589.3 nm, bright-ring diameters D5 = 2.303 mm and D15 = 4.134 mm
  // -> R = (D15^2 - D5^2) / (4 * 10 * lambda) = 500.0 mm (references.md).
  // Only the order difference matters: the result does not depend on
  // whether the bright rings are counted from 0 or 1.
  const auto rows = ParseRingDiameters(
      "# bright rings, sodium lamp\norder,diameter,kind\n5,2.303mm,bright\n15, "
      "4.134 mm ,Bright\n",
      "sodium.csv");
  const RingFitResult fit = FitRingDiameters(rows, Options(589.3e-9));
  ASSERT_NE(fit.status, Status::kError);
  CheckNear("R by the difference method, sodium",
            "textbook worked example (references.md)", 500.0,
            fit.radius_m * 1e3, 0.05, "mm");
  const double diff =
      (4.134e-3 * 4.134e-3 - 2.303e-3 * 2.303e-3) / (4.0 * 10.0 * 589.3e-9);
  // The textbook difference method is paraxial; the exact sag differs by
  // about (r/R)^2/4 = 4e-6 here.
  EXPECT_NEAR(fit.radius_m, diff, 1e-5 * diff);
  EXPECT_FALSE(fit.has_uncertainty);
  EXPECT_NE(fit.uncertainty_note.find("difference method"), std::string::npos);
  const auto shifted = ParseRingDiameters(
      "order,diameter,kind\n4,2.303mm,bright\n14,4.134mm,bright\n", "s.csv");
  EXPECT_NEAR(FitRingDiameters(shifted, Options(589.3e-9)).radius_m,
              fit.radius_m, 1e-9);
}

TEST(RingDiameters, LeastSquaresWithUncertainty) {
  // Rings of a 750 mm lens with a 0.3-fringe dust offset, diameters read to
  // 5 um (fixed seed), ten rings. With 8 degrees of freedom k = 2 covers
  // about 92.7 % (Student t; a numpy simulation of the same weighted fit
  // gave 0.9285 over 2000 cases): require at least 88 % of 200.
  const double lambda = 546.07e-9;
  const double radius = 0.75;
  std::mt19937 rng(2024);
  std::normal_distribution<double> noise(0.0, 5e-6);
  int covered = 0;
  int covered_e = 0;
  const int trials = 200;
  for (int t = 0; t < trials; ++t) {
    std::string csv = "order,diameter,kind\n";
    for (int m = 2; m <= 20; m += 2) {
      const double r = std::sqrt(2.0 * radius * (m + 0.3) * lambda / 2.0);
      csv += std::to_string(m) + "," +
             std::to_string((2.0 * r + noise(rng)) * 1e3) + "mm,dark\n";
    }
    const RingFitResult fit =
        FitRingDiameters(ParseRingDiameters(csv, "lens.csv"), Options(lambda));
    ASSERT_NE(fit.status, Status::kError);
    ASSERT_TRUE(fit.has_uncertainty);
    ASSERT_EQ(fit.ring_count, 10);
    EXPECT_LT(fit.radius_u_m / radius, 3e-3);
    covered += std::abs(fit.radius_m - radius) < fit.radius_u95_m ? 1 : 0;
    covered_e +=
        std::abs(fit.order_offset - 0.3) < 2.0 * fit.order_offset_u ? 1 : 0;
  }
  EXPECT_GE(covered, trials * 88 / 100);
  EXPECT_GE(covered_e, trials * 88 / 100);
}

// The diameter table of the bright rings m = 1..last of a sphere of radius
// R (m) on a flat in air, reflected light: dark centre, maxima at
// r^2 = (m + 1/2) lambda R (Hecht, Optics, sec. 9.4).
std::string BrightRingsCsv(double lambda, double radius, int last) {
  std::ostringstream csv;
  csv << "order,diameter,kind\n";
  csv.precision(10);
  for (int m = 1; m <= last; ++m) {
    const double r = std::sqrt((m + 0.5) * lambda * radius);
    csv << m << "," << 2.0 * r * 1e3 << "mm,bright\n";
  }
  return csv.str();
}

TEST(RingDiameters, BrightRingsOnlyAreCounted) {
  const double lambda = 589.3e-9;
  const double radius = 1.0;
  const RingFitResult fit = FitRingDiameters(
      ParseRingDiameters(BrightRingsCsv(lambda, radius, 8), "bright.csv"),
      Options(lambda));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  EXPECT_EQ(fit.ring_count, 8);
  EXPECT_NEAR(fit.radius_m, radius, 1e-5);
}

TEST(RingDiameters, LiquidInTheGap) {
  // references.md: the 10th ring is 14 mm across in air and 12.7 mm with a
  // liquid; fitting the liquid data with --gap-index 1.215 gives the same R.
  RingFitOptions air = Options(589.3e-9);
  RingFitOptions liquid = air;
  liquid.stack.gap_index = LiquidIndexFromDiameters(14e-3, 12.7e-3);
  CheckNear("index of a liquid in the gap",
            "textbook worked example (references.md)", 1.215,
            liquid.stack.gap_index, 5e-4, "");
  const double r_air =
      FitRingDiameters(
          ParseRingDiameters("order,diameter,kind\n10,14mm,dark\n", "a.csv"),
          air)
          .radius_m;
  const double r_liq =
      FitRingDiameters(
          ParseRingDiameters("order,diameter,kind\n10,12.7mm,dark\n", "l.csv"),
          liquid)
          .radius_m;
  EXPECT_NEAR(r_liq / r_air, 1.0, 1e-6);
}

// Found by job_file_fuzz (tests/fuzz/corpus/job_file_fuzz/
// regress-diameter-overflows-fit): a diameter of 4.4e261 mm is a valid
// length, but r^2 overflows (DBL_MAX = 1.797e308, IEEE 754 binary64) and the
// fit reported an infinite radius as usable. Now an error with a reason.
TEST(RingDiameters, DiametersThatOverflowTheFitAreAnError) {
  const std::string one_ring =
      "order,diameter,kind\n1,4" + std::string(261, '4') + "mm,bright\n";
  const RingFitResult fit = FitRingDiameters(
      ParseRingDiameters(one_ring, "huge.csv"), Options(546.07e-9));
  EXPECT_EQ(fit.status, Status::kError);
  ASSERT_FALSE(fit.messages.empty());
  EXPECT_NE(fit.messages.back().find("no finite radius"), std::string::npos)
      << fit.messages.back();
  // Several huge rings: the fit itself already refuses them, with a reason.
  const std::string three_rings =
      "order,diameter,kind\n1,1e160mm,dark\n2,1.5e160mm,dark\n"
      "3,1.8e160mm,dark\n";
  const RingFitResult fit3 = FitRingDiameters(
      ParseRingDiameters(three_rings, "huge3.csv"), Options(546.07e-9));
  EXPECT_EQ(fit3.status, Status::kError);
  EXPECT_FALSE(fit3.messages.empty());
}

// Sag and power are undefined, not out of range, when the evaluated
// aperture is wider than the sphere (no point of a sphere of radius R lies
// farther than R from its axis): the fit stays a usable result with R, its
// uncertainty and a warning, and the JSON gives sag and power as null.
TEST(RingDiameters, ApertureWiderThanTheSphereKeepsTheRadius) {
  // Bright rings of a 500 mm sphere on a flat read over a 1.2 m aperture
  // (half 0.6 m > R).
  const double lambda = 589.3e-9;
  const double radius = 0.5;
  RingsOptions options;
  options.fit = Options(lambda);
  options.fit.aperture_diameter = Length::Metres(1.2);
  const RingsResult r = AnalyseRingDiameters(
      ParseRingDiameters(BrightRingsCsv(lambda, radius, 6), "wide.csv"),
      options.fit);
  ASSERT_EQ(r.status, Status::kWarning)
      << (r.messages.empty() ? "" : r.messages.back());
  // The paraxial rings and the exact-sag fit differ by about (r/R)^2/4.
  EXPECT_NEAR(r.fit.radius_m, radius, 1e-5 * radius);
  EXPECT_TRUE(r.fit.has_uncertainty);
  EXPECT_TRUE(std::isfinite(r.fit.radius_u95_m));
  EXPECT_TRUE(std::isnan(r.fit.sag_m));
  EXPECT_TRUE(std::isnan(r.fit.power_fringes));
  EXPECT_TRUE(std::isnan(r.fit.power_u_fringes));
  ASSERT_FALSE(r.messages.empty());
  EXPECT_NE(r.messages.back().find("wider than the fitted sphere"),
            std::string::npos)
      << r.messages.back();
  const nlohmann::json j = RingsJson(r, options, nlohmann::json::object());
  EXPECT_EQ(j["status"]["state"], "warning") << j["status"].dump();
  EXPECT_TRUE(j["sag_um"].is_null());
  EXPECT_TRUE(j["power_fringes"].is_null());
  EXPECT_TRUE(j["power_u_fringes"].is_null());
  EXPECT_NEAR(j["radius_of_curvature_mm"].get<double>(), 500.0, 5e-3);
}

TEST(RingDiameters, ReadableErrors) {
  auto message = [](const std::string& text) {
    try {
      ParseRingDiameters(text, "rings.csv");
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_EQ(message("order,diameter\n"),
            "rings.csv:1: expected the header 'order,diameter,kind'");
  EXPECT_NE(message("order,diameter,kind\n3,12.5,dark\n")
                .find("rings.csv:2: diameter"),
            std::string::npos);  // no unit
  EXPECT_NE(message("order,diameter,kind\n-1,2mm,dark\n").find("whole number"),
            std::string::npos);
  EXPECT_NE(message("order,diameter,kind\n1,2mm,grey\n").find("dark or bright"),
            std::string::npos);
  EXPECT_NE(message("order,diameter,kind\n").find("no rings"),
            std::string::npos);
  EXPECT_NE(message("order,diameter,kind\n1,0mm,dark\n").find("positive"),
            std::string::npos);
  EXPECT_THROW(LoadRingDiameters("/nonexistent/rings.csv"), InputError);
}

}  // namespace
}  // namespace figura
