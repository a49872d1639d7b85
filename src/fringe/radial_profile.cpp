#include "fringe/radial_profile.h"

#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <mutex>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <vector>

namespace figura {

namespace {

// atan2 to about 1e-5 rad: the polynomial of Abramowitz & Stegun 4.4.49
// for |z| <= 1, extended to all octants. Sector assignment needs far less.
inline double FastAtan2(double y, double x) {
  const double ax = std::abs(x);
  const double ay = std::abs(y);
  if (ax == 0.0 && ay == 0.0) return 0.0;
  const bool swap = ay > ax;
  const double z = swap ? ax / ay : ay / ax;
  const double z2 = z * z;
  double a = z * (0.9998660 +
                  z2 * (-0.3302995 +
                        z2 * (0.1801410 + z2 * (-0.0851330 + z2 * 0.0208351))));
  if (swap) a = 0.5 * std::numbers::pi - a;
  if (x < 0.0) a = std::numbers::pi - a;
  return y < 0.0 ? -a : a;
}

}  // namespace

SectorProfiles AccumulateSectorProfiles(const cv::Mat& image,
                                        const Circle& region,
                                        cv::Point2d centre,
                                        double bin_width_px2, int sectors) {
  assert(image.type() == CV_32FC1);
  const RowValues values = [&image](int y, int x0, int x1, float* out) {
    const float* row = image.ptr<float>(y);
    std::copy(row + x0, row + x1 + 1, out + x0);
  };
  return AccumulateSectorProfiles(values, image.size(), region, centre,
                                  bin_width_px2, sectors);
}

SectorProfiles AccumulateSectorProfiles(const RowValues& values, cv::Size size,
                                        const Circle& region,
                                        cv::Point2d centre,
                                        double bin_width_px2, int sectors,
                                        int row_step) {
  assert(bin_width_px2 > 0.0 && sectors >= 1 && row_step >= 1);
  SectorProfiles out;
  out.centre = centre;
  out.bin_width_px2 = bin_width_px2;
  out.sectors = sectors;
  const double far = cv::norm(region.centre - centre) + region.radius + 1.0;
  out.bins = static_cast<int>(std::ceil(far * far / bin_width_px2)) + 1;
  const std::size_t total =
      static_cast<std::size_t>(sectors) * static_cast<std::size_t>(out.bins);
  out.count.assign(total, 0.0);
  out.sum.assign(total, 0.0);
  out.sum_r2.assign(total, 0.0);
  out.sum_angle.assign(total, 0.0);

  const int y_begin =
      std::max(0, static_cast<int>(std::ceil(region.centre.y - region.radius)));
  const int y_end = std::min(
      size.height,
      static_cast<int>(std::floor(region.centre.y + region.radius)) + 1);
  if (y_end <= y_begin) return out;
  const double sector_width = 2.0 * std::numbers::pi / sectors;
  const double inverse_bin = 1.0 / bin_width_px2;
  const double inverse_sector = 1.0 / sector_width;
  std::mutex merge;
  const int stripes = std::clamp(cv::getNumThreads(), 1, 8);
  // Parallel over the used rows y_begin + i * row_step.
  const int used_rows = (y_end - y_begin + row_step - 1) / row_step;
  cv::parallel_for_(
      cv::Range(0, used_rows),
      [&](const cv::Range& rows) {
        std::vector<float> row(static_cast<std::size_t>(size.width));
        // Interleaved per bin (count, sum, sum_r2, sum_angle): one cache
        // line per pixel update instead of four (consecutive pixels of a
        // row mostly fall into different bins).
        std::vector<std::array<double, 4>> acc(total, {0.0, 0.0, 0.0, 0.0});
        for (int used = rows.start; used < rows.end; ++used) {
          const int y = y_begin + used * row_step;
          int x0 = 0;
          int x1 = -1;
          RowSpan(region, y, size.width, x0, x1);
          if (x1 < x0) continue;
          values(y, x0, x1, row.data());
          const double dy = y - centre.y;
          for (int x = x0; x <= x1; ++x) {
            const double dx = x - centre.x;
            const double r2 = dx * dx + dy * dy;
            const int bin = static_cast<int>(r2 * inverse_bin);
            if (bin >= out.bins) continue;
            // Azimuth in [0, 2 pi), shifted by half a sector so that sector
            // k is centred on 2 pi k / S.
            int sector = 0;
            double offset = 0.0;
            if (sectors > 1) {
              double angle = FastAtan2(dy, dx) + 0.5 * sector_width;
              if (angle < 0.0) angle += 2.0 * std::numbers::pi;
              sector = std::min(static_cast<int>(angle * inverse_sector),
                                sectors - 1);
              offset = angle - (sector + 0.5) * sector_width;
            }
            const std::size_t i =
                static_cast<std::size_t>(sector) * out.bins + bin;
            std::array<double, 4>& a = acc[i];
            a[0] += 1.0;
            a[1] += static_cast<double>(row[static_cast<std::size_t>(x)]);
            a[2] += r2;
            a[3] += offset;
          }
        }
        const std::lock_guard<std::mutex> lock(merge);
        for (std::size_t i = 0; i < total; ++i) {
          const std::array<double, 4>& a = acc[i];
          if (a[0] == 0.0) continue;
          out.count[i] += a[0];
          out.sum[i] += a[1];
          out.sum_r2[i] += a[2];
          out.sum_angle[i] += a[3];
        }
      },
      stripes);
  return out;
}

R2Profile ExtractProfile(const SectorProfiles& profiles, int sector) {
  R2Profile out;
  const int first = sector < 0 ? 0 : sector;
  const int last = sector < 0 ? profiles.sectors - 1 : sector;
  out.r2.reserve(static_cast<std::size_t>(profiles.bins));
  out.value.reserve(static_cast<std::size_t>(profiles.bins));
  out.weight.reserve(static_cast<std::size_t>(profiles.bins));
  out.angle.reserve(static_cast<std::size_t>(profiles.bins));
  for (int b = 0; b < profiles.bins; ++b) {
    double count = 0.0;
    double sum = 0.0;
    double sum_r2 = 0.0;
    double sum_angle = 0.0;
    for (int k = first; k <= last; ++k) {
      const std::size_t i = profiles.At(k, b);
      count += profiles.count[i];
      sum += profiles.sum[i];
      sum_r2 += profiles.sum_r2[i];
      sum_angle += profiles.sum_angle[i];
    }
    if (count <= 0.0) continue;
    out.r2.push_back(sum_r2 / count);
    out.value.push_back(sum / count);
    out.weight.push_back(count);
    out.angle.push_back(sum_angle / count);
  }
  return out;
}

void UniformMeanProfile(const SectorProfiles& profiles,
                        std::vector<double>& value,
                        std::vector<double>& weight) {
  value.assign(static_cast<std::size_t>(profiles.bins), 0.0);
  weight.assign(static_cast<std::size_t>(profiles.bins), 0.0);
  for (int b = 0; b < profiles.bins; ++b) {
    double count = 0.0;
    double sum = 0.0;
    for (int k = 0; k < profiles.sectors; ++k) {
      count += profiles.count[profiles.At(k, b)];
      sum += profiles.sum[profiles.At(k, b)];
    }
    if (count > 0.0) {
      value[static_cast<std::size_t>(b)] = sum / count;
      weight[static_cast<std::size_t>(b)] = count;
    }
  }
}

}  // namespace figura
