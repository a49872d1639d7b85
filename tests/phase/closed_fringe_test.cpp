// Closed-fringe tracing (phase/closed_fringe.h) on photographs from the
// project's simulator, in process. External checks:
//  - the Newton's-ring law r_k^2 = k lambda R / n_gap (Hecht, Optics, sec.
//    9.4; ../shared/references.md): on a lens against a flat, the traced gap
//    of every fringe centre equals r^2 / (2 R) up to a constant;
//  - the simulator's exact gap (sim/gap.h: exact sphere sags plus Zernike
//    terms) at each traced point, for an astigmatic test-plate photo, with
//    both press-test outcomes (contact at the centre and at the edge).
#include "phase/closed_fringe.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <numeric>
#include <utility>
#include <vector>

#include "sim/gap.h"
#include "sim/simulation.h"

namespace figura {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kHgE = 546.074e-9;       // mercury e line (references.md)
constexpr double kHalfWave = kHgE / 2.0;  // one fringe of an air gap

// A 600 x 560 16-bit photo with noise, blur and fall-off.
SimulationOptions Camera(SimulationOptions sim) {
  sim.wavelength = Wavelength{Length::Metres(kHgE), {}, {}, {}, {}};
  sim.camera.width_px = 600;
  sim.camera.height_px = 560;
  sim.camera.pixel_pitch_m = 40e-6;
  sim.aperture_diameter_m = 20e-3;  // 500 px
  sim.centre_x_px = 303.5;
  sim.centre_y_px = 276.0;
  sim.camera.blur_sigma_px = 1.0;
  sim.camera.falloff = 0.2;
  sim.camera.background = 0.02;
  sim.camera.full_well_e = 15000;
  sim.camera.read_noise_e = 6;
  sim.seed = 17;
  return sim;
}

// A test plate against a part: 3 fringes of power over the evaluated
// aperture (95 % of the 20 mm clear aperture), 0.6 fringe PV of
// astigmatism and 0.25 fringe PV of spherical aberration (invented part).
SimulationOptions TestPlate(Contact contact, double spherical_sign = 1.0) {
  SimulationOptions sim;
  sim.gap.part_radius_m = 0.050;
  // 1/Rp + 1/Rt = +-2 S / r^2 with S = 3 fringes at r = 0.95 a (paraxial
  // sag).
  const double r = 0.95 * 0.01;
  const double curvature = 2.0 * 3.0 * kHalfWave / (r * r);
  sim.gap.contact = contact;
  sim.gap.plate_radius_m =
      -1.0 /
      (1.0 / 0.050 - (contact == Contact::kCentre ? curvature : -curvature));
  sim.gap.contact_offset_m = 180e-9;
  sim.gap.zernike_m.assign(13, 0.0);
  sim.gap.zernike_m[5] = 0.6 * kHalfWave / (2.0 * std::sqrt(6.0));
  sim.gap.zernike_m[12] =
      spherical_sign * 0.25 * kHalfWave / (1.5 * std::sqrt(5.0));
  return Camera(sim);
}

ClosedFringeOptions OptionsFor(const SimulationOptions& sim, Contact contact) {
  ClosedFringeOptions o;
  o.stack = sim.stack;
  o.view = sim.view;
  o.wavelength_m = kHgE;
  o.contact = contact;
  return o;
}

cv::Mat Pixels(const SimulationResult& photo) {
  cv::Mat f;
  photo.image.convertTo(f, CV_32F);
  return f;
}

// Standard deviation of traced gap minus the true gap (removes the
// unknown constant), metres.
double ScatterAgainst(const ClosedFringeResult& r, const SimulationOptions& sim,
                      double* mean_out) {
  const GapModel model(sim.gap, sim.aperture_diameter_m / 2.0);
  std::vector<double> d;
  for (const GapSample& s : r.samples) {
    const double x = (s.x_px - sim.CentreX()) * sim.camera.pixel_pitch_m;
    const double y = (sim.CentreY() - s.y_px) * sim.camera.pixel_pitch_m;
    d.push_back(s.gap_m - model.At(x, y));
  }
  const double mean = std::accumulate(d.begin(), d.end(), 0.0) / d.size();
  double ss = 0.0;
  for (double v : d) ss += (v - mean) * (v - mean);
  if (mean_out) *mean_out = mean;
  return std::sqrt(ss / d.size());
}

TEST(ClosedFringe, LensOnFlatFollowsNewtonsRingLaw) {
  SimulationOptions sim;
  sim.gap.part_radius_m = 20.0;
  sim.gap.plate_radius_m = kInf;
  sim.gap.contact_offset_m = 40e-9;
  sim = Camera(sim);
  const SimulationResult photo = Simulate(sim);
  const ClosedFringeResult r =
      TraceClosedFringes(Pixels(photo), OptionsFor(sim, Contact::kCentre));
  ASSERT_NE(r.status, Status::kError) << r.messages.front();
  ASSERT_GT(r.samples.size(), 200U);
  // Newton's rings (Hecht sec. 9.4): gap = r^2 / (2 R) for r << R, about
  // the contact point (the aperture centre here).
  std::vector<double> d;
  for (const GapSample& s : r.samples) {
    const double x = (s.x_px - sim.CentreX()) * sim.camera.pixel_pitch_m;
    const double y = (s.y_px - sim.CentreY()) * sim.camera.pixel_pitch_m;
    d.push_back(s.gap_m - (x * x + y * y) / (2.0 * 20.0));
  }
  const double mean = std::accumulate(d.begin(), d.end(), 0.0) / d.size();
  double worst = 0.0;
  for (double v : d) worst = std::max(worst, std::abs(v - mean));
  // Within 0.05 fringe everywhere [practice: a visual fringe reading is
  // good to about 0.1 fringe; tracing should do better].
  EXPECT_LT(worst, 0.05 * kHalfWave);
  // With a dark contact (air between glasses, reflected light) the first
  // dark fringe has order 0 and the gap there is the contact offset; the
  // traced constant is the offset up to the part of a fringe hidden in the
  // dust: |mean + offset| < one fringe.
  EXPECT_LT(std::abs(mean + sim.gap.contact_offset_m), kHalfWave);
}

TEST(ClosedFringe, AstigmaticTestPlateBothContacts) {
  for (const auto& [contact, spherical] :
       {std::pair{Contact::kCentre, 1.0}, std::pair{Contact::kEdge, -1.0}}) {
    SCOPED_TRACE(ContactName(contact));
    const SimulationOptions sim = TestPlate(contact, spherical);
    const SimulationResult photo = Simulate(sim);
    const ClosedFringeResult r =
        TraceClosedFringes(Pixels(photo), OptionsFor(sim, contact));
    ASSERT_NE(r.status, Status::kError) << r.messages.front();
    EXPECT_GE(r.rings, 4);  // 3 fringes: 4 dark and bright fringes traced
    double mean = 0.0;
    // Traced gap against the exact gap at the same points: 0.03 fringe RMS
    // [practice, as above].
    EXPECT_LT(ScatterAgainst(r, sim, &mean), 0.03 * kHalfWave);
    // The wrong press-test outcome flips the sign: the scatter against the
    // truth becomes a whole fringe pattern.
    ClosedFringeOptions wrong = OptionsFor(sim, contact);
    wrong.contact =
        contact == Contact::kCentre ? Contact::kEdge : Contact::kCentre;
    const ClosedFringeResult w = TraceClosedFringes(Pixels(photo), wrong);
    ASSERT_NE(w.status, Status::kError);
    EXPECT_GT(ScatterAgainst(w, sim, &mean), 0.5 * kHalfWave);
  }
}

TEST(ClosedFringe, UniformImageIsAnErrorWithAReason) {
  const cv::Mat flat(300, 300, CV_32F, cv::Scalar(1000.0));
  ClosedFringeOptions o;
  const ClosedFringeResult r = TraceClosedFringes(flat, o);
  EXPECT_EQ(r.status, Status::kError);
  ASSERT_FALSE(r.messages.empty());
  EXPECT_TRUE(r.samples.empty());
}

TEST(ClosedFringe, SupportedOrderFollowsTheSampling) {
  EXPECT_EQ(SupportedClosedOrder(12, 72, 8), 8);  // dense: as requested
  EXPECT_EQ(SupportedClosedOrder(4, 72, 8), 4);   // few fringes limit it
  EXPECT_EQ(SupportedClosedOrder(12, 12, 8), 3);  // few sectors limit it
  EXPECT_EQ(SupportedClosedOrder(1, 72, 8), 2);   // never below 2
}

TEST(ClosedFringe, InvalidOptionsThrow) {
  ClosedFringeOptions o;
  o.wavelength_m = -1.0;
  EXPECT_THROW(TraceClosedFringes(cv::Mat(10, 10, CV_32F), o), InputError);
}

}  // namespace
}  // namespace figura
