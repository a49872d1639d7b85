// Test helpers for surface maps on simulated photographs: the photo as an
// Image, and the truth over the map's evaluated aperture (the simulator's
// exact gap, sim/gap.h, at every pixel centre, fitted with the same
// FitZernikeGrid / ComputeFormMetrics so that a check is of the fringe
// analysis, not of the metric definitions).
#pragma once

#include <cmath>
#include <limits>
#include <opencv2/core.hpp>
#include <vector>

#include "io/image.h"
#include "sim/gap.h"
#include "sim/simulation.h"
#include "surface/form_metrics.h"
#include "surface/surface_map.h"
#include "surface/zernike_fit.h"

namespace figura::testing {

// A 16-bit simulated photo as the grey float image AnalyseMap takes.
inline Image ToImage(const SimulationResult& photo) {
  Image image;
  photo.image.convertTo(image.pixels, CV_32F);
  image.info.width = photo.image.cols;
  image.info.height = photo.image.rows;
  image.info.bit_depth = 16;
  image.info.channels = 1;
  image.info.full_scale = 65535.0;
  image.info.format = "tiff";
  return image;
}

// The truth over the map's evaluated aperture: gap map, its fit and form
// numbers, piston and tilt removed.
struct MapTruth {
  cv::Mat height_m;
  ZernikeFitResult fit;
  FormMetrics metrics;
};

// The truth of `sim` over the evaluated aperture of `r`, fitted to radial
// order 8 (the map's default).
inline MapTruth TruthOver(const SimulationOptions& sim, const MapResult& r) {
  const GapModel model(sim.gap, sim.aperture_diameter_m / 2.0);
  const double p = sim.camera.pixel_pitch_m;
  MapTruth t;
  t.height_m = cv::Mat(r.height_m.size(), CV_32FC1,
                       cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  const Circle& c = r.aperture_px;
  GapRow row;
  for (int y = 0; y < t.height_m.rows; ++y) {
    model.PrepareRow((sim.CentreY() - y) * p, &row);
    for (int x = 0; x < t.height_m.cols; ++x) {
      if (std::hypot(x - c.centre.x, y - c.centre.y) > c.radius) continue;
      t.height_m.at<float>(y, x) =
          static_cast<float>(model.AtRow(row, (x - sim.CentreX()) * p));
    }
  }
  ZernikeFitOptions fo;
  fo.max_order = 8;
  t.fit = FitZernikeGrid(t.height_m, c, fo);
  std::vector<double> low(t.fit.coefficients_m.begin(),
                          t.fit.coefficients_m.begin() + 3);
  const cv::Mat valid = (t.height_m == t.height_m);
  t.height_m -= EvaluateZernikeGrid(low, c, t.height_m.size(), valid);
  for (int j = 0; j < 3; ++j) t.fit.coefficients_m[j] = 0.0;
  t.metrics = ComputeFormMetrics(t.height_m, c, t.fit);
  return t;
}

}  // namespace figura::testing
