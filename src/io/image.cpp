#include "io/image.h"

#include <cassert>
#include <climits>
#include <cstdint>
#include <future>
#include <opencv2/imgproc.hpp>
#include <string>

#include "core/error.h"
#include "core/sha256.h"
#include "io/byte_source.h"
#include "io/codec_module.h"
#include "io/image_header.h"
#include "io/luminance.h"
#include "io/tiff_decoder.h"

namespace figura {
namespace {

void FillFromHeader(ImageFormat format, const ImageHeader& h, ImageInfo* info) {
  info->format = ImageFormatName(format);
  info->width = static_cast<int>(h.width);
  info->height = static_cast<int>(h.height);
  info->bit_depth = h.bit_depth;
  info->channels = h.channels;
  info->is_float = false;
  info->full_scale = h.bit_depth == 16 ? 65535.0 : 255.0;
}

void CheckOptions(const LoadOptions& options) {
  const std::string problem = options.Check();
  if (!problem.empty()) throw InputError("image loading: " + problem);
}

// Decodes a PNG, JPEG or BMP held in memory with the codec module (loaded
// on first use).
DecodedPixels DecodeWithModule(const MemorySource& source, ImageFormat format,
                               const ImageHeader& header) {
  const char* kind = ImageFormatName(format);
  if (format == ImageFormat::kJpeg && !JpegIsComplete(source)) {
    throw InputError(source.Name() +
                     ": truncated or corrupt jpeg (no end of image marker)");
  }
  if (format == ImageFormat::kPng && !PngIsComplete(source)) {
    throw InputError(source.Name() +
                     ": truncated or corrupt png (no complete IEND chunk)");
  }
  if (source.Size() > static_cast<std::uint64_t>(INT_MAX)) {
    throw InputError(source.Name() + ": " + kind +
                     " file too large to decode (limit 2 GiB)");
  }
  DecodedPixels decoded =
      CodecModule::Shared().Decode(source.Name(), kind, source.Memory());
  if (decoded.pixels().cols != header.width ||
      decoded.pixels().rows != header.height) {
    throw InputError(source.Name() + ": corrupt " + kind +
                     " (decoded size differs from header)");
  }
  return decoded;
}

}  // namespace

std::string LoadOptions::Check() const {
  if (max_pixels <= 0) return "max_pixels must be positive";
  if (max_file_bytes == 0) return "max_file_bytes must be positive";
  return {};
}

Image DecodeImage(const std::string& name, std::string_view bytes,
                  const LoadOptions& options) {
  CheckOptions(options);
  if (bytes.empty()) throw InputError(name + ": empty file (0 bytes)");
  if (bytes.size() > options.max_file_bytes) {
    throw InputError(name + ": file too large (" +
                     std::to_string(bytes.size()) + " bytes, limit " +
                     std::to_string(options.max_file_bytes) + ")");
  }
  const MemorySource source(name, bytes);
  // The hash runs beside the decode (both only read `bytes`).
  std::future<std::string> digest =
      std::async(std::launch::async, [bytes] { return Sha256Hex(bytes); });
  Image image;
  image.info.path = name;
  const ImageFormat format = DetectImageFormat(source);
  if (format == ImageFormat::kTiff) {
    image.pixels = DecodeTiff(source, options.max_pixels, &image.info);
  } else {
    const ImageHeader header = ReadImageHeader(source, format);
    CheckPixelLimit(source.Name(), header.width, header.height,
                    options.max_pixels);
    FillFromHeader(format, header, &image.info);
    const DecodedPixels decoded = DecodeWithModule(source, format, header);
    // The decoded depth decides the scale (a 16-bit PNG stays 16-bit).
    const bool is16 = decoded.pixels().depth() == CV_16U;
    image.info.bit_depth = is16 ? 16 : 8;
    image.info.full_scale = is16 ? 65535.0 : 255.0;
    image.pixels = LuminanceFromBgr(decoded.pixels());
  }
  image.info.sha256 = digest.get();
  assert(image.pixels.type() == CV_32FC1);
  return image;
}

Image LoadImage(const std::filesystem::path& path, const LoadOptions& options) {
  CheckOptions(options);
  const FileSource file(path, options.max_file_bytes);
  const std::string bytes = file.ReadAll();
  return DecodeImage(file.Name(), bytes, options);
}

cv::Mat LoadPicture(const std::filesystem::path& path,
                    const LoadOptions& options) {
  CheckOptions(options);
  const FileSource file(path, options.max_file_bytes);
  const std::string bytes = file.ReadAll();
  const MemorySource source(file.Name(), bytes);
  const ImageFormat format = DetectImageFormat(source);
  cv::Mat picture;
  if (format == ImageFormat::kTiff) {
    ImageInfo info;
    const cv::Mat grey = DecodeTiff(source, options.max_pixels, &info);
    cv::Mat grey8;
    grey.convertTo(grey8, CV_8U, 255.0 / info.full_scale);
    cv::cvtColor(grey8, picture, cv::COLOR_GRAY2BGR);
    return picture;
  }
  const ImageHeader header = ReadImageHeader(source, format);
  CheckPixelLimit(source.Name(), header.width, header.height,
                  options.max_pixels);
  const DecodedPixels decoded = DecodeWithModule(source, format, header);
  cv::Mat samples = decoded.pixels();
  if (samples.depth() == CV_16U) {
    samples.convertTo(samples, CV_8U, 1.0 / 257.0);  // 65535 -> 255
  }
  switch (samples.channels()) {
    case 1:
      cv::cvtColor(samples, picture, cv::COLOR_GRAY2BGR);
      break;
    case 2:  // grey + alpha
      cv::extractChannel(samples, samples, 0);
      cv::cvtColor(samples, picture, cv::COLOR_GRAY2BGR);
      break;
    case 4:
      cv::cvtColor(samples, picture, cv::COLOR_BGRA2BGR);
      break;
    default:
      picture = samples.clone();  // the module's buffer goes away
  }
  return picture;
}

ImageInfo ProbeImage(const std::filesystem::path& path,
                     const LoadOptions& options) {
  CheckOptions(options);
  const FileSource file(path, options.max_file_bytes);
  ImageInfo info;
  info.path = file.Name();
  const ImageFormat format = DetectImageFormat(file);
  if (format == ImageFormat::kTiff) {
    ProbeTiff(file, options.max_pixels, &info);
  } else {
    const ImageHeader header = ReadImageHeader(file, format);
    CheckPixelLimit(file.Name(), header.width, header.height,
                    options.max_pixels);
    FillFromHeader(format, header, &info);
  }
  return info;
}

}  // namespace figura
