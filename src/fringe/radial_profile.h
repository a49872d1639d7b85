// Azimuthal and sector profiles about a centre, binned uniformly in r^2
// (px^2), where Newton's fringes are periodic.
#pragma once

#include <functional>
#include <opencv2/core.hpp>
#include <span>
#include <vector>

#include "fringe/circle.h"

namespace figura {

// Pixel sums per (sector, r^2 bin). Sector k covers azimuths
// [2 pi (k - 1/2) / S, 2 pi (k + 1/2) / S) about the centre, azimuth
// atan2(y - cy, x - cx) (x right, y down); bin b covers r^2 in
// [b w, (b + 1) w).
struct SectorProfiles {
  cv::Point2d centre;
  double bin_width_px2 = 0.0;
  int bins = 0;
  int sectors = 0;
  // Per (sector * bins + bin): pixel count, sum of values, sum of r^2 (px^2),
  // sums of the pixel offsets x - cx and y - cy from the centre (px).
  std::vector<double> count, sum, sum_r2, sum_dx, sum_dy;

  // Index into the arrays.
  [[nodiscard]] std::size_t At(int sector, int bin) const {
    return static_cast<std::size_t>(sector) * static_cast<std::size_t>(bins) +
           static_cast<std::size_t>(bin);
  }
};

// One profile as arrays for fitting: mean r^2 (px^2), mean value and pixel
// count of each non-empty bin, in increasing r^2; the mean pixel offsets
// x - cx and y - cy (px) of each bin too (their direction is the bin's mean
// azimuth).
struct R2Profile {
  std::vector<double> r2, value, weight, dx, dy;
};

// Supplies the values of image row y, columns [x0, x1], into out[x0..x1]
// (out has room for the whole row). Called from several threads at once.
using RowValues = std::function<void(int y, int x0, int x1, float* out)>;

// Accumulates the pixels whose centres lie inside `region` (image size
// `size`, values from `values`) into `sectors` azimuth sectors and bins of
// r^2 about `centre` of width `bin_width_px2`, using every `row_step`-th
// row (1: all). Runs in parallel over image rows (cv::parallel_for_).
SectorProfiles AccumulateSectorProfiles(const RowValues& values, cv::Size size,
                                        const Circle& region,
                                        cv::Point2d centre,
                                        double bin_width_px2, int sectors,
                                        int row_step = 1);

// The same for the pixels of `image` (CV_32FC1).
SectorProfiles AccumulateSectorProfiles(const cv::Mat& image,
                                        const Circle& region,
                                        cv::Point2d centre,
                                        double bin_width_px2, int sectors);

// The profile of one sector, or of all sectors together (sector = -1, the
// azimuthal mean), with empty bins dropped.
R2Profile ExtractProfile(const SectorProfiles& profiles, int sector);

// The azimuthal-mean profile on the full uniform grid (value 0 and weight 0
// in empty bins), for spectral analysis.
void UniformMeanProfile(const SectorProfiles& profiles,
                        std::vector<double>& value,
                        std::vector<double>& weight);

}  // namespace figura
