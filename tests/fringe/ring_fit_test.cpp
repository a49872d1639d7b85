// Tests of the ring model fit on synthetic fringe points with known radius,
// order offset, centre and astigmatism (exact sphere sags), and against the
// test-plate relations of ../shared/references.md.
#include "fringe/ring_fit.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "optics/sphere.h"

namespace figura {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kLambda = 546.07e-9;  // mercury e, references.md

struct Truth {
  double part_radius = 0.2;    // m, seen from the gap
  double plate_radius = kInf;  // m, seen from the gap (flat)
  double e = 0.0;              // order offset
  double cx = 300.3, cy = 280.7;
  double pitch = 10e-6;  // m per px
  double astig_per_m2 =
      0.0;  // gamma: fringes = ... + gamma r^2 cos 2(theta - phi)
  double astig_axis_rad = 0.0;  // image coordinates
  Contact contact = Contact::kCentre;
  MediaStack stack{};
  int sectors = 36;
  int first_index = 0, last_index = 28;  // half-periods, dark even
  double sigma_px = 0.05;
};

// Signed gap in fringes at height r (m) along image angle theta.
double GapFringesAt(const Truth& t, double r, double theta) {
  const double k = 2.0 * t.stack.gap_index / kLambda;
  return k * SphereGap(t.part_radius, t.plate_radius, r) +
         t.astig_per_m2 * r * r * std::cos(2.0 * (theta - t.astig_axis_rad));
}

// The radius (m) where sign * gap = order + e, by bisection.
double SolveRadius(const Truth& t, double order, double theta) {
  const double sign = t.contact == Contact::kCentre ? 1.0 : -1.0;
  const double goal = order + t.e;
  double lo = 0.0;
  double hi = 0.4 * std::abs(t.part_radius);
  if (!(sign * GapFringesAt(t, hi, theta) > goal) || goal <= 0.0) return -1.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    (sign * GapFringesAt(t, mid, theta) < goal ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

std::vector<RingFitPoint> MakePoints(const Truth& t,
                                     std::mt19937* rng = nullptr) {
  const double d = MinimumOffset(t.stack, View::kReflected);
  std::normal_distribution<double> noise(0.0, 1.0);
  std::vector<RingFitPoint> pts;
  for (int s = 0; s < t.sectors; ++s) {
    const double theta = 2.0 * std::numbers::pi * (s + 0.5) / t.sectors;
    for (int index = t.first_index; index <= t.last_index; ++index) {
      const double order = index / 2.0 + d;
      const double r = SolveRadius(t, order, theta);
      if (r <= 0.0) continue;
      double r_px = r / t.pitch;
      if (rng != nullptr) r_px += t.sigma_px * noise(*rng);
      RingFitPoint p;
      p.x_px = t.cx + r_px * std::cos(theta);
      p.y_px = t.cy + r_px * std::sin(theta);
      p.sigma_px = t.sigma_px;
      p.order = order;
      p.sector = s;
      pts.push_back(p);
    }
  }
  return pts;
}

RingFitOptions OptionsFor(const Truth& t) {
  RingFitOptions o;
  o.wavelength.value = Length::Metres(kLambda);
  o.pixel_pitch = Length::Metres(t.pitch);
  o.stack = t.stack;
  o.contact = t.contact;
  if (std::isfinite(t.plate_radius))
    o.reference_radius = Length::Metres(t.plate_radius);
  return o;
}

cv::Point2d Guess(const Truth& t) { return {t.cx + 1.3, t.cy - 0.8}; }

TEST(RingFit, ExactRecoveryLensOnFlat) {
  Truth t;
  t.e = 0.2;
  const RingFitResult fit = FitRings(MakePoints(t), OptionsFor(t), Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  // Noise-free points from the exact sag: recovery to rounding.
  EXPECT_NEAR(fit.radius_m / t.part_radius, 1.0, 1e-9);
  EXPECT_NEAR(fit.order_offset, 0.2, 1e-7);
  EXPECT_NEAR(fit.centre_px.x, t.cx, 1e-6);
  EXPECT_NEAR(fit.centre_px.y, t.cy, 1e-6);
  EXPECT_NEAR(fit.astigmatism_fringes, 0.0, 1e-6);
  EXPECT_EQ(fit.points_rejected, 0);
  // Dark rings of indices 0..28 (even): orders 0..14 with order 0 at r = 0
  // lost because e > 0 puts it inside; 1..14 remain.
  EXPECT_EQ(fit.ring_count, 15);
}

TEST(RingFit, ExactSagMattersForFastParts) {
  // R = 8 mm with fringes out to 3 mm: the paraxial formula r^2 = m lambda R
  // is off by (r/R)^2/4 ~ 3.5 % at the edge; the exact model recovers R.
  Truth t;
  t.part_radius = 0.008;
  t.pitch = 5e-6;
  t.last_index = 2 * 1200;
  t.sectors = 8;
  const RingFitResult fit = FitRings(MakePoints(t), OptionsFor(t), Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  EXPECT_NEAR(fit.radius_m / t.part_radius, 1.0, 1e-8);
  // Sag over the aperture (exact, sphere.h) and power in fringes.
  const double half = 0.5 * fit.aperture_diameter_m;
  EXPECT_NEAR(fit.sag_m, SphereSag(t.part_radius, half), 1e-12);
  EXPECT_NEAR(fit.power_fringes,
              GapFringes(SphereSag(t.part_radius, half), kLambda), 1e-3);
}

TEST(RingFit, TestPlateCentreAndEdgeContact) {
  // Plate -100 mm (concave, fits a +100 mm convex part; sphere.h convention).
  for (double part : {0.09995, 0.10005}) {
    Truth t;
    t.plate_radius = -0.100;
    t.part_radius = part;
    t.contact = part < 0.1 ? Contact::kCentre : Contact::kEdge;
    t.pitch = 20e-6;
    t.e = 0.1;
    t.last_index = 40;
    const RingFitResult fit = FitRings(MakePoints(t), OptionsFor(t), Guess(t));
    ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
    EXPECT_TRUE(fit.test_plate);
    EXPECT_NEAR(fit.part_radius_m / part, 1.0, 1e-9) << ContactName(t.contact);
    EXPECT_NEAR(fit.deviation_m, part - 0.100, 1e-10);
    // Power over the evaluated aperture from the exact sags (sphere.h).
    const double half = 0.5 * fit.aperture_diameter_m;
    // Signed like the gap (sphere.h): negative for the edge contact.
    EXPECT_NEAR(fit.power_fringes,
                GapFringes(SphereGap(part, -0.100, half), kLambda), 1e-6);
    EXPECT_EQ(fit.power_fringes < 0.0, t.contact == Contact::kEdge);
  }
}

TEST(RingFit, TestPlateWorkedExample) {
  // references.md: R = 100 mm, D = 30 mm, N = 2, lambda = 546.07 nm: the
  // small-sag estimate dR = 4 N lambda R^2 / D^2 = 48.5 um (Saayman), while
  // the exact sag of that part gives N = 2.033 [derived].
  const double plate = -0.100;
  const double approx = ApproxRadiusDifference(2.0, 0.100, 0.030, kLambda);
  EXPECT_NEAR(approx, 48.5e-6, 0.05e-6);
  // Exact inverse: the part steeper than the plate (contact at the centre)
  // by exactly 2 fringes.
  const double part =
      PartRadiusFromFringes(plate, 0.030, 2.0, kLambda, 1.0, Contact::kCentre);
  EXPECT_NEAR(GapFringes(SphereGap(part, plate, 0.015), kLambda), 2.0, 1e-9);
  // Exact dR is smaller than the estimate by about the ratio 2 / 2.033.
  EXPECT_NEAR((0.100 - part) / approx, 2.0 / 2.033, 2e-3);
  // Edge contact: the part is flatter.
  const double flat =
      PartRadiusFromFringes(plate, 0.030, 2.0, kLambda, 1.0, Contact::kEdge);
  EXPECT_GT(flat, 0.100);
  EXPECT_NEAR(GapFringes(SphereGap(flat, plate, 0.015), kLambda), -2.0, 1e-9);
}

TEST(RingFit, AstigmatismAndAxis) {
  Truth t;
  t.astig_per_m2 =
      0.3 / (1.2e-3 * 1.2e-3);  // 0.6 fringes difference over r = 1.2 mm
  t.astig_axis_rad =
      30.0 * std::numbers::pi / 180.0;  // image coordinates (y down)
  RingFitOptions o = OptionsFor(t);
  o.aperture_diameter = Length::Metres(2.4e-3);
  const RingFitResult fit = FitRings(MakePoints(t), o, Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  // Difference of the principal-axis counts over r = 1.2 mm: 2 gamma r^2.
  EXPECT_NEAR(fit.astigmatism_fringes, 0.6, 2e-3);
  // Surface coordinates have y up: the axis mirrors to 180 - 30 degrees.
  EXPECT_NEAR(fit.astigmatism_axis_deg, 150.0, 0.05);
  // The mean curvature is untouched by the astigmatism.
  EXPECT_NEAR(fit.radius_m / t.part_radius, 1.0, 1e-4);
}

TEST(RingFit, RejectsOutliers) {
  Truth t;
  std::mt19937 rng(12345);
  std::vector<RingFitPoint> pts = MakePoints(t, &rng);
  // Dust and scratches: every 17th point displaced by 2 px (40 sigma).
  int moved = 0;
  for (std::size_t i = 0; i < pts.size(); i += 17) {
    const double dx = pts[i].x_px - t.cx;
    const double dy = pts[i].y_px - t.cy;
    const double r = std::hypot(dx, dy);
    pts[i].x_px += 2.0 * dx / r;
    pts[i].y_px += 2.0 * dy / r;
    ++moved;
  }
  const RingFitResult fit = FitRings(pts, OptionsFor(t), Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  int flagged = 0;
  for (std::size_t i = 0; i < pts.size(); i += 17)
    flagged += fit.outlier[i] ? 1 : 0;
  EXPECT_EQ(flagged, moved);
  EXPECT_LE(fit.points_rejected, moved + static_cast<int>(pts.size()) / 100);
  EXPECT_LT(std::abs(fit.radius_m / t.part_radius - 1.0),
            3.0 * fit.radius_u_m / fit.radius_m);
  EXPECT_NEAR(fit.residual_rms_px, t.sigma_px, 0.2 * t.sigma_px);
}

TEST(RingFit, CovarianceMatchesMonteCarlo) {
  // The stated u (fit only) against the scatter of R over repeated noisy
  // data sets (fixed seed) [practice: Monte Carlo check of a covariance].
  Truth t;
  t.sigma_px = 0.1;
  t.sectors = 24;
  std::mt19937 rng(777);
  std::vector<double> r;
  double u_sum = 0.0;
  const int trials = 120;
  for (int i = 0; i < trials; ++i) {
    const RingFitResult fit =
        FitRings(MakePoints(t, &rng), OptionsFor(t), Guess(t));
    ASSERT_NE(fit.status, Status::kError);
    r.push_back(fit.radius_m);
    u_sum += fit.radius_u_m;
  }
  double mean = 0.0;
  for (double v : r) mean += v;
  mean /= trials;
  double var = 0.0;
  for (double v : r) var += (v - mean) * (v - mean);
  const double sd = std::sqrt(var / (trials - 1));
  const double u_mean = u_sum / trials;
  EXPECT_NEAR(u_mean / sd, 1.0, 0.2) << "u " << u_mean << " sd " << sd;
  EXPECT_NEAR(mean / t.part_radius, 1.0,
              4.0 * sd / std::sqrt(trials) / t.part_radius);
}

TEST(RingFit, SectorCorrelatedErrorsDoNotShrinkU) {
  // Each sector shares a radial error (a profile bias along that azimuth);
  // the points of one sector are then not independent. The U95 must still
  // cover the true R in at least 90 % of cases.
  Truth t;
  t.sigma_px = 0.01;
  t.sectors = 24;
  std::mt19937 rng(4242);
  std::normal_distribution<double> shared(0.0, 0.15);
  int covered = 0;
  const int trials = 60;
  for (int i = 0; i < trials; ++i) {
    std::vector<RingFitPoint> pts = MakePoints(t, &rng);
    std::vector<double> bias(static_cast<std::size_t>(t.sectors));
    std::vector<double> slope(static_cast<std::size_t>(t.sectors));
    for (double& b : bias) b = shared(rng);
    for (double& s : slope) s = shared(rng) / 150.0;
    for (RingFitPoint& p : pts) {
      const double dx = p.x_px - t.cx;
      const double dy = p.y_px - t.cy;
      const double rr = std::hypot(dx, dy);
      const auto s = static_cast<std::size_t>(p.sector);
      const double shift =
          bias[s] + slope[s] * rr;  // grows with radius: biases R
      p.x_px += shift * dx / rr;
      p.y_px += shift * dy / rr;
    }
    const RingFitResult fit = FitRings(pts, OptionsFor(t), Guess(t));
    ASSERT_NE(fit.status, Status::kError);
    // Birge scaling alone would ignore the shared errors: the clustered
    // covariance must be the one in use.
    if (i == 0) {
      EXPECT_NE(fit.uncertainty_note.find("sector-clustered"),
                std::string::npos);
    }
    covered +=
        std::abs(fit.radius_m - t.part_radius) <= fit.radius_u95_m ? 1 : 0;
  }
  EXPECT_GE(covered, trials * 9 / 10);
}

TEST(RingFit, UncertaintyBudget) {
  Truth t;
  RingFitOptions o = OptionsFor(t);
  o.pixel_pitch_u = Length::Metres(t.pitch * 1e-3);  // 0.1 % of the pitch
  o.wavelength.uncertainty = Length::Metres(kLambda * 2e-4);
  std::mt19937 rng(99);
  const RingFitResult fit = FitRings(MakePoints(t, &rng), o, Guess(t));
  ASSERT_NE(fit.status, Status::kError);
  // R scales with pitch^2 and 1/lambda (GUM sensitivity coefficients).
  EXPECT_NEAR(fit.u_rel_pitch, 2e-3, 1e-12);
  EXPECT_NEAR(fit.u_rel_wavelength, 2e-4, 1e-12);
  const double combined =
      std::sqrt(fit.u_rel_fit * fit.u_rel_fit + 4e-6 + 4e-8);
  EXPECT_NEAR(fit.radius_u_m / fit.radius_m, combined, 1e-9);
  EXPECT_DOUBLE_EQ(fit.radius_u95_m, 2.0 * fit.radius_u_m);
  EXPECT_NE(fit.uncertainty_note.find("JCGM 100:2008"), std::string::npos);
}

TEST(RingFit, CentreStateAndOffsetFollowTheMediaRule) {
  // A contact fluid between the two glasses' indices (1.5 < n < 1.7): one
  // reflection flips, the other not, so contact is bright (d = 1/2).
  Truth t;
  t.stack = MediaStack{1.5168, 1.6, 1.72};
  ASSERT_DOUBLE_EQ(MinimumOffset(t.stack, View::kReflected), 0.5);
  const RingFitResult fit = FitRings(MakePoints(t), OptionsFor(t), Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  EXPECT_EQ(fit.centre_predicted, FringeState::kBright);
  EXPECT_NEAR(fit.order_offset, 0.0, 1e-7);
  EXPECT_NEAR(fit.radius_m / t.part_radius, 1.0, 1e-9);
  // Default stack: contact dark.
  Truth air;
  const RingFitResult dark =
      FitRings(MakePoints(air), OptionsFor(air), Guess(air));
  EXPECT_EQ(dark.centre_predicted, FringeState::kDark);
}

TEST(RingFit, FittedRadiusReproducesPoints) {
  Truth t;
  t.astig_per_m2 = 1e5;
  const std::vector<RingFitPoint> pts = MakePoints(t);
  const RingFitResult fit = FitRings(pts, OptionsFor(t), Guess(t));
  ASSERT_NE(fit.status, Status::kError);
  for (std::size_t i = 0; i < pts.size(); i += 50) {
    const double dx = pts[i].x_px - fit.centre_px.x;
    const double dy = pts[i].y_px - fit.centre_px.y;
    EXPECT_NEAR(FittedRadiusPx(fit, pts[i].order, std::atan2(dy, dx)),
                std::hypot(dx, dy), 0.02);
  }
}

TEST(RingFit, FittedRadiusIsExactForAFastPartOnAPlate) {
  // A fast part (R 12 mm) on a plate 0.2 % flatter: the higher-order sag
  // terms shift the outer rings by several pixels, so the drawn model must
  // carry them (exact sags, optics/sphere.h).
  Truth t;
  t.part_radius = 0.012;
  t.plate_radius = -0.012024;
  t.pitch = 4e-6;
  t.last_index = 30;
  t.cx = 900.3;
  t.cy = 880.7;
  const std::vector<RingFitPoint> pts = MakePoints(t);
  const RingFitResult fit = FitRings(pts, OptionsFor(t), Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  RingFitResult paraxial = fit;
  paraxial.model_part_radius_m = std::numeric_limits<double>::quiet_NaN();
  double worst_paraxial = 0.0;
  for (std::size_t i = 0; i < pts.size(); i += 7) {
    const double dx = pts[i].x_px - fit.centre_px.x;
    const double dy = pts[i].y_px - fit.centre_px.y;
    const double angle = std::atan2(dy, dx);
    EXPECT_NEAR(FittedRadiusPx(fit, pts[i].order, angle), std::hypot(dx, dy),
                0.02);
    worst_paraxial = std::max(
        worst_paraxial, std::abs(FittedRadiusPx(paraxial, pts[i].order, angle) -
                                 std::hypot(dx, dy)));
  }
  // Guards the test itself: without the exact terms the model is off.
  EXPECT_GT(worst_paraxial, 0.5);
}

TEST(RingFit, PowerOverTheTestDiameter) {
  // Power and sag over a stated test diameter (ISO 10110-5 tolerances apply
  // over a test region) follow the exact sags there (optics/sphere.h).
  Truth t;
  t.plate_radius = -0.100;
  t.part_radius = 0.09995;
  t.pitch = 20e-6;
  t.last_index = 40;
  RingFitOptions o = OptionsFor(t);
  o.test_diameter = Length::Millimetres(12.0);
  const RingFitResult fit = FitRings(MakePoints(t), o, Guess(t));
  ASSERT_NE(fit.status, Status::kError) << fit.messages.front();
  EXPECT_TRUE(fit.over_test_diameter);
  EXPECT_NEAR(fit.aperture_diameter_m, 0.012, 1e-12);
  EXPECT_NEAR(fit.power_fringes,
              GapFringes(SphereGap(0.09995, -0.100, 0.006), kLambda), 1e-6);
  // A test diameter beyond the outermost fringe is extrapolation: warned.
  o.test_diameter = Length::Millimetres(150.0);
  const RingFitResult wide = FitRings(MakePoints(t), o, Guess(t));
  ASSERT_NE(wide.status, Status::kError);
  EXPECT_EQ(wide.status, Status::kWarning);
  bool warned = false;
  for (const std::string& m : wide.messages)
    warned = warned || m.find("extrapolated") != std::string::npos;
  EXPECT_TRUE(warned);
  o.test_diameter = Length::Millimetres(-1.0);
  EXPECT_NE(o.Check(), "");
}

TEST(RingFit, BadInput) {
  Truth t;
  RingFitOptions o = OptionsFor(t);
  o.pixel_pitch = Length::Metres(0.0);
  EXPECT_THROW(FitRings(MakePoints(t), o, Guess(t)), InputError);
  EXPECT_FALSE(o.Check().empty());
  // One ring only: an error with a reason, not a number.
  t.first_index = 4;
  t.last_index = 4;
  const RingFitResult fit = FitRings(MakePoints(t), OptionsFor(t), Guess(t));
  EXPECT_EQ(fit.status, Status::kError);
  ASSERT_FALSE(fit.messages.empty());
  EXPECT_THROW(ParseContact("middle"), InputError);
  EXPECT_EQ(ParseContact("center"), Contact::kCentre);
}

// Degenerate point sets give an error with a reason, never a number from
// a singular system: zero (or non-finite) point uncertainties, all points
// on one ray from the centre (collinear: one sector), and all points at the
// centre. NaN points among good ones are skipped and do not spread.
TEST(RingFit, DegeneratePointSetsAreErrors) {
  const Truth t;
  const RingFitOptions o = OptionsFor(t);
  auto expect_error = [](const RingFitResult& fit, const std::string& word) {
    EXPECT_EQ(fit.status, Status::kError);
    ASSERT_FALSE(fit.messages.empty());
    EXPECT_NE(fit.messages.back().find(word), std::string::npos)
        << fit.messages.back();
  };
  std::vector<RingFitPoint> zero_sigma = MakePoints(t);
  for (RingFitPoint& p : zero_sigma) p.sigma_px = 0.0;
  expect_error(FitRings(zero_sigma, o, Guess(t)), "too few fringe points");
  std::vector<RingFitPoint> nan_sigma = MakePoints(t);
  for (RingFitPoint& p : nan_sigma) p.sigma_px = std::nan("");
  expect_error(FitRings(nan_sigma, o, Guess(t)), "too few fringe points");

  Truth one_sector = t;
  one_sector.sectors = 1;  // every point on one ray: collinear
  expect_error(FitRings(MakePoints(one_sector), o, Guess(t)),
               "do not determine the ring model");

  std::vector<RingFitPoint> at_centre = MakePoints(t);
  for (RingFitPoint& p : at_centre) {
    p.x_px = Guess(t).x;
    p.y_px = Guess(t).y;
  }
  expect_error(FitRings(at_centre, o, Guess(t)), "at the centre");

  std::vector<RingFitPoint> some_nan = MakePoints(t);
  for (std::size_t i = 0; i < some_nan.size(); i += 7) {
    some_nan[i].x_px = std::numeric_limits<double>::quiet_NaN();
  }
  const RingFitResult fit = FitRings(some_nan, o, Guess(t));
  EXPECT_NE(fit.status, Status::kError);
  EXPECT_TRUE(std::isfinite(fit.radius_m));
  EXPECT_NEAR(fit.radius_m, t.part_radius, 1e-6 * t.part_radius);
}

// Absurd pixel pitches are refused by Check (the radius scales with the
// pitch squared and would overflow or underflow); the fit itself refuses a
// radius that is not a finite, non-zero length.
TEST(RingFit, AbsurdPitchIsRefused) {
  const Truth t;
  RingFitOptions o = OptionsFor(t);
  o.pixel_pitch = Length::Metres(1e200);
  EXPECT_NE(o.Check().find("between 1 nm and 1 m"), std::string::npos);
  EXPECT_THROW(FitRings(MakePoints(t), o, Guess(t)), InputError);
  o.pixel_pitch = Length::Metres(1e-200);
  EXPECT_FALSE(o.Check().empty());
  // A plate radius so small that the part radius underflows to zero.
  RingFitOptions tiny = OptionsFor(t);
  tiny.reference_radius = Length::Metres(-1e-320);
  const RingFitResult fit = FitRings(MakePoints(t), tiny, Guess(t));
  EXPECT_EQ(fit.status, Status::kError);
  ASSERT_FALSE(fit.messages.empty());
  EXPECT_NE(fit.messages.back().find("no finite radius"), std::string::npos)
      << fit.messages.back();
}

// Sag and power are undefined, not out of range, when the evaluated
// aperture is wider than the sphere (no point of a sphere of radius R lies
// farther than R from its axis): a usable result with R and a warning.
TEST(RingFit, ApertureWiderThanTheSphereKeepsTheRadius) {
  const Truth t;  // R = 200 mm
  RingFitOptions o = OptionsFor(t);
  o.aperture_diameter = Length::Metres(0.5);  // half 250 mm > R
  const RingFitResult fit = FitRings(MakePoints(t), o, Guess(t));
  ASSERT_EQ(fit.status, Status::kWarning)
      << (fit.messages.empty() ? "" : fit.messages.back());
  EXPECT_NEAR(fit.radius_m / t.part_radius, 1.0, 1e-9);
  EXPECT_TRUE(std::isfinite(fit.radius_u95_m));
  EXPECT_TRUE(std::isnan(fit.sag_m));
  EXPECT_TRUE(std::isnan(fit.power_fringes));
  EXPECT_TRUE(std::isnan(fit.power_u_fringes));
  ASSERT_FALSE(fit.messages.empty());
  EXPECT_NE(fit.messages.back().find("wider than the fitted sphere"),
            std::string::npos)
      << fit.messages.back();
}

// The fit's one finiteness guard in the image-mode model: fringe points so
// far out that the radius (proportional to r^2) overflows double range
// (DBL_MAX = 1.797e308, IEEE 754 binary64), and a finite radius whose
// expanded uncertainty overflows, are errors with a reason.
TEST(RingFit, NumbersThatOverflowAreAnError) {
  const Truth t;
  // The same points scaled 1e160 times about the centre, sigmas with them:
  // the normalised fit is unchanged, R ~ r^2 is about 1e318 m.
  std::vector<RingFitPoint> far = MakePoints(t);
  for (RingFitPoint& p : far) {
    p.x_px = t.cx + 1e160 * (p.x_px - t.cx);
    p.y_px = t.cy + 1e160 * (p.y_px - t.cy);
    p.sigma_px *= 1e160;
  }
  const RingFitResult huge = FitRings(far, OptionsFor(t), Guess(t));
  EXPECT_EQ(huge.status, Status::kError);
  EXPECT_EQ(huge.model, RingModel::kConic);
  ASSERT_FALSE(huge.messages.empty());
  EXPECT_NE(huge.messages.back().find("no finite radius"), std::string::npos)
      << huge.messages.back();

  Truth plate;
  plate.plate_radius = -0.100;
  plate.part_radius = 0.09995;
  RingFitOptions o = OptionsFor(plate);
  o.reference_radius_u = Length::Metres(1e308);  // finite: Check accepts it
  ASSERT_TRUE(o.Check().empty());
  const RingFitResult fit = FitRings(MakePoints(plate), o, Guess(plate));
  EXPECT_EQ(fit.status, Status::kError);
  ASSERT_FALSE(fit.messages.empty());
  EXPECT_NE(fit.messages.back().find("no finite radius"), std::string::npos)
      << fit.messages.back();
  EXPECT_NE(fit.messages.back().find("uncertainty is infinite"),
            std::string::npos)
      << fit.messages.back();
}

TEST(RingFit, LiquidIndexWorkedExample) {
  // references.md: 10th ring diameter 14 mm in air, 12.7 mm with a liquid
  // -> n = 1.215 (r^2 ~ 1/n_gap).
  EXPECT_NEAR(LiquidIndexFromDiameters(14e-3, 12.7e-3), 1.215, 5e-4);
  EXPECT_THROW(LiquidIndexFromDiameters(0.0, 1.0), InputError);
}

}  // namespace
}  // namespace figura
