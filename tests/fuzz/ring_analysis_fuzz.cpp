// libFuzzer target: the per-photo ring analysis (fringe/ring_analysis.h
// AnalyseRings: detection then fit) on small images, with the options a
// user types going through RingsOptionsFromSettings as in a job file.
//
// Input layout (8 header bytes, then samples):
//   [0] width  = 8 + b % 89   (8..96 px)
//   [1] height = 8 + b % 89
//   [2] bits 0-1 samples: 0 8-bit, 1 16-bit little-endian, 2 float b/255,
//                         3 raw float32 little-endian (NaN/Inf/huge pass
//                         through, as from a float TIFF)
//       bit 2 view = transmitted, bit 3 contact = edge,
//       bit 4 aperture-centre given, bit 5 aperture-diameter given,
//       bit 6 reference-radius given (a test plate), bit 7 its sign
//   [3] sectors = 1 + b      [4] outlier-threshold = b / 16
//   [5], [6] aperture centre as a fraction of width, height
//   [7] aperture diameter as a fraction of 1.5 * max(width, height),
//       reference radius |R| = 5 mm + b mm
//   rest: samples row by row, repeated when short (zeros when none).
// Properties: only InputError refuses input (invalid options); a photo
// gives a result, an error result has a reason, a usable one finite
// numbers (rings_check.h).
#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <opencv2/core.hpp>
#include <sstream>
#include <string>

#include "fringe/ring_analysis.h"
#include "fuzz_util.h"
#include "inspect/job_file.h"
#include "io/image.h"
#include "rings_check.h"

namespace {

constexpr std::size_t kHeaderBytes = 8;
constexpr int kMinSide = 8;
constexpr int kSideRange = 89;  // sides 8..96

std::string Text(double v) {
  std::ostringstream out;
  out.precision(9);
  out << v;
  return out.str();
}

// Sample i of the pixel bytes (cycled); `bytes_per_sample` of 1, 2 or 4.
std::uint32_t SampleBits(const std::uint8_t* pixels, std::size_t count,
                         std::size_t i, std::size_t bytes_per_sample) {
  std::uint32_t bits = 0;
  for (std::size_t k = 0; k < bytes_per_sample; ++k) {
    const std::uint32_t byte =
        count == 0 ? 0U : pixels[(i * bytes_per_sample + k) % count];
    bits |= byte << (8U * k);
  }
  return bits;
}

figura::Image MakeImage(const std::uint8_t* header, const std::uint8_t* pixels,
                        std::size_t count) {
  const int width = kMinSide + header[0] % kSideRange;
  const int height = kMinSide + header[1] % kSideRange;
  const int mode = header[2] & 3;
  figura::Image image;
  image.pixels.create(height, width, CV_32FC1);
  const std::size_t bytes_per_sample = mode == 1 ? 2 : mode == 3 ? 4 : 1;
  std::size_t i = 0;
  for (int y = 0; y < height; ++y) {
    auto* row = image.pixels.ptr<float>(y);
    for (int x = 0; x < width; ++x, ++i) {
      const std::uint32_t bits = SampleBits(pixels, count, i, bytes_per_sample);
      switch (mode) {
        case 0:
        case 1:
          row[x] = static_cast<float>(bits);
          break;
        case 2:
          row[x] = static_cast<float>(bits) / 255.0F;
          break;
        default:
          std::memcpy(&row[x], &bits, sizeof(float));
      }
    }
  }
  figura::ImageInfo& info = image.info;
  info.path = "fuzz.tif";
  info.format = "tiff";
  info.width = width;
  info.height = height;
  info.channels = 1;
  info.is_float = mode >= 2;
  info.bit_depth = mode == 0 ? 8 : mode == 1 ? 16 : 32;
  info.full_scale = mode == 0 ? 255.0 : mode == 1 ? 65535.0 : 1.0;
  info.sha256 = std::string(64, '0');
  return image;
}

figura::SettingMap MakeSettings(const std::uint8_t* h, int width, int height) {
  figura::SettingMap s;
  const std::string where = "fuzz";
  s.Add("wavelength", "546.07nm", where);
  s.Add("pixel-pitch", "10um", where);
  s.Add("view", (h[2] & 4U) != 0 ? "transmitted" : "reflected", where);
  s.Add("contact", (h[2] & 8U) != 0 ? "edge" : "centre", where);
  s.Add("sectors", std::to_string(1 + h[3]), where);
  s.Add("outlier-threshold", Text(h[4] / 16.0), where);
  if ((h[2] & 16U) != 0) {
    s.Add("aperture-centre",
          Text(h[5] / 255.0 * width) + "," + Text(h[6] / 255.0 * height),
          where);
  }
  if ((h[2] & 32U) != 0) {
    s.Add("aperture-diameter",
          Text(h[7] / 255.0 * 1.5 * std::max(width, height)), where);
  }
  if ((h[2] & 64U) != 0) {
    const double r_mm = 5.0 + h[7];
    s.Add("reference-radius", Text((h[2] & 128U) != 0 ? -r_mm : r_mm) + "mm",
          where);
  }
  return s;
}

}  // namespace

extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  cv::setNumThreads(0);
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data,
                                      std::size_t size) {
  if (size < kHeaderBytes) return -1;  // not kept in the corpus
  const figura::Image image =
      MakeImage(data, data + kHeaderBytes, size - kHeaderBytes);
  figura::fuzz::RefuseOnlyWithInputError([&] {
    figura::SettingMap settings =
        MakeSettings(data, image.info.width, image.info.height);
    const figura::RingsOptions options =
        figura::RingsOptionsFromSettings(settings);
    const figura::RingsResult result = figura::AnalyseRings(image, options);
    figura::fuzz::CheckRingsResult(result, options);
  });
  return 0;
}
