// Writing images atomically: TIFF through libtiff (8/16-bit unsigned grey or
// RGB, 32-bit float grey; deflate compression with a predictor; strips),
// PNG/JPEG through OpenCV in the codec module, loaded on first use
// (io/codec_module.h; 8 or 16-bit, grey or BGR).
#pragma once

#include <filesystem>
#include <opencv2/core.hpp>
#include <string>

namespace figura {

// How an image is encoded; the format follows the extension (.tif/.tiff,
// .png, .jpg/.jpeg).
struct ImageWriteOptions {
  int jpeg_quality = 95;  // 1..100
  bool overwrite = true;  // false: refuse an existing file (OutputError)

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// Writes `image` (CV_8U, CV_16U, or for TIFF CV_32F; 1 or 3 channels, BGR) to
// `path` atomically (a temporary name in the same folder, then rename).
// Throws OutputError naming the file on failure; leaves no partial file.
void WriteImage(const std::filesystem::path& path, const cv::Mat& image,
                const ImageWriteOptions& options = {});

// Encodes `image` as WriteImage would write it to `path` (format from its
// extension, `path` named in messages) and returns the file bytes; writes
// nothing. Throws OutputError.
std::string EncodeImage(const std::filesystem::path& path, const cv::Mat& image,
                        const ImageWriteOptions& options = {});

}  // namespace figura
