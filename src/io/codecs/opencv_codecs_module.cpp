// The image codec module: PNG, JPEG and BMP through OpenCV's imgcodecs,
// behind the C table of codec_abi.h. Built as a loadable module
// (figura_opencv_codecs) that figura_io opens on first need; the only file
// of the project that uses imgcodecs. Nothing here checks limits or
// signatures: the caller does that from the header before calling decode().
#include <algorithm>
#include <cstdint>
#include <cstring>
#include <exception>
#include <memory>
#include <new>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>
#include <string>
#include <type_traits>
#include <vector>

#include "io/codecs/codec_abi.h"

namespace figura {
namespace {

// Copies `text` into the caller's buffer, truncated and NUL-terminated.
void SetError(const std::string& text, char* error, std::size_t error_size) {
  if (error == nullptr || error_size == 0) return;
  const std::size_t n = std::min(text.size(), error_size - 1);
  std::memcpy(error, text.data(), n);
  error[n] = '\0';
}

// What a handle points to: the decoded Mat or the encoded bytes.
struct Owned {
  cv::Mat pixels;
  std::vector<unsigned char> bytes;
};

// The exception being handled as error text; call only inside a catch
// block (it rethrows to tell the kinds apart).
void SetErrorFromCurrentException(char* error,
                                  std::size_t error_size) noexcept {
  try {
    throw;
  } catch (const cv::Exception& e) {
    SetError(e.err, error, error_size);
  } catch (const std::bad_alloc&) {
    SetError("out of memory", error, error_size);
  } catch (const std::exception& e) {
    SetError(e.what(), error, error_size);
  } catch (...) {
    SetError("unknown error", error, error_size);
  }
}

int Decode(const unsigned char* bytes, std::size_t size, FiguraCodecPixels* out,
           char* error, std::size_t error_size) noexcept {
  try {
    if (bytes == nullptr || out == nullptr || size == 0 ||
        size > static_cast<std::size_t>(INT32_MAX)) {
      SetError("no bytes to decode or more than 2 GiB", error, error_size);
      return kFiguraCodecFailed;
    }
    // imdecode only reads the buffer.
    const cv::Mat encoded(1, static_cast<int>(size), CV_8UC1,
                          const_cast<unsigned char*>(bytes));
    auto owned = std::make_unique<Owned>();
    owned->pixels =
        cv::imdecode(encoded, cv::IMREAD_ANYDEPTH | cv::IMREAD_ANYCOLOR |
                                  cv::IMREAD_IGNORE_ORIENTATION);
    const cv::Mat& m = owned->pixels;
    if (m.empty()) {
      SetError("truncated or corrupt", error, error_size);
      return kFiguraCodecCorrupt;
    }
    if (m.depth() != CV_8U && m.depth() != CV_16U) {
      SetError("unsupported sample format", error, error_size);
      return kFiguraCodecFailed;
    }
    out->data = m.ptr();
    out->step = m.step[0];
    out->rows = m.rows;
    out->cols = m.cols;
    out->channels = m.channels();
    out->bits = m.depth() == CV_16U ? 16 : 8;
    out->handle = owned.release();
    return kFiguraCodecOk;
  } catch (...) {
    SetErrorFromCurrentException(error, error_size);
  }
  return kFiguraCodecFailed;
}

int Encode(const FiguraCodecImageView* image, int format, int quality,
           FiguraCodecBytes* out, char* error,
           std::size_t error_size) noexcept {
  try {
    if (image == nullptr || out == nullptr || image->data == nullptr ||
        image->rows <= 0 || image->cols <= 0 ||
        (image->channels != 1 && image->channels != 3) ||
        (image->bits != 8 && image->bits != 16)) {
      SetError("unsupported image for encoding", error, error_size);
      return kFiguraCodecFailed;
    }
    const int type =
        CV_MAKETYPE(image->bits == 16 ? CV_16U : CV_8U, image->channels);
    // imencode only reads the pixels.
    const cv::Mat pixels(image->rows, image->cols, type,
                         const_cast<unsigned char*>(image->data), image->step);
    std::vector<int> params;
    const char* ext = ".png";
    if (format == kFiguraCodecJpeg) {
      ext = ".jpg";
      params = {cv::IMWRITE_JPEG_QUALITY, quality};
    } else if (format != kFiguraCodecPng) {
      SetError("unknown output format", error, error_size);
      return kFiguraCodecFailed;
    }
    auto owned = std::make_unique<Owned>();
    if (!cv::imencode(ext, pixels, owned->bytes, params) ||
        owned->bytes.empty()) {
      SetError("encoder failed", error, error_size);
      return kFiguraCodecFailed;
    }
    out->data = owned->bytes.data();
    out->size = owned->bytes.size();
    out->handle = owned.release();
    return kFiguraCodecOk;
  } catch (...) {
    SetErrorFromCurrentException(error, error_size);
  }
  return kFiguraCodecFailed;
}

void Release(void* handle) noexcept { delete static_cast<Owned*>(handle); }

constexpr FiguraCodecTable kTable{kFiguraCodecAbiVersion,
                                  sizeof(FiguraCodecTable), &Decode, &Encode,
                                  &Release};

}  // namespace
}  // namespace figura

// The module's one exported symbol (see kFiguraCodecEntryName); the name is
// part of the C interface, hence not PascalCase.
// NOLINTBEGIN(readability-identifier-naming)
extern "C" __attribute__((visibility("default"))) const FiguraCodecTable*
figura_codec_entry() {
  return &figura::kTable;
}
// NOLINTEND(readability-identifier-naming)
static_assert(
    std::is_same_v<decltype(&figura_codec_entry), FiguraCodecEntryFn>);
