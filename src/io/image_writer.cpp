#include "io/image_writer.h"

#include <algorithm>
#include <cctype>
#include <cstring>
#include <opencv2/imgproc.hpp>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/version.h"
#include "io/atomic_file.h"
#include "io/codec_module.h"
#include "io/tiff_io.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

enum class OutFormat { kTiff, kPng, kJpeg };

// Target size of one TIFF strip before compression.
constexpr std::size_t kStripBytes = std::size_t{256} << 10;

[[noreturn]] void Fail(const fs::path& path, const std::string& what) {
  throw OutputError(path.string() + ": " + what);
}

OutFormat FormatFor(const fs::path& path) {
  std::string ext = path.extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) {
    return static_cast<char>(std::tolower(c));
  });
  if (ext == ".tif" || ext == ".tiff") return OutFormat::kTiff;
  if (ext == ".png") return OutFormat::kPng;
  if (ext == ".jpg" || ext == ".jpeg") return OutFormat::kJpeg;
  Fail(path, "unknown image extension (use .tif, .tiff, .png, .jpg or .jpeg)");
}

// Encodes an 8/16-bit (1 or 3 channel, BGR) or 32-bit float grey image as a
// deflate-compressed TIFF in memory. Integer data uses the horizontal
// differencing predictor; float data none (the floating-point predictor is
// not decoded by every reader).
std::string EncodeTiff(const fs::path& path, const cv::Mat& image) {
  const int depth = image.depth();
  const int channels = image.channels();
  const bool is_float = depth == CV_32F;
  if (is_float && channels != 1)
    Fail(path, "float TIFF output must be one channel");
  const auto bytes_per_sample = static_cast<std::size_t>(image.elemSize1());
  const std::size_t row_bytes =
      static_cast<std::size_t>(image.cols) * image.elemSize();
  const auto rows_per_strip =
      static_cast<std::uint32_t>(std::clamp<std::size_t>(
          kStripBytes / row_bytes, 1, static_cast<std::size_t>(image.rows)));

  TiffMessages messages;
  TiffMemoryFile file;
  const TiffHandle tif = OpenTiffForWriting(path.string(), &file, &messages);
  const auto fail = [&](const std::string& what) {
    Fail(path, what + (messages.first_error.empty()
                           ? ""
                           : " (" + messages.first_error + ")"));
  };
  if (!tif) fail("cannot encode TIFF");
  TIFF* t = tif.get();
  const std::string software = std::string(kToolName) + " " + Version();
  const bool ok =
      TIFFSetField(t, TIFFTAG_IMAGEWIDTH,
                   static_cast<std::uint32_t>(image.cols)) == 1 &&
      TIFFSetField(t, TIFFTAG_IMAGELENGTH,
                   static_cast<std::uint32_t>(image.rows)) == 1 &&
      TIFFSetField(t, TIFFTAG_BITSPERSAMPLE,
                   static_cast<std::uint16_t>(8 * bytes_per_sample)) == 1 &&
      TIFFSetField(t, TIFFTAG_SAMPLESPERPIXEL,
                   static_cast<std::uint16_t>(channels)) == 1 &&
      TIFFSetField(t, TIFFTAG_SAMPLEFORMAT,
                   is_float ? SAMPLEFORMAT_IEEEFP : SAMPLEFORMAT_UINT) == 1 &&
      TIFFSetField(t, TIFFTAG_PHOTOMETRIC,
                   channels == 3 ? PHOTOMETRIC_RGB : PHOTOMETRIC_MINISBLACK) ==
          1 &&
      TIFFSetField(t, TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG) == 1 &&
      TIFFSetField(t, TIFFTAG_COMPRESSION, COMPRESSION_ADOBE_DEFLATE) == 1 &&
      TIFFSetField(t, TIFFTAG_PREDICTOR,
                   is_float ? PREDICTOR_NONE : PREDICTOR_HORIZONTAL) == 1 &&
      TIFFSetField(t, TIFFTAG_ROWSPERSTRIP, rows_per_strip) == 1 &&
      TIFFSetField(t, TIFFTAG_SOFTWARE, software.c_str()) == 1;
  if (!ok) fail("cannot encode TIFF");

  // TIFF stores RGB; the caller's BGR image is left untouched.
  cv::Mat rgb;
  if (channels == 3) {
    cv::cvtColor(image, rgb, cv::COLOR_BGR2RGB);
  } else {
    rgb = image;
  }
  std::vector<std::uint8_t> strip(row_bytes * rows_per_strip);
  std::uint32_t index = 0;
  for (int y0 = 0; y0 < image.rows;
       y0 += static_cast<int>(rows_per_strip), ++index) {
    const int rows =
        std::min(static_cast<int>(rows_per_strip), image.rows - y0);
    for (int r = 0; r < rows; ++r) {
      std::memcpy(strip.data() + static_cast<std::size_t>(r) * row_bytes,
                  rgb.ptr(y0 + r), row_bytes);
    }
    // The predictor works in place, so the strip is refilled every time.
    if (TIFFWriteEncodedStrip(
            t, index, strip.data(),
            static_cast<tmsize_t>(row_bytes * static_cast<std::size_t>(rows))) <
        0) {
      fail("cannot encode TIFF");
    }
  }
  if (TIFFWriteDirectory(t) != 1 || TIFFFlush(t) != 1)
    fail("cannot encode TIFF");
  return std::move(file.bytes);
}

// Encodes a PNG or JPEG with the codec module (loaded on first use).
std::string EncodeWithModule(const fs::path& path, const cv::Mat& image,
                             OutFormat format,
                             const ImageWriteOptions& options) {
  if (format == OutFormat::kJpeg) {
    if (image.depth() != CV_8U) Fail(path, "JPEG output must be 8-bit");
  } else if (image.depth() != CV_8U && image.depth() != CV_16U) {
    Fail(path, "PNG output must be 8 or 16-bit");
  }
  return CodecModule::Shared().Encode(
      path.string(), image,
      format == OutFormat::kJpeg ? EncodedFormat::kJpeg : EncodedFormat::kPng,
      options.jpeg_quality);
}

}  // namespace

std::string ImageWriteOptions::Check() const {
  if (jpeg_quality < 1 || jpeg_quality > 100)
    return "jpeg_quality must be between 1 and 100";
  return {};
}

std::string EncodeImage(const fs::path& path, const cv::Mat& image,
                        const ImageWriteOptions& options) {
  const std::string problem = options.Check();
  if (!problem.empty()) Fail(path, problem);
  const OutFormat format = FormatFor(path);
  if (image.empty()) Fail(path, "no image to write");
  const int depth = image.depth();
  if (depth != CV_8U && depth != CV_16U && depth != CV_32F) {
    Fail(path,
         "unsupported pixel type (need 8/16-bit unsigned or 32-bit float)");
  }
  if (image.channels() != 1 && image.channels() != 3) {
    Fail(path, "unsupported channel count " + std::to_string(image.channels()) +
                   " (need 1 or 3)");
  }
  return format == OutFormat::kTiff
             ? EncodeTiff(path, image)
             : EncodeWithModule(path, image, format, options);
}

void WriteImage(const fs::path& path, const cv::Mat& image,
                const ImageWriteOptions& options) {
  const std::string bytes = EncodeImage(path, image, options);
  WriteFileAtomic(path, bytes,
                  options.overwrite ? Overwrite::kAllow : Overwrite::kRefuse);
}

}  // namespace figura
