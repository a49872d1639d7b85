// The surface-map picture: the height map in a perceptually uniform colour
// map (viridis, van der Walt & Smith, matplotlib, CC0), a colour bar with two
// scales (nm and fringes), a horizontal and a vertical profile through the
// aperture centre, and a title. Rendered with cairo into an 8-bit BGR image.
#pragma once

#include <array>
#include <filesystem>
#include <opencv2/core.hpp>
#include <string>

#include "fringe/circle.h"

namespace figura {

// Layout of the picture.
struct SurfacePictureOptions {
  int width = 1200;  // picture size in px (>= 640 x 480)
  int height = 900;
  // Object-side size of one pixel in metres; > 0 gives profile axes in mm,
  // 0 in normalised radius.
  double pixel_pitch_m = 0.0;

  // Empty when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// Viridis at t in [0, 1] (clamped; NaN gives 0) as 8-bit {R, G, B}: the
// 256-entry table of matplotlib's viridis (van der Walt & Smith, CC0),
// entry round(255 t).
std::array<unsigned char, 3> ViridisRgb(double t);

// The picture as CV_8UC3 BGR of options.width x options.height.
// `height_m`: CV_32FC1 or CV_64FC1 metres, NaN outside the valid area
// (drawn neutral grey). `unreliable`: CV_8UC1 of the same size, nonzero
// where the unwrapping is unreliable (drawn magenta over the map and
// counted in the legend), or empty. `aperture_px`: the evaluated aperture
// (rho = 1), its centre gives the profiles. `wavelength_m` > 0: the second
// colour-bar scale in fringes (lambda / 2). `title`: one line at the top.
// Throws InputError for an empty map, a size mismatch, or invalid options.
cv::Mat RenderSurfacePicture(const cv::Mat& height_m, const cv::Mat& unreliable,
                             const Circle& aperture_px, double wavelength_m,
                             const std::string& title,
                             const SurfacePictureOptions& options = {});

// Renders and writes the picture to `path` (.png, .jpg, .tif) atomically
// through io/image_writer.h WriteImage. Throws OutputError when writing
// fails, InputError as RenderSurfacePicture.
void WriteSurfacePicture(const std::filesystem::path& path,
                         const cv::Mat& height_m, const cv::Mat& unreliable,
                         const Circle& aperture_px, double wavelength_m,
                         const std::string& title,
                         const SurfacePictureOptions& options = {});

}  // namespace figura
