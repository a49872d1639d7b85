// libFuzzer target: image decoding from memory (io/image.h DecodeImage):
// TIFF through libtiff, PNG/JPEG/BMP through the dlopen()ed codec module
// (io/codec_module.h), which must load at start-up or the target refuses to
// run (otherwise every PNG/JPEG would just be "module not loaded").
// Properties: only InputError refuses input, its message is one line that
// starts with the file name; a decoded image is CV_32FC1 of the header's
// size with the documented metadata, and integer samples lie in
// 0..full_scale.
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <opencv2/core.hpp>
#include <string>

#include "fuzz_util.h"
#include "io/codec_module.h"
#include "io/image.h"

namespace {

const char* const kName = "fuzz-input.img";

void CheckImage(const figura::Image& image) {
  using figura::fuzz::Require;
  const figura::ImageInfo& info = image.info;
  Require(image.pixels.type() == CV_32FC1, "pixels are not CV_32FC1");
  Require(image.pixels.cols == info.width && image.pixels.rows == info.height,
          "pixel size differs from info");
  Require(info.width > 0 && info.height > 0, "empty image accepted");
  Require(info.format == "tiff" || info.format == "png" ||
              info.format == "jpeg" || info.format == "bmp",
          "unknown format name");
  Require(info.bit_depth == 8 || info.bit_depth == 16 || info.bit_depth == 32,
          "bit depth not 8, 16 or 32");
  Require(info.channels >= 1 && info.channels <= 4, "channels not 1..4");
  Require(info.sha256.size() == 64, "sha256 is not 64 hex digits");
  Require(info.path == kName, "info.path is not the given name");
  if (info.is_float) {
    Require(info.full_scale == 1.0 && info.bit_depth == 32,
            "float image without full_scale 1 and 32 bits");
    return;
  }
  Require(info.full_scale == (info.bit_depth == 16 ? 65535.0 : 255.0),
          "full_scale does not match the bit depth");
  double lo = 0.0;
  double hi = 0.0;
  cv::minMaxLoc(image.pixels, &lo, &hi);
  // Luminance of 8/16-bit samples (Rec. 601 weights sum to 1); float
  // rounding allows a hair above full scale.
  Require(lo >= 0.0 && hi <= info.full_scale * (1.0 + 1e-6),
          "integer samples outside 0..full_scale");
}

}  // namespace

extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  cv::setNumThreads(0);
  const figura::CodecModule& module = figura::CodecModule::Shared();
  if (!module.loaded()) {
    std::fprintf(stderr, "image_decode_fuzz: codec module not loaded: %s\n",
                 module.problem().c_str());
    std::exit(1);
  }
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data,
                                      std::size_t size) {
  figura::LoadOptions options;
  // A cap far below the default (200 MP) keeps every exec small; the caps
  // themselves are what a hostile header meets (io/image_header.h).
  options.max_pixels = std::int64_t{1} << 22;
  try {
    CheckImage(
        figura::DecodeImage(kName, figura::fuzz::AsText(data, size), options));
  } catch (const figura::InputError& e) {
    const std::string message = e.what();
    figura::fuzz::Require(message.rfind(std::string(kName) + ": ", 0) == 0,
                          "error message does not start with the file name");
    figura::fuzz::Require(message.find('\n') == std::string::npos,
                          "error message is not one line");
  }
  return 0;
}
