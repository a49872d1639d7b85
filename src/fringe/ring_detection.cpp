#include "fringe/ring_detection.h"

#include <Eigen/Dense>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdarg>
#include <cstdio>
#include <ctime>
#include <limits>
#include <mutex>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <string>
#include <vector>

#include "fringe/aperture.h"
#include "fringe/extremum.h"
#include "fringe/illumination.h"
#include "fringe/radial_profile.h"
#include "fringe/ring_centre.h"

namespace figura {

std::string RingDetectionOptions::Check() const {
  if (aperture_centre_px.has_value() != aperture_diameter_px.has_value()) {
    return "the aperture needs both a centre and a diameter, or neither";
  }
  if (aperture_centre_px && (!std::isfinite(aperture_centre_px->x) ||
                             !std::isfinite(aperture_centre_px->y))) {
    return "the aperture centre must be finite";
  }
  if (aperture_diameter_px &&
      !(*aperture_diameter_px > 0.0 && std::isfinite(*aperture_diameter_px))) {
    return "the aperture diameter must be a positive number of pixels";
  }
  if (!(aperture_fraction > 0.0 && aperture_fraction <= 1.0)) {
    return "the aperture fraction must lie in (0, 1]";
  }
  if (sectors < 4 || sectors > 720)
    return "the number of sectors must lie between 4 and 720";
  if (full_scale && !(std::isfinite(*full_scale) && *full_scale > 0.0)) {
    return "the full-scale value must be a positive number";
  }
  return {};
}

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
// Bins per fringe period in the sector profiles.
constexpr int kBinsPerPeriod = 24;
// Largest working size for the coarse steps (aperture, gradient centre).
constexpr int kWorkingSize = 640;
// Pixels kept (at least) by the period estimate: pixel-rich photographs use
// every n-th row there, n = inside / this (the 12 MP benchmark photo has
// ~5.4 M pixels inside: every 4th row).
constexpr int kCoarsePixels = 1200000;
// Largest distance (pixels) between the sharpest centre and the circles'
// centre at which the sector points about the sharpest centre are kept.
constexpr double kRecentrePx = 0.25;
// Pixels used in the sharpness refinement at most.
constexpr double kRefinementSamples = 400000.0;

// printf-style formatting of a message.
__attribute__((format(printf, 1, 2))) std::string Format(const char* format,
                                                         ...) {
  char buffer[512];
  va_list arguments;
  va_start(arguments, format);
  std::vsnprintf(buffer, sizeof buffer, format, arguments);
  va_end(arguments);
  return buffer;
}

bool InsideImage(cv::Point2d p, const cv::Mat& image) {
  return p.x >= -0.5 && p.y >= -0.5 && p.x <= image.cols - 0.5 &&
         p.y <= image.rows - 0.5;
}

// Positions of numbered extrema of one profile.
struct Located {
  int index = 0;
  double position = 0.0;
  double sigma = 0.0;
};

// Locates the extrema of the azimuthal-mean profile expected at
// s0 + i P / 2 and returns them.
std::vector<Located> LocateMeanExtrema(const R2Profile& profile, double s0,
                                       double period) {
  std::vector<Located> out;
  if (profile.r2.empty()) return out;
  const double lo = profile.r2.front();
  const double hi = profile.r2.back();
  const double half = 0.5 * period;
  const int i_first = static_cast<int>(std::ceil((lo + half - s0) / half));
  const int i_last = static_cast<int>(std::floor((hi - half - s0) / half));
  for (int i = i_first; i <= i_last; ++i) {
    const double expected = s0 + i * half;
    const bool dark = (i % 2) == 0;
    const ExtremumFit fit = FitCosineExtremum(
        profile.r2, profile.value, profile.weight, expected, period, dark);
    if (!fit.ok || std::abs(fit.position - expected) > 0.25 * period) continue;
    if (!(fit.sigma > 0.0) || fit.sigma > 0.125 * period) continue;
    out.push_back({i, fit.position, fit.sigma});
  }
  return out;
}

// Weighted straight-line fit position = s0 + i * half; returns false with
// fewer than 3 points.
bool FitLadder(const std::vector<Located>& located, double& s0, double& half) {
  if (located.size() < 3) return false;
  Eigen::Matrix2d normal = Eigen::Matrix2d::Zero();
  Eigen::Vector2d rhs = Eigen::Vector2d::Zero();
  for (const auto& l : located) {
    const double w = 1.0 / (l.sigma * l.sigma);
    const Eigen::Vector2d row(1.0, l.index);
    normal += w * row * row.transpose();
    rhs += w * l.position * row;
  }
  if (std::abs(normal.determinant()) < 1e-300) return false;
  const Eigen::Vector2d solution = normal.ldlt().solve(rhs);
  s0 = solution(0);
  half = solution(1);
  return std::isfinite(s0) && half > 0.0;
}

// Everything found about one centre.
struct Analysis {
  std::string error;  // non-empty when the analysis failed
  double period = 0.0;
  double s0 = 0.0;
  double fringes = 0.0;
  std::vector<FringePoint> points;
  int rejected = 0;
};

Analysis Failed(const std::string& message) {
  Analysis out;
  out.error = message;
  return out;
}

std::vector<NumberedPoint> Numbered(const std::vector<FringePoint>& points) {
  std::vector<NumberedPoint> out;
  out.reserve(points.size());
  for (const auto& p : points)
    out.push_back({p.x_px, p.y_px, std::max(p.sigma_px, 1e-4), p.index});
  return out;
}

// Sector profiles, mean-profile numbering and sector points about `centre`
// from every pixel of the normalised image (`flat`, of size `size`) in
// `region`.
Analysis AnalyseAbout(const RowValues& flat, cv::Size size,
                      const Circle& region, cv::Point2d centre, double period,
                      int sector_count) {
  Analysis out;
  // 7. Sector profiles about the refined centre.
  const SectorProfiles sectors = AccumulateSectorProfiles(
      flat, size, region, centre, period / kBinsPerPeriod, sector_count);
  const R2Profile mean = ExtractProfile(sectors, -1);
  if (mean.r2.size() < 2 * static_cast<std::size_t>(kBinsPerPeriod)) {
    return Failed(
        "too few rings: less than 2 fringes within the evaluated aperture (3 "
        "needed)");
  }
  double fringes = (mean.r2.back() - mean.r2.front()) / period;
  if (fringes < 3.0) {
    return Failed(Format(
        "too few rings: %.1f fringes within the evaluated aperture (3 needed)",
        fringes));
  }

  // 8. Phase of the mean profile, refined period, numbering.
  double s0 = 0.0;
  {
    Eigen::Matrix3d normal = Eigen::Matrix3d::Zero();
    Eigen::Vector3d rhs = Eigen::Vector3d::Zero();
    for (std::size_t i = 0; i < mean.r2.size(); ++i) {
      const double u = kTwoPi * mean.r2[i] / period;
      const Eigen::Vector3d row(1.0, std::cos(u), std::sin(u));
      normal += mean.weight[i] * row * row.transpose();
      rhs += mean.weight[i] * mean.value[i] * row;
    }
    const Eigen::Vector3d c = normal.ldlt().solve(rhs);
    s0 = std::atan2(-c(2), -c(1)) / kTwoPi *
         period;  // a minimum of the fundamental
  }
  for (int pass = 0; pass < 3; ++pass) {
    const std::vector<Located> located = LocateMeanExtrema(mean, s0, period);
    double half = 0.5 * period;
    if (!FitLadder(located, s0, half)) {
      return Failed(
          "too few rings: fewer than 3 fringes could be located in the mean "
          "profile");
    }
    period = 2.0 * half;
  }
  // Number from the dark fringe nearest the centre: s0 in [-P/4, 3P/4).
  s0 -= period * std::floor((s0 + 0.25 * period) / period);
  fringes = (mean.r2.back() - mean.r2.front()) / period;

  // 9. Fringe centres in every sector, tracked outward.
  const double sector_width = kTwoPi / sector_count;
  // Pixels expected in a half-period window of one sector.
  const double expected_window_pixels = 0.5 * sector_width * period;
  // Sectors are independent: located in parallel, each into its own slot,
  // then joined in sector order (the result does not depend on threads).
  std::vector<std::vector<FringePoint>> sector_points(
      static_cast<std::size_t>(sector_count));
  std::vector<int> sector_rejected(static_cast<std::size_t>(sector_count), 0);
  const auto locate_in_sector = [&](int k) {
    std::vector<FringePoint>& points =
        sector_points[static_cast<std::size_t>(k)];
    int& rejected = sector_rejected[static_cast<std::size_t>(k)];
    const R2Profile profile = ExtractProfile(sectors, k);
    if (profile.r2.size() < static_cast<std::size_t>(kBinsPerPeriod)) return;
    const double half = 0.5 * period;
    const int i_first =
        static_cast<int>(std::ceil((profile.r2.front() + half - s0) / half));
    const int i_last =
        static_cast<int>(std::floor((profile.r2.back() - half - s0) / half));
    int accepted = 0;
    double last_delta = 0.0;
    double slope = 0.0;
    int last_index = 0;
    for (int i = std::max(i_first, 1); i <= i_last; ++i) {
      double drift = last_delta + slope * (i - last_index);
      drift = std::clamp(drift, last_delta - 0.125 * period,
                         last_delta + 0.125 * period);
      const double expected = s0 + i * half + (accepted > 0 ? drift : 0.0);
      const bool dark = (i % 2) == 0;
      const ExtremumFit fit = FitCosineExtremum(
          profile.r2, profile.value, profile.weight, expected, period, dark);
      if (!fit.ok || fit.weight_sum < 0.5 * expected_window_pixels ||
          !(fit.sigma > 0.0) || fit.sigma > 0.125 * period ||
          fit.amplitude < 0.1 || fit.position <= 0.0) {
        continue;
      }
      if (std::abs(fit.position - expected) > 0.25 * period) {
        ++rejected;
        continue;
      }
      const double delta = fit.position - (s0 + i * half);
      if (accepted > 0) slope = (delta - last_delta) / (i - last_index);
      last_delta = delta;
      last_index = i;
      ++accepted;
      // Mean azimuth of the pixels near the extremum: the direction of
      // their mean offset from the centre.
      double dx_sum = 0.0;
      double dy_sum = 0.0;
      // (r2 increases along the profile: only the bins within a quarter
      // period are visited.)
      const auto near_begin = std::lower_bound(
          profile.r2.begin(), profile.r2.end(), fit.position - 0.25 * period);
      for (auto b = static_cast<std::size_t>(near_begin - profile.r2.begin());
           b < profile.r2.size() &&
           profile.r2[b] <= fit.position + 0.25 * period;
           ++b) {
        dx_sum += profile.weight[b] * profile.dx[b];
        dy_sum += profile.weight[b] * profile.dy[b];
      }
      FringePoint point;
      point.angle_rad = dx_sum != 0.0 || dy_sum != 0.0
                            ? std::atan2(dy_sum, dx_sum)
                            : k * sector_width;
      if (point.angle_rad > std::numbers::pi) point.angle_rad -= kTwoPi;
      point.radius_px = std::sqrt(fit.position);
      point.sigma_px = fit.sigma / (2.0 * point.radius_px);
      point.x_px = centre.x + point.radius_px * std::cos(point.angle_rad);
      point.y_px = centre.y + point.radius_px * std::sin(point.angle_rad);
      point.kind = dark ? FringeState::kDark : FringeState::kBright;
      point.index = i;
      point.sector = k;
      points.push_back(point);
    }
  };
  cv::parallel_for_(cv::Range(0, sector_count), [&](const cv::Range& range) {
    for (int k = range.start; k < range.end; ++k) locate_in_sector(k);
  });
  int rejected = 0;
  for (int k = 0; k < sector_count; ++k) {
    const auto& points = sector_points[static_cast<std::size_t>(k)];
    out.points.insert(out.points.end(), points.begin(), points.end());
    rejected += sector_rejected[static_cast<std::size_t>(k)];
  }
  if (out.points.size() < 6) {
    return Failed("too few fringe points could be located in the sectors");
  }
  out.period = period;
  out.s0 = s0;
  out.fringes = fringes;
  out.rejected = rejected;
  return out;
}

// Blur from the fall of the fringe visibility a / m with r^2 (see
// RingDetectionResult::blur_sigma_px): a least-squares line of ln(a / m)
// against r^2 about `centre` over the reduced envelope cells wholly inside
// the region (envelopes smoothed with a Gaussian of `smoothing_px`). Leaves the
// result's fields as they are when fewer than 20 cells or less than two periods
// of r^2 are available.
void EstimateBlur(const FlattenedImage& flat, double smoothing_px,
                  cv::Point2d centre, double period_r2_px2,
                  RingDetectionResult& result) {
  // Cells: r^2 and ln(a / m).
  std::vector<std::pair<double, double>> cells;
  const double scale = flat.scale;
  for (int j = 0; j < flat.mean.rows; ++j) {
    const auto* w = flat.weight.ptr<float>(j);
    const auto* m = flat.mean.ptr<float>(j);
    const auto* a = flat.amplitude.ptr<float>(j);
    const double dy = (j + 0.5) * scale - 0.5 - centre.y;
    for (int i = 0; i < flat.mean.cols; ++i) {
      if (w[i] < 0.99F || !(m[i] > 0.0F) || !(a[i] > 0.0F)) continue;
      const double dx = (i + 0.5) * scale - 0.5 - centre.x;
      const double y = std::log(static_cast<double>(a[i] / m[i]));
      if (std::isfinite(y)) cells.emplace_back(dx * dx + dy * dy, y);
    }
  }
  if (cells.empty()) return;
  double r2_max = 0.0;
  for (const auto& cell : cells) r2_max = std::max(r2_max, cell.first);
  // The inner half in r^2 only: where strong blur has brought the fringe
  // amplitude down to the noise, a = sqrt(2 var) measures the noise and
  // the line would flatten.
  double n = 0.0;
  double sx = 0.0;
  double sy = 0.0;
  double sxx = 0.0;
  double sxy = 0.0;
  double x_min = std::numeric_limits<double>::infinity();
  double x_max = -x_min;
  for (const auto& [x, y] : cells) {
    if (x > 0.5 * r2_max) continue;
    n += 1.0;
    sx += x;
    sy += y;
    sxx += x * x;
    sxy += x * y;
    x_min = std::min(x_min, x);
    x_max = std::max(x_max, x);
  }
  if (n < 20.0 || !(x_max - x_min >= 2.0 * period_r2_px2)) return;
  const double denominator = n * sxx - sx * sx;
  if (!(denominator > 0.0)) return;
  // The envelopes are Gaussian-smoothed (standard deviation s): a variance
  // falling as exp(-2 k r^2) comes out falling as exp(-2 k r^2 / (1 + 4 k
  // s^2)) (product of Gaussians), so the line's k' = k / (1 + 4 k s^2)
  // gives k = k' / (1 - 4 k' s^2), the divisor kept >= 1/4.
  const double k_seen = std::max(0.0, -(n * sxy - sx * sy) / denominator);
  const double k =
      k_seen / std::max(0.25, 1.0 - 4.0 * k_seen * smoothing_px * smoothing_px);
  const double c = kTwoPi / period_r2_px2;
  result.blur_sigma_px = std::sqrt(k / (2.0 * c * c));
  result.blur_bias_rel = k * k / (c * c);
}

// Records the wall and processor time since the previous lap as one named
// stage.
class StageClock {
 public:
  explicit StageClock(RingDetectionResult* result) : result_(result) {}
  void Lap(const char* stage) {
    const auto wall = std::chrono::steady_clock::now();
    const std::clock_t cpu = std::clock();
    result_->stage_times.push_back(
        {stage, std::chrono::duration<double>(wall - wall_).count(),
         static_cast<double>(cpu - cpu_) / CLOCKS_PER_SEC});
    wall_ = wall;
    cpu_ = cpu;
  }

 private:
  RingDetectionResult* result_;
  std::chrono::steady_clock::time_point wall_ =
      std::chrono::steady_clock::now();
  std::clock_t cpu_ = std::clock();
};

// The normalised image at the working resolution of the gradient centre:
// the image reduced by `factor` (`reduced`, by area averaging) normalised with
// the envelopes at each reduced pixel's centre, 0 outside `region`; at factor 1
// the full normalised image.
cv::Mat ReducedNormalised(const cv::Mat& image, const cv::Mat& reduced,
                          const FlattenedImage& flat, const Circle& region,
                          double factor) {
  if (!(factor > 1.0)) return flat.Normalised(image, region);
  cv::Mat small = reduced.clone();
  const double sx = static_cast<double>(image.cols) / small.cols;
  const double sy = static_cast<double>(image.rows) / small.rows;
  const double r2 = region.radius * region.radius;
  const double last_x = flat.mean.cols - 1;
  const double last_y = flat.mean.rows - 1;
  for (int j = 0; j < small.rows; ++j) {
    auto* row = small.ptr<float>(j);
    const double y = (j + 0.5) * sy - 0.5;
    const double v = std::clamp((y + 0.5) / flat.scale - 0.5, 0.0, last_y);
    for (int i = 0; i < small.cols; ++i) {
      const double x = (i + 0.5) * sx - 0.5;
      const double dx = x - region.centre.x;
      const double dy = y - region.centre.y;
      if (dx * dx + dy * dy > r2) {
        row[i] = 0.0F;
        continue;
      }
      const double u = std::clamp((x + 0.5) / flat.scale - 0.5, 0.0, last_x);
      const double m = SampleBilinear(flat.mean, u, v);
      const double g = SampleBilinear(flat.inverse_amplitude, u, v);
      row[i] = static_cast<float>((static_cast<double>(row[i]) - m) * g);
    }
  }
  return small;
}

// The message for a ring centre outside the image.
std::string OutsideMessage(const cv::Point2d& centre, const cv::Mat& image) {
  return Format(
      "the ring centre (%.1f, %.1f) px lies outside the image (%.0f x %.0f "
      "px); re-centre the part or reduce the tilt of the test plate",
      centre.x, centre.y, static_cast<double>(image.cols),
      static_cast<double>(image.rows));
}

}  // namespace

RingDetectionResult DetectRings(const cv::Mat& input,
                                const RingDetectionOptions& options) {
  if (const std::string why = options.Check(); !why.empty()) {
    throw InputError("ring detection: " + why);
  }
  RingDetectionResult result;
  result.sectors = options.sectors;
  StageClock clock(&result);
  const auto fail = [&result](const std::string& message) {
    result.status = Status::kError;
    result.points.clear();
    result.messages.push_back(message);
    return result;
  };
  if (input.empty()) return fail("the image is empty");
  if (input.channels() != 1)
    return fail("ring detection needs a grey (single-channel) image");
  // A float image is used as it is (no copy: it is only read).
  cv::Mat image = input;
  if (input.type() != CV_32FC1) input.convertTo(image, CV_32F);
  // The image at the working size of the coarse steps (aperture, gradient
  // centre), reduced once; the pixel range comes from the same pass.
  PixelRange range;
  const cv::Mat reduced = ReduceToWorkingSize(image, kWorkingSize, &range);
  if (!range.finite) {
    return fail("the image holds non-finite pixel values");
  }
  const auto lo = static_cast<double>(range.lo);
  const auto hi = static_cast<double>(range.hi);
  if (!(hi - lo > 1e-6 * std::max(std::abs(hi), std::abs(lo)))) {
    return fail("no fringes: the image is uniform");
  }

  clock.Lap("range and reduction");

  // 1. Clear aperture.
  Circle aperture;
  if (options.aperture_centre_px) {
    aperture.centre = *options.aperture_centre_px;
    aperture.radius = 0.5 * *options.aperture_diameter_px;
    result.aperture_detected = false;
  } else {
    ApertureOptions aperture_options;
    aperture_options.working_size_px = kWorkingSize;
    const ApertureResult found =
        DetectAperture(image, reduced, aperture_options);
    if (found.ok) {
      aperture = found.circle;
      result.aperture_detected = true;
    } else {
      aperture.centre =
          cv::Point2d(0.5 * (image.cols - 1), 0.5 * (image.rows - 1));
      aperture.radius = 0.5 * std::min(image.cols, image.rows) - 1.0;
      result.messages.push_back(
          "no part edge found (" + found.message +
          "); evaluating the circle inscribed in the image");
    }
  }
  clock.Lap("aperture");
  Circle region{aperture.centre, aperture.radius * options.aperture_fraction};
  result.aperture_centre_px = region.centre;
  result.aperture_radius_px = region.radius;
  // Pixels inside the region, and those at full scale.
  const double full = options.full_scale.value_or(hi);
  const auto threshold = static_cast<float>(full * (1.0 - 1e-6));
  int inside = 0;
  int saturated = 0;
  for (int y = 0; y < image.rows; ++y) {
    int x0 = 0;
    int x1 = -1;
    RowSpan(region, y, image.cols, x0, x1);
    if (x1 < x0) continue;
    const float* row = image.ptr<float>(y);
    for (int x = x0; x <= x1; ++x) saturated += row[x] >= threshold ? 1 : 0;
    inside += std::max(0, x1 - x0 + 1);
  }
  if (region.radius < 16.0 || inside < 1000) {
    return fail(
        Format("the evaluated aperture (radius %.1f px) is too small or "
               "outside the image",
               region.radius));
  }

  // 2. Saturation.
  result.saturated_fraction = static_cast<double>(saturated) / inside;
  if (result.saturated_fraction > 0.5) {
    return fail(
        Format("saturated: %.0f %% of the aperture pixels are at full scale "
               "(%g); reduce "
               "the exposure",
               100.0 * result.saturated_fraction, full));
  }
  if (result.saturated_fraction > 0.02) {
    result.messages.push_back(
        Format("%.1f %% of the aperture pixels are saturated; fringe positions "
               "may be biased",
               100.0 * result.saturated_fraction));
  }

  clock.Lap("saturation");
  // 3. Flatten the illumination.
  IlluminationOptions illumination;
  illumination.smoothing_px = std::max(4.0, region.radius / 4.0);
  illumination.working_size_px = kWorkingSize;
  const FlattenedImage flat = FlattenIllumination(image, region, illumination);
  clock.Lap("flatten");
  {
    // Visibility (Imax - Imin)/(Imax + Imin) = amplitude / mean, median over
    // the reduced pixels wholly inside the region.
    std::vector<double> ratios;
    double mean_sum = 0.0;
    double amplitude_sum = 0.0;
    for (int y = 0; y < flat.mean.rows; ++y) {
      const auto* w = flat.weight.ptr<float>(y);
      const auto* mean_row = flat.mean.ptr<float>(y);
      const auto* amp_row = flat.amplitude.ptr<float>(y);
      for (int x = 0; x < flat.mean.cols; ++x) {
        if (w[x] < 0.99F) continue;
        mean_sum += std::abs(static_cast<double>(mean_row[x]));
        amplitude_sum += static_cast<double>(amp_row[x]);
        if (mean_row[x] > 0.0F) {
          ratios.push_back(static_cast<double>(amp_row[x] / mean_row[x]));
        }
      }
    }
    if (!(amplitude_sum > 1e-5 * std::max(mean_sum, 1e-30))) {
      return fail("no fringes: the aperture is uniform");
    }
    if (!ratios.empty()) {
      auto middle =
          ratios.begin() + static_cast<std::ptrdiff_t>(ratios.size() / 2);
      std::nth_element(ratios.begin(), middle, ratios.end());
      result.visibility = std::min(1.0, *middle);
    }
  }

  clock.Lap("visibility");
  // 4. First centre estimate from gradient lines, on a reduced image.
  const double factor =
      std::max(1.0, static_cast<double>(std::max(image.cols, image.rows)) /
                        kWorkingSize);
  // The normalised image row by row (no full-size copy).
  const RowValues normalised = [&image, &flat](int y, int x0, int x1,
                                               float* out) {
    flat.NormaliseRow(image.ptr<float>(y), y, x0, x1, out);
  };
  const cv::Mat small = ReducedNormalised(image, reduced, flat, region, factor);
  const double sx = static_cast<double>(image.cols) / small.cols;
  const double sy = static_cast<double>(image.rows) / small.rows;
  Circle small_region{cv::Point2d((region.centre.x + 0.5) / sx - 0.5,
                                  (region.centre.y + 0.5) / sy - 0.5),
                      region.radius / std::max(sx, sy)};
  const GradientCentre gradient =
      EstimateCentreFromGradients(small, small_region);
  if (!gradient.ok) {
    return fail(
        "no ring centre: the fringes are straight or parallel (no closed "
        "rings)");
  }
  if (gradient.inlier_fraction < 0.05) {
    return fail(
        "no fringes: the intensity gradients do not point to a common centre "
        "(noise only?)");
  }
  cv::Point2d centre((gradient.centre.x + 0.5) * sx - 0.5,
                     (gradient.centre.y + 0.5) * sy - 0.5);
  if (!InsideImage(centre, image)) return fail(OutsideMessage(centre, image));

  clock.Lap("gradient centre");
  // Pixel-rich photographs: the period estimate uses every n-th row,
  // keeping at least kCoarsePixels pixels; smaller ones use all rows.
  const int coarse_rows = std::max(1, inside / kCoarsePixels);

  // 5. Period in r^2 from the spectrum of the azimuthal mean profile.
  const double far = cv::norm(region.centre - centre) + region.radius;
  double period = 0.0;
  {
    const double bin = far * far / 4096.0;
    const SectorProfiles coarse = AccumulateSectorProfiles(
        normalised, image.size(), region, centre, bin, 1, coarse_rows);
    std::vector<double> value;
    std::vector<double> weight;
    UniformMeanProfile(coarse, value, weight);
    const PeriodEstimate estimate =
        EstimatePeriod(value, weight, bin, 8.0 * bin, far * far);
    if (!estimate.ok || estimate.peak_ratio < 30.0) {
      return fail(Format(
          "no fringes: no periodic ring pattern in r^2 about (%.1f, %.1f) px",
          centre.x, centre.y));
    }
    period = estimate.period;
  }

  clock.Lap("period");
  // 6. Refine the centre: sharpest azimuthal-mean profile.
  {
    const int stride = std::max(
        1, static_cast<int>(std::ceil(std::sqrt(inside / kRefinementSamples))));
    const PixelSamples samples =
        SamplePixels(normalised, image.size(), region, stride);
    const CentreRefinement refined = RefineCentreBySharpness(
        samples, centre, period, std::max(1.0, factor), 0.05);
    if (refined.ok) centre = refined.centre;
  }
  clock.Lap("sharpness");
  if (!InsideImage(centre, image)) return fail(OutsideMessage(centre, image));
  result.centre_px = centre;

  // 7.-9. Profiles, numbering and sector points about the sharpest centre,
  // then the centre of circles through those points. The points are placed
  // along their own azimuth, so a centre a fraction of a pixel off only
  // widens each sector's fringes slightly (by about the offset times the
  // sector's angular width) and leaves them on their rings; when the circles'
  // centre lies farther than kRecentrePx from the sharpest one, the
  // profiles are taken once more about it.
  Analysis analysis = AnalyseAbout(normalised, image.size(), region, centre,
                                   period, options.sectors);
  clock.Lap("sectors about the sharpest centre");
  if (!analysis.error.empty()) return fail(analysis.error);
  ConcentricFit circles =
      FitConcentricCircles(Numbered(analysis.points), centre);
  const cv::Point2d sharpest = centre;
  if (circles.ok && cv::norm(circles.centre - centre) < 3.0 &&
      InsideImage(circles.centre, image)) {
    if (cv::norm(circles.centre - centre) <= kRecentrePx) {
      centre = circles.centre;
    } else {
      Analysis second =
          AnalyseAbout(normalised, image.size(), region, circles.centre,
                       analysis.period, options.sectors);
      if (second.error.empty()) {
        centre = circles.centre;
        analysis = std::move(second);
        circles = FitConcentricCircles(Numbered(analysis.points), centre);
      }
    }
  }
  clock.Lap("sectors about the circles' centre");
  result.centre_px = centre;
  result.period_r2_px2 = analysis.period;
  result.first_dark_r2_px2 = analysis.s0;
  result.centre_observed = analysis.s0 < 0.25 * analysis.period
                               ? FringeState::kDark
                               : FringeState::kBright;
  result.fringes_in_aperture = analysis.fringes;
  EstimateBlur(flat, illumination.smoothing_px, centre, analysis.period,
               result);
  result.points = std::move(analysis.points);
  if (analysis.rejected > 0) {
    result.messages.push_back(
        Format("%d sector fringe positions disagreed with their number by more "
               "than a quarter "
               "period and were dropped",
               analysis.rejected));
  }

  // 10. Centre uncertainty: the statistical uncertainty of the concentric
  // fit, widened by the disagreement with the independent sharpness centre.
  const double disagreement = cv::norm(sharpest - centre);
  if (circles.ok) {
    result.centre_sigma_px =
        std::hypot(circles.centre_sigma_px, disagreement / std::sqrt(2.0));
    if (disagreement > std::max(0.5, 5.0 * circles.centre_sigma_px)) {
      result.messages.push_back(
          Format("the ring centre from the profile sharpness and from circles "
                 "through the fringe "
                 "points differ by %.2f px (non-circular fringes?)",
                 disagreement));
    }
  } else {
    result.centre_sigma_px = std::numeric_limits<double>::quiet_NaN();
    result.messages.push_back("the centre uncertainty could not be estimated");
  }
  result.status = result.messages.empty() ? Status::kOk : Status::kWarning;
  return result;
}

}  // namespace figura
