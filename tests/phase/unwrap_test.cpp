// Tests of UnwrapPhase (Herraez et al., Appl. Opt. 41(35) 7437, 2002)
// against scikit-image's implementation of the same algorithm
// (skimage.restoration.unwrap_phase, Debian python3-skimage, run test-only
// with /usr/bin/python3) and against the check in its docstring.
#include "phase/unwrap.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <numbers>
#include <opencv2/imgproc.hpp>
#include <random>
#include <string>
#include <vector>

#include "core/error.h"

namespace figura {
namespace {

namespace fs = std::filesystem;
constexpr double kPi = std::numbers::pi;

cv::Mat WrapAll(const cv::Mat& phase) {
  cv::Mat out(phase.size(), CV_32FC1);
  for (int y = 0; y < phase.rows; ++y) {
    for (int x = 0; x < phase.cols; ++x) {
      out.at<float>(y, x) =
          static_cast<float>(WrapPhase(phase.at<double>(y, x)));
    }
  }
  return out;
}

// Statistics of (unwrapped - truth) over the mask: mean and standard
// deviation (double), and the largest deviation from the mean.
struct DiffStats {
  double mean = 0, sd = 0, max_dev = 0;
  long n = 0;
};
DiffStats Compare(const cv::Mat& unwrapped, const cv::Mat& truth_double,
                  const cv::Mat& mask) {
  DiffStats s;
  double sum = 0, sum2 = 0;
  std::vector<double> d;
  for (int y = 0; y < unwrapped.rows; ++y) {
    for (int x = 0; x < unwrapped.cols; ++x) {
      if (!mask.empty() && mask.at<uint8_t>(y, x) == 0) continue;
      const double v = static_cast<double>(unwrapped.at<float>(y, x)) -
                       truth_double.at<double>(y, x);
      d.push_back(v);
      sum += v;
      sum2 += v * v;
    }
  }
  s.n = static_cast<long>(d.size());
  s.mean = sum / static_cast<double>(s.n);
  s.sd = std::sqrt(
      std::max(0.0, sum2 / static_cast<double>(s.n) - s.mean * s.mean));
  for (const double v : d)
    s.max_dev = std::max(s.max_dev, std::fabs(v - s.mean));
  return s;
}

// A smooth random phase: tilt plus Gaussian bumps, tens of radians (fixed
// seed).
cv::Mat SmoothPhase(int rows, int cols, unsigned seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  cv::Mat p(rows, cols, CV_64FC1);
  struct Bump {
    double x, y, s, a;
  };
  std::vector<Bump> bumps;
  bumps.reserve(6);
  for (int i = 0; i < 6; ++i) {
    bumps.push_back({u(rng) * cols, u(rng) * rows, (0.1 + 0.2 * u(rng)) * cols,
                     (u(rng) - 0.5) * 40.0});
  }
  for (int y = 0; y < rows; ++y) {
    for (int x = 0; x < cols; ++x) {
      double v = 0.15 * x - 0.07 * y;
      for (const Bump& b : bumps) {
        v += b.a * std::exp(-((x - b.x) * (x - b.x) + (y - b.y) * (y - b.y)) /
                            (2 * b.s * b.s));
      }
      p.at<double>(y, x) = v;
    }
  }
  return p;
}

// Runs a script with Debian's /usr/bin/python3 (numpy, skimage from
// Debian packages; not the interpreter on PATH). Returns the exit status.
int RunPython(const fs::path& script) {
  const std::string cmd = "/usr/bin/python3 '" + script.string() + "'";
  return std::system(cmd.c_str());  // NOLINT(cert-env33-c): test-only reference
}

fs::path Scratch(const std::string& name) {
  fs::path dir = fs::path(FIGURA_TEST_TMP) / "phase" /
                 (name + "-" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

template <typename T>
void WriteRaw(const fs::path& path, const cv::Mat& m) {
  std::ofstream out(path, std::ios::binary);
  for (int y = 0; y < m.rows; ++y) {
    out.write(reinterpret_cast<const char*>(m.ptr<T>(y)),
              static_cast<std::streamsize>(sizeof(T) *
                                           static_cast<std::size_t>(m.cols)));
  }
}

// The check in skimage.restoration.unwrap_phase's docstring (scikit-image
// 0.19, /usr/lib/python3/dist-packages/skimage/restoration/unwrap.py):
// 12 pi exp(-(x^2 + y^2)) on np.ogrid[-1:1:128j, -1:1:128j], wrapped with
// np.angle(np.exp(1j * image)), unwrapped: np.std(unwrapped - image) < 1e-6.
TEST(UnwrapPhase, ReproducesTheSkimageDocstringCheck) {
  const int n = 128;
  cv::Mat truth(n, n, CV_64FC1);
  for (int i = 0; i < n; ++i) {
    for (int j = 0; j < n; ++j) {
      const double c0 = -1.0 + 2.0 * i / (n - 1);
      const double c1 = -1.0 + 2.0 * j / (n - 1);
      truth.at<double>(i, j) = 12.0 * kPi * std::exp(-(c0 * c0 + c1 * c1));
    }
  }
  const UnwrapResult r = UnwrapPhase(WrapAll(truth), cv::Mat());
  EXPECT_EQ(r.regions, 1);
  const DiffStats s = Compare(r.phase, truth, cv::Mat());
  // Our output is 32-bit float: values up to 12 pi carry rounding of about
  // 1e-6 (half an ulp at 32..64 is 1.9e-6); the docstring's 1e-6 bound is
  // for float64. The 2 pi multiples must be exact, so every pixel is within
  // rounding of the constant.
  EXPECT_LT(s.sd, 1.5e-6) << "skimage docstring check: std(unwrapped - image)";
  EXPECT_LT(s.max_dev, 1e-5);
  // A constant offset is normal; here it is a multiple of 2 pi.
  EXPECT_NEAR(s.mean / (2 * kPi), std::round(s.mean / (2 * kPi)), 1e-6);
  EXPECT_EQ(r.unreliable_fraction, 0.0);
}

// The same wrapped phase, with a mask holding a hole, unwrapped by
// skimage.restoration.unwrap_phase (masked array): equal up to a constant
// 2 pi k.
TEST(UnwrapPhase, MatchesSkimageOnAMaskedNoisyPhase) {
  ASSERT_TRUE(fs::exists("/usr/bin/python3"))
      << "Debian python3 (with python3-skimage) is needed";
  const int rows = 180;
  const int cols = 240;
  const cv::Mat truth = SmoothPhase(rows, cols, 7);
  std::mt19937 rng(11);
  std::normal_distribution<double> noise(0.0, 0.25);
  cv::Mat noisy = truth.clone();
  for (auto it = noisy.begin<double>(); it != noisy.end<double>(); ++it)
    *it += noise(rng);
  const cv::Mat wrapped = WrapAll(noisy);
  cv::Mat mask = cv::Mat::zeros(rows, cols, CV_8UC1);
  cv::circle(mask, {120, 90}, 85, cv::Scalar(255), cv::FILLED);
  cv::rectangle(mask, cv::Rect(100, 60, 30, 20), cv::Scalar(0),
                cv::FILLED);  // a defect

  const fs::path dir = Scratch("skimage_compare");
  WriteRaw<float>(dir / "wrapped.f32", wrapped);
  WriteRaw<uint8_t>(dir / "mask.u8", mask);
  {
    std::ofstream py(dir / "ref.py");
    py << "import numpy as np\n"
          "from skimage.restoration import unwrap_phase\n"
          "d = '"
       << dir.string()
       << "/'\n"
          "w = np.fromfile(d + 'wrapped.f32', dtype=np.float32).reshape("
       << rows << ", " << cols
       << ").astype(np.float64)\n"
          "m = np.fromfile(d + 'mask.u8', dtype=np.uint8).reshape("
       << rows << ", " << cols
       << ")\n"
          "u = unwrap_phase(np.ma.masked_array(w, m == 0), seed=0)\n"
          "u.filled(np.nan).astype(np.float64).tofile(d + 'skimage.f64')\n";
  }
  ASSERT_EQ(RunPython(dir / "ref.py"), 0) << "python3-skimage reference failed";
  cv::Mat ref(rows, cols, CV_64FC1);
  {
    std::ifstream in(dir / "skimage.f64", std::ios::binary);
    in.read(reinterpret_cast<char*>(ref.ptr<double>(0)),
            static_cast<std::streamsize>(
                sizeof(double) * static_cast<std::size_t>(rows * cols)));
    ASSERT_TRUE(in.good());
  }
  const UnwrapResult r = UnwrapPhase(wrapped, mask);
  EXPECT_EQ(r.regions, 1);
  const DiffStats s = Compare(r.phase, ref, mask);
  EXPECT_GT(s.n, 15000);
  // skimage reference: equal up to a constant 2 pi k (1e-4 rad).
  EXPECT_LT(s.max_dev, 1e-4) << "differs from skimage.restoration.unwrap_phase";
  EXPECT_NEAR(s.mean / (2 * kPi), std::round(s.mean / (2 * kPi)), 1e-4);
  // And against the noise-free truth: the noise is all that is left.
  const DiffStats t = Compare(r.phase, truth, mask);
  EXPECT_LT(t.sd, 0.3);
  for (int y = 0; y < rows; ++y) {
    for (int x = 0; x < cols; ++x) {
      if (mask.at<uint8_t>(y, x) == 0) {
        ASSERT_TRUE(std::isnan(r.phase.at<float>(y, x)));
      }
    }
  }
  fs::remove_all(dir);
}

// Values outside the mask (here wild noise) must not change the result
// [practice: masked unwrapping uses only valid neighbours].
TEST(UnwrapPhase, IgnoresValuesOutsideTheMask) {
  const cv::Mat truth = SmoothPhase(120, 160, 3);
  cv::Mat wrapped = WrapAll(truth);
  cv::Mat mask = cv::Mat::zeros(wrapped.size(), CV_8UC1);
  cv::ellipse(mask, {80, 60}, {70, 50}, 20.0, 0.0, 360.0, cv::Scalar(255),
              cv::FILLED);
  std::mt19937 rng(5);
  std::uniform_real_distribution<float> u(-3.0F, 3.0F);
  cv::Mat garbage = wrapped.clone();
  for (int y = 0; y < garbage.rows; ++y) {
    for (int x = 0; x < garbage.cols; ++x) {
      if (mask.at<uint8_t>(y, x) == 0) garbage.at<float>(y, x) = u(rng);
    }
  }
  garbage.at<float>(0, 0) = std::numeric_limits<float>::quiet_NaN();
  const UnwrapResult a = UnwrapPhase(wrapped, mask);
  const UnwrapResult b = UnwrapPhase(garbage, mask);
  const DiffStats s = Compare(a.phase, truth, mask);
  EXPECT_LT(s.max_dev, 1e-5);
  cv::Mat diff;
  cv::absdiff(a.phase, b.phase, diff);
  double worst = 0;
  cv::minMaxLoc(diff, nullptr, &worst, nullptr, nullptr, mask);
  EXPECT_EQ(worst, 0.0);
  EXPECT_EQ(a.unreliable_fraction, 0.0);
}

// Two disconnected pieces are unwrapped separately, each correct up to its
// own constant, and counted.
TEST(UnwrapPhase, UnwrapsTwoDisconnectedRegionsSeparately) {
  const cv::Mat truth = SmoothPhase(100, 200, 9);
  cv::Mat mask = cv::Mat::zeros(truth.size(), CV_8UC1);
  cv::circle(mask, {50, 50}, 40, cv::Scalar(255), cv::FILLED);
  cv::circle(mask, {150, 50}, 40, cv::Scalar(255), cv::FILLED);
  const UnwrapResult r = UnwrapPhase(WrapAll(truth), mask);
  EXPECT_EQ(r.regions, 2);
  for (const int cx : {50, 150}) {
    cv::Mat one = cv::Mat::zeros(truth.size(), CV_8UC1);
    cv::circle(one, {cx, 50}, 40, cv::Scalar(255), cv::FILLED);
    const DiffStats s = Compare(r.phase, truth, one);
    EXPECT_LT(s.max_dev, 1e-5) << "region at x = " << cx;
    EXPECT_NEAR(s.mean / (2 * kPi), std::round(s.mean / (2 * kPi)), 1e-5);
    // Each region's constant puts its mean in [-pi, pi).
    double sum = 0;
    long cnt = 0;
    for (int y = 0; y < one.rows; ++y) {
      for (int x = 0; x < one.cols; ++x) {
        if (one.at<uint8_t>(y, x) != 0) {
          sum += static_cast<double>(r.phase.at<float>(y, x));
          ++cnt;
        }
      }
    }
    EXPECT_GE(sum / static_cast<double>(cnt), -kPi - 1e-9);
    EXPECT_LT(sum / static_cast<double>(cnt), kPi + 1e-9);
  }
}

// A phase vortex (a residue, Goldstein, Zebker & Werner, Radio Sci. 23(4)
// 713, 1988 [memory]) cannot be unwrapped consistently: the pixels around it
// are flagged, a clean phase has none.
TEST(UnwrapPhase, FlagsResidues) {
  cv::Mat phase(64, 64, CV_64FC1);
  for (int y = 0; y < 64; ++y) {
    for (int x = 0; x < 64; ++x) {
      phase.at<double>(y, x) = std::atan2(y - 31.5, x - 20.5) + 0.05 * x;
    }
  }
  const UnwrapResult r = UnwrapPhase(WrapAll(phase), cv::Mat());
  EXPECT_GT(r.unreliable_fraction, 0.0);
  EXPECT_LT(r.unreliable_fraction, 0.05);
  EXPECT_EQ(r.unreliable.at<uint8_t>(31, 20), 255);
  EXPECT_EQ(r.unreliable.at<uint8_t>(5, 60), 0);
}

TEST(UnwrapPhase, RejectsBadInput) {
  EXPECT_THROW(UnwrapPhase(cv::Mat(), cv::Mat()), InputError);
  EXPECT_THROW(UnwrapPhase(cv::Mat::zeros(4, 4, CV_64FC1), cv::Mat()),
               InputError);
  EXPECT_THROW(UnwrapPhase(cv::Mat::zeros(4, 4, CV_32FC1),
                           cv::Mat::zeros(5, 4, CV_8UC1)),
               InputError);
  const UnwrapResult empty = UnwrapPhase(cv::Mat::zeros(4, 4, CV_32FC1),
                                         cv::Mat::zeros(4, 4, CV_8UC1));
  EXPECT_EQ(empty.regions, 0);
}

}  // namespace
}  // namespace figura
