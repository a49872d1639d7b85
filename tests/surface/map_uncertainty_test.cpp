// Coverage of the map uncertainties (surface/zernike_fit.h correlated-
// residual covariance, surface/form_metrics.h propagation) on random
// carrier photos from the project's simulator (fixed seeds): two flats with
// a wedge, shape terms through radial order 4, random irregularity through
// radial order 10 (beyond the fitted order 8, so that the residual map holds
// real smooth detail), blur, shot and read noise, fall-off and gamma. The
// truth is the simulator's exact gap fitted over the map's own aperture
// (tests/surface/map_truth.h).
// Criteria (the surface-map uncertainty task, the same kind as the ring
// coverage test tests/fringe/ring_accuracy_test.cpp uses for R): U95 = k u
// with k = 2 (GUM, JCGM 100:2008, 6.3.3: about 95 % for a normal
// distribution) covers the true power A in at least 90 % of the cases, and
// the median U95 is under 5 x the median |error| (not wildly wide).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <iostream>
#include <limits>
#include <numbers>
#include <opencv2/imgproc.hpp>
#include <random>
#include <string>
#include <vector>

#include "check_record.h"
#include "map_truth.h"
#include "sim/simulation.h"
#include "surface/correlation_area.h"
#include "surface/surface_map.h"
#include "surface/zernike.h"

namespace figura {
namespace {

using testing::MapTruth;
using testing::ToImage;
using testing::TruthOver;

constexpr double kHeD = 587.5618e-9;  // helium d line (references.md)

// One random carrier scene (invented windows against a reference flat).
SimulationOptions RandomScene(std::mt19937_64* rng, std::uint64_t seed,
                              double beyond_fit_m) {
  auto uniform = [&](double lo, double hi) {
    return std::uniform_real_distribution<double>(lo, hi)(*rng);
  };
  SimulationOptions sim;
  sim.gap.part_radius_m = GapOptions::kFlat;
  sim.gap.plate_radius_m = GapOptions::kFlat;
  // 14-26 fringes of wedge, mostly along x (the thin side is left or right).
  const double tilt = uniform(2.0e-6, 3.8e-6);
  sim.gap.contact_offset_m = 1.5 * tilt + 1.0e-6;  // gap > 0 everywhere
  sim.gap.tilt_x_m = uniform(0.0, 1.0) < 0.5 ? tilt : -tilt;
  sim.gap.tilt_y_m = uniform(-0.4, 0.4) * tilt;
  sim.gap.zernike_m.assign(static_cast<std::size_t>(ZernikeCount(10)), 0.0);
  for (int j = 3; j < ZernikeCount(10); ++j) {
    const int n = ZernikeModeOf(j).n;
    const double amplitude = n <= 4 ? 40e-9 : (n <= 8 ? 5e-9 : beyond_fit_m);
    sim.gap.zernike_m[static_cast<std::size_t>(j)] =
        uniform(-amplitude, amplitude);
  }
  sim.wavelength = Wavelength{Length::Metres(kHeD), {}, {}, {}, {}};
  sim.aperture_diameter_m = 24e-3;
  sim.camera.width_px = 480;
  sim.camera.height_px = 440;
  sim.camera.pixel_pitch_m = 60e-6;  // 400 px across
  sim.centre_x_px = 240.0 + uniform(-10.0, 10.0);
  sim.centre_y_px = 220.0 + uniform(-10.0, 10.0);
  sim.camera.blur_sigma_px = uniform(0.6, 1.8);
  sim.camera.falloff = uniform(0.0, 0.25);
  sim.camera.background = 0.02;
  sim.camera.full_well_e = uniform(4000.0, 20000.0);
  sim.camera.read_noise_e = uniform(4.0, 12.0);
  sim.camera.gamma = uniform(0.8, 1.0);
  sim.seed = seed;
  return sim;
}

// Coverage of one quantity.
struct Coverage {
  int covered = 0;
  int cases = 0;
  std::vector<double> u95;
  std::vector<double> error;
  void Add(double err, double u95_m) {
    ++cases;
    if (std::abs(err) <= u95_m) ++covered;
    u95.push_back(u95_m);
    error.push_back(std::abs(err));
  }
  [[nodiscard]] static double Median(std::vector<double> v) {
    if (v.empty()) return std::numeric_limits<double>::quiet_NaN();
    std::nth_element(v.begin(), v.begin() + static_cast<long>(v.size() / 2),
                     v.end());
    return v[v.size() / 2];
  }
  // Median U95 / median |error|.
  [[nodiscard]] double Width() const { return Median(u95) / Median(error); }
};

// Absolute errors of a number that has no uncertainty (for the record).
struct Errors {
  std::vector<double> error;
  void Add(double err) { error.push_back(err); }
  [[nodiscard]] double MedianAbs() const {
    std::vector<double> a;
    for (const double e : error) a.push_back(std::abs(e));
    return Coverage::Median(a);
  }
  [[nodiscard]] double MaxAbs() const {
    double m = 0.0;
    for (const double e : error) m = std::max(m, std::abs(e));
    return m;
  }
};

struct Stats {
  int failed = 0;
  Coverage power;
  Coverage power_independent;  // U95 without the correlation correction
  Coverage terms_low;          // Zernike terms of radial order 2..4, 2 u
  Coverage terms_high;         // ... 5..8
  Errors irregularity;
  Errors rsi;
  Errors rmsi;
};

constexpr std::uint64_t kJudgedSeed = 20261204;
constexpr std::uint64_t kTuningSeed = 91;
// Amplitude (uniform +-) of each Zernike term of radial order 9 and 10.
constexpr double kBeyondFit = 0.5e-9;

Stats RunCases(int cases, bool verbose, double beyond_fit_m,
               std::uint64_t seed = kJudgedSeed) {
  std::mt19937_64 rng(seed);
  Stats s;
  for (int i = 0; i < cases; ++i) {
    const SimulationOptions sim =
        RandomScene(&rng, seed + static_cast<std::uint64_t>(i), beyond_fit_m);
    MapOptions o;
    o.wavelength = sim.wavelength;
    o.stack = sim.stack;
    o.view = sim.view;
    o.mode = MapMode::kCarrier;
    o.thin_side = sim.gap.tilt_x_m > 0.0 ? ThinSide::kLeft : ThinSide::kRight;
    o.thin_side_given = true;
    const MapResult r = AnalyseMap(ToImage(Simulate(sim)), o);
    if (r.status == Status::kError) {
      ++s.failed;
      std::cout << "[map coverage] case " << i
                << " failed: " << (r.messages.empty() ? "" : r.messages.front())
                << "\n";
      continue;
    }
    const MapTruth t = TruthOver(sim, r);
    const FormMetrics& m = r.metrics;
    const FormMetrics& tm = t.metrics;
    const double k = kMapCoverageFactor;
    const double err = m.power_m - tm.power_m;
    s.power.Add(err, k * m.power_u_m);
    s.power_independent.Add(
        err, k * m.power_u_m / std::sqrt(r.fit.covariance_inflation));
    for (int j = 3; j < ZernikeCount(8); ++j) {
      const auto jj = static_cast<std::size_t>(j);
      Coverage& c = ZernikeModeOf(j).n <= 4 ? s.terms_low : s.terms_high;
      c.Add(r.fit.coefficients_m[jj] - t.fit.coefficients_m[jj],
            k * r.fit.u_m[jj]);
    }
    s.irregularity.Add(m.irregularity_m - tm.irregularity_m);
    s.rsi.Add(m.rsi_m - tm.rsi_m);
    s.rmsi.Add(m.rmsi_m - tm.rmsi_m);
    if (verbose) {
      std::cout << "[map coverage] case " << i << ": blur "
                << sim.camera.blur_sigma_px << " px, full well "
                << sim.camera.full_well_e << " e, correlation area "
                << r.fit.correlation_area_px << " px2, inflation "
                << r.fit.covariance_inflation << ", residual "
                << r.fit.residual_rms_m * 1e9 << " nm; A error " << err * 1e9
                << " nm, U95 " << k * m.power_u_m * 1e9 << " nm; B error "
                << (m.irregularity_m - tm.irregularity_m) * 1e9
                << " nm, C error " << (m.rsi_m - tm.rsi_m) * 1e9 << " nm\n";
    }
  }
  return s;
}

void Print(const std::string& name, const Coverage& c) {
  std::cout << "[map coverage] " << name << ": " << c.covered << "/" << c.cases
            << " covered, median |error| " << Coverage::Median(c.error) * 1e9
            << " nm, median U95 " << Coverage::Median(c.u95) * 1e9
            << " nm, median U95 / median |error| " << c.Width() << "\n";
}

void PrintAll(const Stats& s) {
  Print("A (power)", s.power);
  Print("A, independent pixels", s.power_independent);
  Print("Zernike terms n = 2..4 (2 u)", s.terms_low);
  Print("Zernike terms n = 5..8 (2 u)", s.terms_high);
  for (const auto& [name, e] :
       {std::pair<const char*, const Errors*>{"B", &s.irregularity},
        {"C", &s.rsi},
        {"RMSi", &s.rmsi}}) {
    std::cout << "[map coverage] " << name
              << " (no uncertainty): median |error| " << e->MedianAbs() * 1e9
              << " nm, max |error| " << e->MaxAbs() * 1e9 << " nm\n";
  }
}

#ifdef FIGURA_SANITIZER_BUILD
// The sanitizer tree (FIGURA_SANITIZE) runs each case many times slower:
// there the first 4 of the same photos are analysed and only what must hold
// per case is checked (no failure, finite uncertainties); the coverage
// statistics are judged in the Release tree.
TEST(MapUncertainty, U95CoversTruePowerSanitizerSubset) {
  const Stats s = RunCases(4, false, kBeyondFit);
  PrintAll(s);
  EXPECT_EQ(s.failed, 0);
  for (const double u : s.power.u95) EXPECT_TRUE(std::isfinite(u) && u > 0.0);
}
#else
TEST(MapUncertainty, U95CoversTruePower) {
  constexpr int kCases = 36;
  const Stats s = RunCases(kCases, true, kBeyondFit);
  PrintAll(s);
  EXPECT_EQ(s.failed, 0);
  // GUM k = 2: about 95 %; the task demands at least 90 %.
  EXPECT_GE(s.power.covered, 0.9 * s.power.cases);
  figura::testing::RecordCheck(
      "U95 coverage of the true power A, 36 random carrier photos",
      "GUM (JCGM 100:2008) k = 2: about 95 %; task target >= 90 %", 95.0,
      100.0 * s.power.covered / s.power.cases, 5.0, "%");
  // Not wildly wide.
  EXPECT_LT(s.power.Width(), 5.0);
  figura::testing::RecordCheck("median U95 / median |error| of A",
                               "task target: under 5", 2.5, s.power.Width(),
                               2.5, "");
}
#endif  // FIGURA_SANITIZER_BUILD

// Run by hand (--gtest_also_run_disabled_tests): 36 photos of seed
// FIGURA_SEED (default kTuningSeed) with FIGURA_BEYOND_FIT_NM (default 0)
// nm per term of radial order 9 and 10; FIGURA_VERBOSE prints every case
// (docs/validation.md, the sensitivity rows).
TEST(MapUncertainty, DISABLED_Tuning) {
  const char* env = std::getenv("FIGURA_BEYOND_FIT_NM");
  const double nm = env != nullptr ? std::atof(env) : 0.0;
  const char* seed = std::getenv("FIGURA_SEED");
  PrintAll(RunCases(
      36, std::getenv("FIGURA_VERBOSE") != nullptr, nm * 1e-9,
      seed != nullptr ? std::strtoull(seed, nullptr, 10) : kTuningSeed));
}

// The correlation area of Gaussian-filtered white noise: filtering with a
// Gaussian of standard deviation a gives the autocorrelation exp(-d^2 / (4
// a^2)) (the kernel's self-convolution, a Gaussian of variance 2 a^2;
// e.g. Papoulis, Probability, Random Variables and Stochastic Processes,
// linear systems with white-noise input [memory]), whose 1/e area is 4 pi
// a^2.
TEST(CorrelationArea, GaussianFilteredNoiseMatchesTheory) {
  cv::RNG rng(4242);
  for (const double a : {2.0, 4.0}) {
    SCOPED_TRACE("a = " + std::to_string(a));
    cv::Mat noise(300, 320, CV_64FC1);
    rng.fill(noise, cv::RNG::NORMAL, 0.0, 1.0);
    cv::Mat smooth;
    cv::GaussianBlur(noise, smooth, cv::Size(0, 0), a, a, cv::BORDER_REFLECT);
    // A disk of samples, NaN outside, as a residual map.
    for (int y = 0; y < smooth.rows; ++y) {
      for (int x = 0; x < smooth.cols; ++x) {
        if (std::hypot(x - 160.0, y - 150.0) > 140.0) {
          smooth.at<double>(y, x) = std::numeric_limits<double>::quiet_NaN();
        }
      }
    }
    const CorrelationArea area = MeasureCorrelationArea(smooth);
    const double expected = 4.0 * std::numbers::pi * a * a;
    EXPECT_NEAR(area.area_cells, expected, 0.15 * expected);
  }
}

TEST(CorrelationArea, WhiteNoiseIsUncorrelated) {
  cv::RNG rng(77);
  cv::Mat noise(200, 200, CV_32FC1);
  rng.fill(noise, cv::RNG::NORMAL, 0.0, 1.0);
  const CorrelationArea area = MeasureCorrelationArea(noise);
  EXPECT_LT(std::abs(area.rho1), 0.05);
  // rho_1 within +-0.05 of 0: area under pi / -ln(0.05) = 1.05 cells.
  EXPECT_LT(area.area_cells, 1.1);
  EXPECT_EQ(area.samples, 200 * 200);
}

TEST(CorrelationArea, DegenerateFields) {
  EXPECT_EQ(MeasureCorrelationArea(cv::Mat(10, 10, CV_32FC1, cv::Scalar(3.0)))
                .area_cells,
            0.0);
  cv::Mat one(5, 5, CV_64FC1,
              cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  one.at<double>(2, 2) = 1.0;
  EXPECT_EQ(MeasureCorrelationArea(one).area_cells, 0.0);
}

}  // namespace
}  // namespace figura
