#include "io/image.h"

#include <cassert>
#include <climits>
#include <future>
#include <opencv2/imgcodecs.hpp>

#include "core/error.h"
#include "core/sha256.h"
#include "io/byte_source.h"
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

// Decodes a PNG, JPEG or BMP held in memory with OpenCV.
cv::Mat DecodeWithOpenCv(const MemorySource& source, ImageFormat format,
                         const ImageHeader& header) {
  const std::string_view bytes = source.Memory();
  const char* kind = ImageFormatName(format);
  if (format == ImageFormat::kJpeg && !JpegIsComplete(source)) {
    throw InputError(source.Name() +
                     ": truncated or corrupt jpeg (no end of image marker)");
  }
  if (bytes.size() > static_cast<std::size_t>(INT_MAX)) {
    throw InputError(source.Name() + ": " + kind +
                     " file too large to decode (limit 2 GiB)");
  }
  const cv::Mat encoded(1, static_cast<int>(bytes.size()), CV_8UC1,
                        const_cast<char*>(bytes.data()));
  cv::Mat decoded;
  try {
    decoded = cv::imdecode(encoded, cv::IMREAD_ANYDEPTH | cv::IMREAD_ANYCOLOR |
                                        cv::IMREAD_IGNORE_ORIENTATION);
  } catch (const cv::Exception& e) {
    throw InputError(source.Name() + ": cannot decode " + kind + " (" + e.err +
                     ")");
  }
  if (decoded.empty())
    throw InputError(source.Name() + ": truncated or corrupt " + kind);
  if (decoded.cols != header.width || decoded.rows != header.height) {
    throw InputError(source.Name() + ": corrupt " + kind +
                     " (decoded size differs from header)");
  }
  const int depth = decoded.depth();
  if (depth != CV_8U && depth != CV_16U) {
    throw InputError(source.Name() + ": unsupported " + kind +
                     " sample format");
  }
  return decoded;
}

}  // namespace

std::string LoadOptions::Check() const {
  if (max_pixels <= 0) return "max_pixels must be positive";
  if (max_file_bytes == 0) return "max_file_bytes must be positive";
  return {};
}

Image LoadImage(const std::filesystem::path& path, const LoadOptions& options) {
  CheckOptions(options);
  const FileSource file(path, options.max_file_bytes);
  const std::string bytes = file.ReadAll();
  const MemorySource source(file.Name(), bytes);
  // The hash runs beside the decode (both only read `bytes`).
  std::future<std::string> digest =
      std::async(std::launch::async, [&bytes] { return Sha256Hex(bytes); });
  Image image;
  image.info.path = file.Name();
  const ImageFormat format = DetectImageFormat(source);
  if (format == ImageFormat::kTiff) {
    image.pixels = DecodeTiff(source, options.max_pixels, &image.info);
  } else {
    const ImageHeader header = ReadImageHeader(source, format);
    CheckPixelLimit(source.Name(), header.width, header.height,
                    options.max_pixels);
    FillFromHeader(format, header, &image.info);
    const cv::Mat decoded = DecodeWithOpenCv(source, format, header);
    // The decoded depth decides the scale (a 16-bit PNG stays 16-bit).
    image.info.bit_depth = decoded.depth() == CV_16U ? 16 : 8;
    image.info.full_scale = decoded.depth() == CV_16U ? 65535.0 : 255.0;
    image.pixels = LuminanceFromBgr(decoded);
  }
  image.info.sha256 = digest.get();
  assert(image.pixels.type() == CV_32FC1);
  return image;
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
