// Loading fringe photographs: TIFF through libtiff (8/16-bit unsigned,
// 32-bit float; grey or RGB; strips or tiles; any compression libtiff
// reads), PNG/JPEG/BMP through OpenCV in the codec module, loaded on first
// use (io/codec_module.h; 16-bit kept). Formats are recognised
// by their signature, not their extension. Sizes are checked from the header
// before any pixel buffer is allocated.
#pragma once

#include <cstdint>
#include <filesystem>
#include <opencv2/core.hpp>
#include <string>
#include <string_view>

namespace figura {

// Facts about a loaded image, written into every result's `input`.
struct ImageInfo {
  std::string path;
  std::string format;  // "tiff", "png", "jpeg", "bmp"
  int width = 0;
  int height = 0;
  int bit_depth = 0;  // bits per sample: 8, 16 or 32
  int channels = 0;   // samples per pixel in the file: 1, 3 or 4
  bool is_float = false;
  std::string sha256;       // of the file bytes
  double full_scale = 0.0;  // 255, 65535, or 1.0 for float data
};

// Limits applied while loading.
struct LoadOptions {
  // Refuse images with more pixels than this (checked from the header).
  std::int64_t max_pixels = 200'000'000;
  // Refuse files larger than this many bytes.
  std::uintmax_t max_file_bytes = std::uintmax_t{4} << 30;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// A photograph as one grey channel of 32-bit floats in the file's own scale
// (0..255, 0..65535, or the float values), plus its metadata. Colour is
// reduced to luminance with Rec. 601 weights (0.299 R + 0.587 G + 0.114 B).
struct Image {
  cv::Mat pixels;  // CV_32FC1, rows = height
  ImageInfo info;
};

// Loads an image: the file is read once into memory and both the SHA-256 and
// the pixels come from those bytes. TIFF: the first page; min-is-white grey
// is inverted to full_scale - value; float NaN passes through. JPEG/PNG/BMP:
// EXIF orientation is ignored (pixels as stored). Throws InputError with one
// line naming the file and the problem (missing, a directory or other
// non-regular file, unreadable, empty, unknown format, truncated or corrupt,
// too large, unsupported sample format).
Image LoadImage(const std::filesystem::path& path,
                const LoadOptions& options = {});

// Decodes a file already held in memory exactly as LoadImage does; `name`
// stands for the file in info.path and in messages.
Image DecodeImage(const std::string& name, std::string_view bytes,
                  const LoadOptions& options = {});

// Loads a picture for display, not measurement (a plot, a thumbnail): any
// format LoadImage reads, as 8-bit BGR (CV_8UC3; grey repeated, 16-bit
// scaled by 255/65535, alpha dropped, TIFF as its grey scaled to 0..255).
// Checks and errors as LoadImage.
cv::Mat LoadPicture(const std::filesystem::path& path,
                    const LoadOptions& options = {});

// Reads only the header: format, size, depth, channels (no pixels, no hash).
// Throws InputError like LoadImage.
ImageInfo ProbeImage(const std::filesystem::path& path,
                     const LoadOptions& options = {});

}  // namespace figura
