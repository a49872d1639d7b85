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

// Values accumulated per (sector, bin), interleaved so that one pixel
// touches one small block: count, sum of values, sum of r^2, sum of dx, sum
// of dy.
constexpr std::size_t kFields = 5;

// The first pixels of the runs of constant sector along the row [x0, x1]
// at offset dy from the centre (x0 first). The azimuth atan2(dy, x - cx)
// changes monotonically along a row, so a run ends only where the row
// crosses a sector boundary ray (at x = cx + dy cos(b) / sin(b), for the
// boundaries b with sin(b) of the sign of dy) or, on the row through the
// centre itself, at x = cx (azimuth pi to 0).
void RunStarts(double cx, double dy, int x0, int x1,
               const std::vector<double>& boundary_cos,
               const std::vector<double>& boundary_sin,
               std::vector<int>& starts) {
  starts.clear();
  starts.push_back(x0);
  const auto add = [&](double crossing) {
    // Pixels at or beyond the crossing begin the next run.
    if (!(crossing > x0 && crossing <= x1)) return;
    starts.push_back(static_cast<int>(std::ceil(crossing)));
  };
  if (dy == 0.0) {
    add(cx);
  } else {
    for (std::size_t j = 0; j < boundary_cos.size(); ++j) {
      const double s = boundary_sin[j];
      if (s * dy <= 0.0 || std::abs(s) < 1e-12) continue;
      add(cx + dy * boundary_cos[j] / s);
    }
  }
  std::sort(starts.begin(), starts.end());
  starts.erase(std::unique(starts.begin(), starts.end()), starts.end());
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
  out.sum_dx.assign(total, 0.0);
  out.sum_dy.assign(total, 0.0);

  const int y_begin =
      std::max(0, static_cast<int>(std::ceil(region.centre.y - region.radius)));
  const int y_end = std::min(
      size.height,
      static_cast<int>(std::floor(region.centre.y + region.radius)) + 1);
  if (y_end <= y_begin) return out;
  const double sector_width = 2.0 * std::numbers::pi / sectors;
  const double inverse_bin = 1.0 / bin_width_px2;
  // Sector boundary rays: sector k spans [b_k, b_{k+1}) with
  // b_k = (k - 1/2) 2 pi / S.
  std::vector<double> boundary_cos;
  std::vector<double> boundary_sin;
  if (sectors > 1) {
    for (int k = 0; k < sectors; ++k) {
      const double b = (k - 0.5) * sector_width;
      boundary_cos.push_back(std::cos(b));
      boundary_sin.push_back(std::sin(b));
    }
  }
  std::mutex merge;
  const int stripes = std::clamp(cv::getNumThreads(), 1, 8);
  // Parallel over the used rows y_begin + i * row_step.
  const int used_rows = (y_end - y_begin + row_step - 1) / row_step;
  const int bins = out.bins;
  cv::parallel_for_(
      cv::Range(0, used_rows),
      [&](const cv::Range& rows) {
        std::vector<float> row(static_cast<std::size_t>(size.width));
        std::vector<int> starts;
        starts.reserve(static_cast<std::size_t>(sectors) + 2);
        // Interleaved per bin (kFields values): one small block per pixel
        // update instead of five arrays (consecutive pixels of a row mostly
        // fall into different bins).
        std::vector<double> acc(total * kFields, 0.0);
        for (int used = rows.start; used < rows.end; ++used) {
          const int y = y_begin + used * row_step;
          int x0 = 0;
          int x1 = -1;
          RowSpan(region, y, size.width, x0, x1);
          if (x1 < x0) continue;
          values(y, x0, x1, row.data());
          const double dy = y - centre.y;
          const double dy2 = dy * dy;
          if (sectors > 1) {
            RunStarts(centre.x, dy, x0, x1, boundary_cos, boundary_sin, starts);
          } else {
            starts.assign(1, x0);
          }
          // The sector of pixel x from its exact azimuth, shifted by half
          // a sector so that sector k is centred on 2 pi k / S.
          const auto sector_of = [&](int x) {
            if (sectors == 1) return 0;
            double angle = std::atan2(dy, x - centre.x) + 0.5 * sector_width;
            if (angle < 0.0) angle += 2.0 * std::numbers::pi;
            return std::min(static_cast<int>(angle / sector_width),
                            sectors - 1);
          };
          const auto add = [&](int sector, int from, int to) {
            double* base = acc.data() + static_cast<std::size_t>(sector) *
                                            static_cast<std::size_t>(bins) *
                                            kFields;
            for (int x = from; x <= to; ++x) {
              const double dx = x - centre.x;
              const double r2 = dx * dx + dy2;
              const int bin = static_cast<int>(r2 * inverse_bin);
              if (bin >= bins) continue;
              double* at = base + static_cast<std::size_t>(bin) * kFields;
              at[0] += 1.0;
              at[1] += static_cast<double>(row[static_cast<std::size_t>(x)]);
              at[2] += r2;
              at[3] += dx;
              at[4] += dy;
            }
          };
          for (std::size_t r = 0; r < starts.size(); ++r) {
            const int a = starts[r];
            const int b = r + 1 < starts.size() ? starts[r + 1] - 1 : x1;
            // Only a run's end pixels can lie on a boundary (to rounding):
            // they get their own sector, the inside pixels that of the
            // middle one.
            add(sector_of(a), a, a);
            if (b > a) add(sector_of(b), b, b);
            if (b > a + 1) add(sector_of((a + b) / 2), a + 1, b - 1);
          }
        }
        const std::lock_guard<std::mutex> lock(merge);
        for (std::size_t i = 0; i < total; ++i) {
          const double* at = acc.data() + i * kFields;
          if (at[0] == 0.0) continue;
          out.count[i] += at[0];
          out.sum[i] += at[1];
          out.sum_r2[i] += at[2];
          out.sum_dx[i] += at[3];
          out.sum_dy[i] += at[4];
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
  out.dx.reserve(static_cast<std::size_t>(profiles.bins));
  out.dy.reserve(static_cast<std::size_t>(profiles.bins));
  for (int b = 0; b < profiles.bins; ++b) {
    double count = 0.0;
    double sum = 0.0;
    double sum_r2 = 0.0;
    double sum_dx = 0.0;
    double sum_dy = 0.0;
    for (int k = first; k <= last; ++k) {
      const std::size_t i = profiles.At(k, b);
      count += profiles.count[i];
      sum += profiles.sum[i];
      sum_r2 += profiles.sum_r2[i];
      sum_dx += profiles.sum_dx[i];
      sum_dy += profiles.sum_dy[i];
    }
    if (count <= 0.0) continue;
    out.r2.push_back(sum_r2 / count);
    out.value.push_back(sum / count);
    out.weight.push_back(count);
    out.dx.push_back(sum_dx / count);
    out.dy.push_back(sum_dy / count);
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
