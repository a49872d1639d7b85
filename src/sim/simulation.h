// Synthetic fringe photographs with truth files: the exact multiple-beam
// (Airy) response of the gap (sim/gap.h, optics/media.h) integrated over
// each pixel and over the source spectrum, then the camera: optical blur,
// illumination falloff, stray light, shot and read noise, gamma,
// quantisation. The gap file format is described in sim/gap_file.h.
#pragma once

#include <cstdint>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <opencv2/core.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/light_source.h"
#include "io/image_writer.h"
#include "optics/media.h"
#include "sim/gap.h"

namespace figura {

// The camera and its image. Levels are fractions of full scale.
struct CameraOptions {
  int width_px = 1024;
  int height_px = 768;
  // Object-side size of one pixel (m).
  double pixel_pitch_m = 25e-6;
  // Gaussian optical blur, standard deviation in pixels (0 = none).
  double blur_sigma_px = 0.0;
  // Relative illumination drop at the aperture edge: the fringe signal is
  // multiplied by 1 - falloff (r/a)^2 (0 = even illumination).
  double falloff = 0.0;
  // Stray light / background reflection added everywhere (full scale = 1).
  double background = 0.0;
  // Level of the dark surround outside the aperture (bevel, holder).
  double surround = 0.03;
  // Level of the brightest fringe (the Airy maximum) before falloff.
  double exposure = 0.8;
  // Electrons at full scale; shot noise is Poisson in electrons. 0 = no
  // shot noise (and then read_noise must be 0).
  double full_well_e = 20000.0;
  // Read noise, electrons RMS (Gaussian).
  double read_noise_e = 5.0;
  // Encoding exponent: stored = level^gamma (1 = linear).
  double gamma = 1.0;
  // 8 or 16 (unsigned integers), or 32 (float TIFF, levels not clipped at
  // full scale and not quantised).
  int bit_depth = 16;
  // JPEG quality 1..100 (only for .jpg output).
  int jpeg_quality = 95;
};

// Everything a render needs; parsed from a gap file by LoadGapFile
// (sim/gap_file.h).
struct SimulationOptions {
  GapOptions gap;
  MediaStack stack;
  View view = View::kReflected;
  // Test wavelength (in air) with its spectral lines (a named source
  // renders every line with its weight).
  Wavelength wavelength{Length::Nanometres(546.074), {}, {}, {}, {}};
  // Gaussian FWHM of every line (m); 0 = monochromatic.
  double bandwidth_m = 0.0;
  // Clear aperture diameter (m, object side) and its centre in pixels
  // (x right, y down, pixel centres at integers); unset = image centre.
  double aperture_diameter_m = 20e-3;
  std::optional<double> centre_x_px;
  std::optional<double> centre_y_px;
  CameraOptions camera;
  std::uint64_t seed = 1;
  // Where the options came from (for messages and the truth file).
  std::string origin;

  // Empty when usable, else a readable reason that starts with the
  // offending key as "section.key: ".
  [[nodiscard]] std::string Check() const;
  // The aperture centre in pixels, defaults resolved.
  [[nodiscard]] double CentreX() const;
  [[nodiscard]] double CentreY() const;
};

// Shortest local fringe period (pixels) the simulator accepts within the
// aperture; shorter periods alias and are refused.
inline constexpr double kMinFringePeriodPx = 2.5;

// A rendered photograph and its truth.
// (nlohmann::json members make the implicit special members formally
// throwing; nothing here throws.)
struct SimulationResult {  // NOLINT(bugprone-exception-escape)
  Status status = Status::kOk;
  std::vector<std::string> messages;
  // CV_8UC1, CV_16UC1 or CV_32FC1 after the camera model.
  cv::Mat image;
  // Every parameter used, the seed, and the gap's key numbers.
  nlohmann::json truth;
  double min_fringe_period_px = 0.0;  // within the aperture
  int spectral_samples = 0;
};

// Renders the photograph. Throws InputError when options.Check() fails,
// when the gap would be negative somewhere in the aperture, or when fringes
// would alias (local period under kMinFringePeriodPx), with a message saying
// where and what to change.
SimulationResult Simulate(const SimulationOptions& options);

// Empty when `image_path` has an extension the simulator writes for this
// bit depth (.tif/.tiff: 8/16/32; .png: 8/16; .jpg/.jpeg: 8), else a reason.
std::string CheckOutputPath(const std::filesystem::path& image_path,
                            int bit_depth);

// The truth file written beside an image: "<stem>.truth.json".
std::filesystem::path TruthPathFor(const std::filesystem::path& image_path);

// The truth object of a simulation written as `image_path`: the
// simulation's truth plus an `image` block (path, format from the
// extension, width, height, bit_depth).
nlohmann::json SimulationTruthJson(const SimulationResult& result,
                                   const std::filesystem::path& image_path,
                                   const CameraOptions& camera);

// Writes the image and its truth (TruthPathFor) atomically, after adding
// the image path and format to the truth. Throws OutputError (or InputError
// for an extension that does not fit the bit depth).
void WriteSimulation(const SimulationResult& result,
                     const std::filesystem::path& image_path,
                     const CameraOptions& camera);

}  // namespace figura
