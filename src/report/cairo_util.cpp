#include "report/cairo_util.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <opencv2/imgproc.hpp>

#include "core/error.h"

namespace figura {
namespace {

// `image` as 8-bit BGR (grey and BGRA converted, 16-bit scaled by 1/257).
cv::Mat ToBgr8(const cv::Mat& image) {
  cv::Mat eight;
  if (image.depth() == CV_8U) {
    eight = image;
  } else if (image.depth() == CV_16U) {
    image.convertTo(eight, CV_8U, 1.0 / 257.0);
  } else {
    cv::Mat f;
    image.convertTo(f, CV_64F);
    double lo = 0.0;
    double hi = 0.0;
    cv::patchNaNs(f, 0.0);
    cv::minMaxLoc(f.reshape(1), &lo, &hi);
    const double scale = hi > lo ? 255.0 / (hi - lo) : 0.0;
    f.convertTo(eight, CV_8U, scale, -lo * scale);
  }
  cv::Mat bgr;
  switch (eight.channels()) {
    case 1:
      cv::cvtColor(eight, bgr, cv::COLOR_GRAY2BGR);
      break;
    case 4:
      cv::cvtColor(eight, bgr, cv::COLOR_BGRA2BGR);
      break;
    case 3:
      bgr = eight;
      break;
    default:
      throw OutputError("picture with " + std::to_string(eight.channels()) +
                        " channels cannot be drawn");
  }
  return bgr;
}

cairo_status_t AppendBytes(void* closure, const unsigned char* data,
                           unsigned int length) {
  auto* out = static_cast<std::string*>(closure);
  out->append(reinterpret_cast<const char*>(data), length);
  return CAIRO_STATUS_SUCCESS;
}

}  // namespace

CairoSurface SurfaceFromMat(const cv::Mat& image) {
  if (image.empty()) return CairoSurface(nullptr);
  const cv::Mat bgr = ToBgr8(image);
  CairoSurface surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, bgr.cols, bgr.rows));
  if (cairo_surface_status(surface.get()) != CAIRO_STATUS_SUCCESS) {
    throw OutputError(
        std::string("picture: ") +
        cairo_status_to_string(cairo_surface_status(surface.get())));
  }
  cairo_surface_flush(surface.get());
  unsigned char* data = cairo_image_surface_get_data(surface.get());
  const int stride = cairo_image_surface_get_stride(surface.get());
  for (int y = 0; y < bgr.rows; ++y) {
    const auto* src = bgr.ptr<std::uint8_t>(y);
    auto* dst = reinterpret_cast<std::uint32_t*>(
        data + static_cast<std::ptrdiff_t>(y) * stride);
    for (int x = 0; x < bgr.cols; ++x) {
      const std::uint8_t* bgr_px = src + static_cast<std::ptrdiff_t>(3) * x;
      const std::uint32_t b = bgr_px[0];
      const std::uint32_t g = bgr_px[1];
      const std::uint32_t r = bgr_px[2];
      dst[x] = 0xFF000000U | (r << 16U) | (g << 8U) | b;  // native-endian xRGB
    }
  }
  cairo_surface_mark_dirty(surface.get());
  return surface;
}

std::string EncodePng(const cv::Mat& image, int max_side) {
  if (image.empty()) return {};
  cv::Mat small = image;
  const int longest = std::max(image.cols, image.rows);
  if (max_side > 0 && longest > max_side) {
    const double f = static_cast<double>(max_side) / longest;
    const cv::Size size(
        std::max(1, static_cast<int>(std::lround(image.cols * f))),
        std::max(1, static_cast<int>(std::lround(image.rows * f))));
    cv::resize(ToBgr8(image), small, size, 0, 0, cv::INTER_AREA);
  }
  const CairoSurface surface = SurfaceFromMat(small);
  std::string bytes;
  const cairo_status_t st =
      cairo_surface_write_to_png_stream(surface.get(), &AppendBytes, &bytes);
  if (st != CAIRO_STATUS_SUCCESS) {
    throw OutputError(std::string("PNG encoding: ") +
                      cairo_status_to_string(st));
  }
  return bytes;
}

std::string CleanUtf8(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  const auto* p = reinterpret_cast<const unsigned char*>(text.data());
  const std::size_t n = text.size();
  std::size_t i = 0;
  while (i < n) {
    const unsigned c = p[i];
    std::uint32_t cp = 0;
    std::size_t len = 0;
    if (c < 0x80U) {
      cp = c;
      len = 1;
    } else if ((c & 0xE0U) == 0xC0U) {
      cp = c & 0x1FU;
      len = 2;
    } else if ((c & 0xF0U) == 0xE0U) {
      cp = c & 0x0FU;
      len = 3;
    } else if ((c & 0xF8U) == 0xF0U) {
      cp = c & 0x07U;
      len = 4;
    }
    bool ok = len > 0 && i + len <= n;
    for (std::size_t k = 1; ok && k < len; ++k) {
      if ((p[i + k] & 0xC0U) != 0x80U) {
        ok = false;
      } else {
        cp = (cp << 6U) | (p[i + k] & 0x3FU);
      }
    }
    // Overlong forms, surrogates and values above U+10FFFF are invalid.
    if (ok && ((len == 2 && cp < 0x80U) || (len == 3 && cp < 0x800U) ||
               (len == 4 && cp < 0x10000U) ||
               (cp >= 0xD800U && cp <= 0xDFFFU) || cp > 0x10FFFFU)) {
      ok = false;
    }
    if (!ok) {
      out += "\uFFFD";
      ++i;
      continue;
    }
    if (cp < 0x20U || cp == 0x7FU || (cp >= 0x80U && cp <= 0x9FU)) {
      out += ' ';
    } else {
      out.append(text.substr(i, len));
    }
    i += len;
  }
  return out;
}

std::vector<std::size_t> CharBoundaries(std::string_view text) {
  std::vector<std::size_t> cuts;
  cuts.reserve(text.size() + 1);
  for (std::size_t i = 0; i < text.size(); ++i) {
    if ((static_cast<unsigned char>(text[i]) & 0xC0U) != 0x80U) {
      cuts.push_back(i);
    }
  }
  cuts.push_back(text.size());
  return cuts;
}

namespace {

// Drops the sign of a printed number whose digits are all zero ("-0.00").
std::string NoNegativeZero(std::string s) {
  if (!s.empty() && s[0] == '-' &&
      s.find_first_of("123456789", 1) == std::string::npos) {
    s.erase(0, 1);
  }
  return s;
}

}  // namespace

std::string FormatNumber(double value, int significant) {
  if (!std::isfinite(value)) return "\u2014";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*g", std::clamp(significant, 1, 17), value);
  std::string s = buf;
  // Only the mantissa decides whether it is a negative zero.
  const std::size_t e = s.find('e');
  if (e == std::string::npos) return NoNegativeZero(s);
  return s;
}

std::string FormatFixed(double value, int decimals) {
  if (!std::isfinite(value)) return "\u2014";
  char buf[400];
  std::snprintf(buf, sizeof buf, "%.*f", std::clamp(decimals, 0, 17), value);
  return NoNegativeZero(buf);
}

int DecimalsForUncertainty(double u) {
  if (!(u > 0.0) || !std::isfinite(u)) return 6;
  const int d = 1 - static_cast<int>(std::floor(std::log10(u)));
  return std::clamp(d, 0, 12);
}

}  // namespace figura
