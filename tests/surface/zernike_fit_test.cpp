// Zernike least-squares fit: exact recovery, uncertainty coverage, agreement
// with numpy.linalg.lstsq (Debian python3-numpy, test-only, run with
// /usr/bin/python3 on an independently written ISO 24157 basis), and the
// error cases.
#include "surface/zernike_fit.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <opencv2/imgproc.hpp>
#include <random>
#include <string>
#include <vector>

#include "surface/zernike.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

// Coefficients in metres (tens of nm), fixed seed.
std::vector<double> RandomCoefficients(int max_order, unsigned seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> u(-50e-9, 50e-9);
  std::vector<double> c(static_cast<std::size_t>(ZernikeCount(max_order)));
  for (double& v : c) v = u(rng);
  return c;
}

double Norm(const std::vector<double>& c) {
  double s = 0.0;
  for (const double v : c) s += v * v;
  return std::sqrt(s);
}

// Random points in the unit disk with heights from `c` (recurrence basis)
// plus Gaussian noise of `sigma`.
std::vector<SurfaceSample> DiskSamples(const std::vector<double>& c, int count,
                                       double sigma, unsigned seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  std::normal_distribution<double> noise(0.0, 1.0);
  const ZernikeBasis basis(static_cast<int>(c.size()));
  std::vector<SurfaceSample> s;
  while (static_cast<int>(s.size()) < count) {
    const double x = u(rng);
    const double y = u(rng);
    if (x * x + y * y > 1.0) continue;
    s.push_back({x, y, basis.Sum(c, x, y) + sigma * noise(rng), 1.0});
  }
  return s;
}

TEST(ZernikeFit, OptionsCheck) {
  EXPECT_EQ(ZernikeFitOptions{}.Check(), "");
  EXPECT_NE(ZernikeFitOptions{.max_order = 0}.Check(), "");
  EXPECT_NE(ZernikeFitOptions{.max_order = 13}.Check(), "");
  EXPECT_NE((ZernikeFitOptions{.max_order = 8, .max_samples = 100}.Check()),
            "");
}

// Noise-free heights from a known expansion are recovered to rounding: the
// map is evaluated by the Cartesian expansion (ZernikePolynomial), the fit
// uses the radial recurrence (ZernikeBasis): two independent evaluations.
TEST(ZernikeFit, GridRecoversKnownCoefficientsExactly) {
  const std::vector<double> truth = RandomCoefficients(8, 11);
  const Circle aperture{{150.0, 140.0}, 130.0};
  const cv::Mat map = EvaluateZernikeGrid(truth, aperture, cv::Size(301, 281));
  const ZernikeFitResult fit = FitZernikeGrid(map, aperture, {});
  ASSERT_EQ(fit.status, Status::kOk);
  ASSERT_EQ(fit.coefficients_m.size(), truth.size());
  EXPECT_EQ(fit.stride, 1);
  // Float map: heights carry ~6e-8 relative rounding, hence the tolerance
  // is set by float precision, not by the fit.
  for (std::size_t j = 0; j < truth.size(); ++j) {
    EXPECT_NEAR(fit.coefficients_m[j], truth[j], 1e-6 * Norm(truth)) << j;
  }
  // The same in double: 1e-9 relative.
  cv::Mat map64;
  map.convertTo(map64, CV_64F);
  std::vector<double> row;
  const ZernikePolynomial p(truth);
  for (int y = 0; y < map64.rows; ++y) {
    for (int x = 0; x < map64.cols; ++x) {
      const cv::Point2d s = SurfacePoint(aperture, x, y);
      map64.at<double>(y, x) = p(s.x, s.y);
    }
  }
  const ZernikeFitResult exact = FitZernikeGrid(map64, aperture, {});
  ASSERT_EQ(exact.status, Status::kOk);
  for (std::size_t j = 0; j < truth.size(); ++j) {
    EXPECT_NEAR(exact.coefficients_m[j], truth[j], 1e-9 * Norm(truth)) << j;
  }
  EXPECT_LT(exact.residual_rms_m, 1e-12 * Norm(truth));
}

// Surface y is up: heights growing towards the top rows are +Z_1 (2 y).
TEST(ZernikeFit, GridFlipsYToSurfaceCoordinates) {
  const Circle aperture{{50.0, 50.0}, 40.0};
  cv::Mat map(101, 101, CV_32FC1);
  for (int y = 0; y < map.rows; ++y) {
    for (int x = 0; x < map.cols; ++x) {
      map.at<float>(y, x) = static_cast<float>(10e-9 * 2.0 * (50.0 - y) / 40.0 +
                                               3e-9 * 2.0 * (x - 50.0) / 40.0);
    }
  }
  const ZernikeFitResult fit = FitZernikeGrid(map, aperture, {.max_order = 2});
  ASSERT_EQ(fit.status, Status::kOk);
  EXPECT_NEAR(fit.coefficients_m[1], 10e-9, 1e-14);
  EXPECT_NEAR(fit.coefficients_m[2], 3e-9, 1e-14);
}

// Pixels outside the aperture and NaN pixels are not used.
TEST(ZernikeFit, GridIgnoresNanAndOutside) {
  const std::vector<double> truth = RandomCoefficients(4, 5);
  const Circle aperture{{100.0, 100.0}, 80.0};
  cv::Mat map = EvaluateZernikeGrid(truth, aperture, cv::Size(201, 201));
  for (int y = 0; y < map.rows; ++y) {
    for (int x = 0; x < map.cols; ++x) {
      const cv::Point2d s = SurfacePoint(aperture, x, y);
      const double r2 = s.x * s.x + s.y * s.y;
      if (r2 > 1.0) map.at<float>(y, x) = 1.0f;  // garbage outside
      if ((x / 10 + y / 10) % 7 == 0) {
        map.at<float>(y, x) = std::numeric_limits<float>::quiet_NaN();
      }
    }
  }
  const ZernikeFitResult fit = FitZernikeGrid(map, aperture, {.max_order = 4});
  ASSERT_EQ(fit.status, Status::kOk);
  for (std::size_t j = 0; j < truth.size(); ++j) {
    EXPECT_NEAR(fit.coefficients_m[j], truth[j], 1e-6 * Norm(truth)) << j;
  }
}

// A 12 MP map is subsampled on a regular stride to <= max_samples and stays
// exact for a smooth surface; prints the time.
TEST(ZernikeFit, LargeGridSubsampledWithinCap) {
  const std::vector<double> truth = RandomCoefficients(8, 21);
  const Circle aperture{{2000.0, 1500.0}, 1450.0};
  const cv::Mat map =
      EvaluateZernikeGrid(truth, aperture, cv::Size(4000, 3000));
  const auto t0 = std::chrono::steady_clock::now();
  const ZernikeFitResult fit = FitZernikeGrid(map, aperture, {});
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - t0)
          .count();
  std::printf("12 MP grid fit: %.3f s, stride %d, %ld samples\n", seconds,
              fit.stride, fit.samples);
  ASSERT_EQ(fit.status, Status::kOk);
  EXPECT_LE(fit.samples, 400000);
  EXPECT_GT(fit.samples, 200000);
  EXPECT_EQ(fit.stride, 5);  // 6.6 M valid pixels / 4^2 = 413 k > cap
  ASSERT_FALSE(fit.messages.empty());
  for (std::size_t j = 0; j < truth.size(); ++j) {
    EXPECT_NEAR(fit.coefficients_m[j], truth[j], 1e-6 * Norm(truth)) << j;
  }
}

// With independent Gaussian noise the reported u covers the error as a
// normal standard uncertainty should: ~68 % within 1 u, ~95 % within 2 u
// [practice: coverage of ordinary least-squares standard errors].
TEST(ZernikeFit, UncertaintyCoverageOverSeeds) {
  const std::vector<double> truth = RandomCoefficients(6, 3);
  const double sigma = 5e-9;
  int within1 = 0;
  int within2 = 0;
  int total = 0;
  double sigma_ratio = 0.0;
  constexpr int kSeeds = 60;
  for (int seed = 0; seed < kSeeds; ++seed) {
    const auto samples =
        DiskSamples(truth, 600, sigma, 1000 + static_cast<unsigned>(seed));
    const ZernikeFitResult fit = FitZernike(samples, {.max_order = 6});
    ASSERT_EQ(fit.status, Status::kOk);
    sigma_ratio += fit.residual_rms_m / sigma / kSeeds;
    for (std::size_t j = 0; j < truth.size(); ++j) {
      const double z = std::abs(fit.coefficients_m[j] - truth[j]) / fit.u_m[j];
      within1 += z < 1.0 ? 1 : 0;
      within2 += z < 2.0 ? 1 : 0;
      ++total;
    }
  }
  const double f1 = static_cast<double>(within1) / total;
  const double f2 = static_cast<double>(within2) / total;
  std::printf("coverage: %.3f within 1u, %.3f within 2u (%d)\n", f1, f2, total);
  EXPECT_NEAR(f1, 0.683, 0.04);
  EXPECT_NEAR(f2, 0.954, 0.02);
  // Residual RMS ~ sigma sqrt((N - P) / N).
  EXPECT_NEAR(sigma_ratio, std::sqrt((600.0 - 28.0) / 600.0), 0.02);
}

// A map whose noise is correlated over several pixels (white noise
// smoothed by a Gaussian of a = 3 px; its autocorrelation is a Gaussian of
// 1/e area 4 pi a^2 = 113 px^2 [textbook: white noise through a Gaussian
// filter, memory]): the grid fit's u(c) must match the scatter of the
// coefficients over repeated noise draws (Monte Carlo, fixed seed), where
// the independent-pixel u is about sqrt(113) ~ 11 times too small.
TEST(ZernikeFit, GridUncertaintyMatchesMonteCarloForCorrelatedNoise) {
  constexpr int kSize = 200;
  constexpr int kDraws = 60;
  const Circle aperture{{99.5, 99.5}, 90.0};
  const std::vector<double> truth = RandomCoefficients(4, 11);
  const cv::Mat surface =
      EvaluateZernikeGrid(truth, aperture, cv::Size(kSize, kSize));
  cv::RNG rng(8080);
  std::vector<double> sum(truth.size(), 0.0);
  std::vector<double> sum2(truth.size(), 0.0);
  std::vector<double> u2(truth.size(), 0.0);
  double inflation = 0.0;
  for (int d = 0; d < kDraws; ++d) {
    cv::Mat noise(kSize, kSize, CV_32FC1);
    rng.fill(noise, cv::RNG::NORMAL, 0.0, 1.0);
    cv::GaussianBlur(noise, noise, cv::Size(0, 0), 3.0, 3.0,
                     cv::BORDER_REFLECT);
    const cv::Mat map = surface + noise * 10e-9;
    const ZernikeFitResult fit =
        FitZernikeGrid(map, aperture, {.max_order = 4});
    ASSERT_EQ(fit.status, Status::kOk);
    inflation += fit.covariance_inflation / kDraws;
    for (std::size_t j = 0; j < truth.size(); ++j) {
      const double e = fit.coefficients_m[j] - truth[j];
      sum[j] += e;
      sum2[j] += e * e;
      u2[j] += fit.u_m[j] * fit.u_m[j] / kDraws;
    }
  }
  // Piston is excluded: the mean of a field is set by its lowest
  // frequencies, where a smoothed-noise draw of this size has few samples.
  double log_ratio = 0.0;
  for (std::size_t j = 1; j < truth.size(); ++j) {
    const double mean = sum[j] / kDraws;
    const double sd = std::sqrt(sum2[j] / kDraws - mean * mean);
    const double ratio = std::sqrt(u2[j]) / sd;
    std::printf("j %zu: u / Monte Carlo sd %.2f\n", j, ratio);
    EXPECT_GT(ratio, 0.6) << j;
    EXPECT_LT(ratio, 1.6) << j;
    log_ratio += std::log(ratio) / static_cast<double>(truth.size() - 1);
  }
  std::printf("covariance inflation %.1f, geometric mean u / sd %.2f\n",
              inflation, std::exp(log_ratio));
  EXPECT_NEAR(std::exp(log_ratio), 1.0, 0.25);
  EXPECT_GT(inflation, 50.0);
}

// White noise: the residuals are uncorrelated and the grid fit keeps the
// independent-sample covariance (inflation near 1).
TEST(ZernikeFit, GridWithWhiteNoiseIsNotInflated) {
  const Circle aperture{{99.5, 99.5}, 90.0};
  const cv::Mat surface = EvaluateZernikeGrid(RandomCoefficients(4, 12),
                                              aperture, cv::Size(200, 200));
  cv::Mat noise(200, 200, CV_32FC1);
  cv::RNG(99).fill(noise, cv::RNG::NORMAL, 0.0, 5e-9);
  const ZernikeFitResult fit =
      FitZernikeGrid(surface + noise, aperture, {.max_order = 4});
  ASSERT_EQ(fit.status, Status::kOk);
  EXPECT_LT(fit.covariance_inflation, 1.2);
  EXPECT_GT(fit.effective_samples, 0.8 * static_cast<double>(fit.samples));
}

// Weights: a sample with a huge weight is fitted (nearly) exactly.
TEST(ZernikeFit, WeightsPullTheFit) {
  const std::vector<double> truth = RandomCoefficients(2, 8);
  auto samples = DiskSamples(truth, 200, 2e-9, 77);
  samples[0].height_m += 100e-9;
  samples[0].weight = 1e9;
  const ZernikeFitResult fit = FitZernike(samples, {.max_order = 2});
  ASSERT_EQ(fit.status, Status::kOk);
  const ZernikeBasis basis(static_cast<int>(fit.coefficients_m.size()));
  EXPECT_NEAR(basis.Sum(fit.coefficients_m, samples[0].x, samples[0].y),
              samples[0].height_m, 1e-10);
}

TEST(ZernikeFit, TooFewSamples) {
  const auto samples = DiskSamples(RandomCoefficients(8, 1), 100, 0.0, 9);
  const ZernikeFitResult fit = FitZernike(samples, {});
  EXPECT_EQ(fit.status, Status::kError);
  ASSERT_EQ(fit.messages.size(), 1u);
  EXPECT_NE(fit.messages[0].find("too few samples"), std::string::npos);
  EXPECT_NE(fit.messages[0].find("135"), std::string::npos);  // 3 x 45
  EXPECT_TRUE(fit.coefficients_m.empty());
}

TEST(ZernikeFit, SamplesAlongALineAreSingular) {
  std::vector<SurfaceSample> line;
  line.reserve(500);
  for (int i = 0; i < 500; ++i) {
    line.push_back({-1.0 + i / 250.0, 0.0, 1e-9 * i, 1.0});
  }
  const ZernikeFitResult fit = FitZernike(line, {.max_order = 3});
  EXPECT_EQ(fit.status, Status::kError);
  ASSERT_EQ(fit.messages.size(), 1u);
  EXPECT_NE(fit.messages[0].find("singular"), std::string::npos)
      << fit.messages[0];
  // Same through the grid: a map valid on one row only.
  cv::Mat map(101, 101, CV_32FC1,
              cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  map.row(50).setTo(1e-8);
  const ZernikeFitResult grid =
      FitZernikeGrid(map, {{50.0, 50.0}, 45.0}, {.max_order = 3});
  EXPECT_EQ(grid.status, Status::kError);
}

TEST(ZernikeFit, BadSamplesAndOptions) {
  auto samples = DiskSamples(RandomCoefficients(2, 1), 100, 0.0, 4);
  samples[3].weight = 0.0;
  EXPECT_EQ(FitZernike(samples, {.max_order = 2}).status, Status::kError);
  samples[3].weight = 1.0;
  samples[5].height_m = std::nan("");
  EXPECT_EQ(FitZernike(samples, {.max_order = 2}).status, Status::kError);
  samples[5].height_m = 0.0;
  const ZernikeFitResult bad = FitZernike(samples, {.max_order = 20});
  EXPECT_EQ(bad.status, Status::kError);
  EXPECT_NE(bad.messages.at(0).find("order"), std::string::npos);
}

// numpy.linalg.lstsq on the same weighted samples with an ISO 24157 basis
// written independently in Python (explicit factorial form of R_n^m, Born &
// Wolf sec. 9.2.1; normalisation sqrt(2(n+1)/(1+delta_m0)), ISO 24157):
// same coefficients and the same standard errors sigma^2 (A^T W A)^-1.
TEST(ZernikeFit, AgreesWithNumpyLstsq) {
  if (!fs::exists("/usr/bin/python3")) GTEST_SKIP() << "no /usr/bin/python3";
  const fs::path dir = fs::path(FIGURA_TEST_TMP) / "surface" /
                       ("numpy-" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  std::vector<SurfaceSample> samples =
      DiskSamples(RandomCoefficients(5, 31), 700, 3e-9, 32);
  std::mt19937 rng(33);
  std::uniform_real_distribution<double> w(0.5, 2.0);
  for (SurfaceSample& s : samples) s.weight = w(rng);
  {
    std::ofstream out(dir / "samples.txt");
    out.precision(17);
    for (const SurfaceSample& s : samples) {
      out << s.x << ' ' << s.y << ' ' << s.height_m << ' ' << s.weight << '\n';
    }
  }
  {
    std::ofstream py(dir / "fit.py");
    py << R"PY(import sys, math
try:
    import numpy as np
except ImportError:
    sys.exit(77)
d = sys.argv[1]
x, y, h, w = np.loadtxt(d + '/samples.txt', unpack=True)
N = 5
rho = np.hypot(x, y); th = np.arctan2(y, x)
cols = []
for n in range(N + 1):
    for m in range(-n, n + 1, 2):
        am = abs(m)
        R = sum((-1)**s * math.factorial(n - s) /
                (math.factorial(s) * math.factorial((n + am)//2 - s) *
                 math.factorial((n - am)//2 - s)) * rho**(n - 2*s)
                for s in range((n - am)//2 + 1))
        norm = math.sqrt(2*(n + 1) / (1 + (m == 0)))
        cols.append(norm * R * (np.cos(m*th) if m >= 0 else -np.sin(m*th)))
A = np.stack(cols, axis=1)
sw = np.sqrt(w)
c, res, rank, sv = np.linalg.lstsq(A * sw[:, None], h * sw, rcond=None)
r = h - A @ c
s2 = np.sum(w * r * r) / (len(h) - A.shape[1])
u = np.sqrt(np.diag(s2 * np.linalg.inv((A * w[:, None]).T @ A)))
np.savetxt(d + '/numpy.txt', np.stack([c, u], axis=1), fmt='%.17g')
)PY";
  }
  const std::string cmd = "/usr/bin/python3 '" + (dir / "fit.py").string() +
                          "' '" + dir.string() + "'";
  const int rc = std::system(cmd.c_str());
  if (WIFEXITED(rc) && WEXITSTATUS(rc) == 77) GTEST_SKIP() << "no numpy";
  ASSERT_EQ(rc, 0);
  const ZernikeFitResult fit = FitZernike(samples, {.max_order = 5});
  ASSERT_EQ(fit.status, Status::kOk);
  std::ifstream in(dir / "numpy.txt");
  for (std::size_t j = 0; j < fit.coefficients_m.size(); ++j) {
    double c = 0.0;
    double u = 0.0;
    ASSERT_TRUE(in >> c >> u) << j;
    EXPECT_NEAR(fit.coefficients_m[j], c, 1e-9 * Norm(fit.coefficients_m)) << j;
    EXPECT_NEAR(fit.u_m[j], u, 1e-6 * u) << j;
  }
  fs::remove_all(dir);
}

}  // namespace
}  // namespace figura
