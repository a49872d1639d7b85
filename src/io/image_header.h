// Recognising an image file by its signature and reading the size of a PNG,
// JPEG or BMP from its header, so that limits are enforced before any
// decoder allocates pixels. TIFF headers are read through libtiff
// (tiff_decoder.h).
#pragma once

#include <cstdint>
#include <string>

#include "io/byte_source.h"

namespace figura {

// The file formats we accept.
enum class ImageFormat { kTiff, kPng, kJpeg, kBmp };

// The name written in ImageInfo::format: "tiff", "png", "jpeg", "bmp".
const char* ImageFormatName(ImageFormat format);

// Recognises the format from the first bytes: TIFF "II*\0" / "MM\0*" (and
// BigTIFF "II+\0" / "MM\0+"), PNG "\x89PNG\r\n\x1a\n", JPEG FF D8 FF, BMP
// "BM". Throws InputError "<name>: not a TIFF, PNG, JPEG or BMP image"
// otherwise.
ImageFormat DetectImageFormat(const ByteSource& source);

// Size and samples as stored in a PNG, JPEG or BMP header.
struct ImageHeader {
  std::int64_t width = 0;
  std::int64_t height = 0;
  int bit_depth = 8;  // as decoded: 8, or 16 for 16-bit PNG
  int channels = 1;   // samples per pixel stored in the file
};

// Reads the header of a PNG (IHDR), JPEG (first SOFn segment) or BMP (file
// and DIB header). Throws InputError naming the file when the header is
// missing, truncated, or describes something we cannot decode (12-bit or
// lossless JPEG, a zero size).
ImageHeader ReadImageHeader(const ByteSource& source, ImageFormat format);

// True when a JPEG held in memory runs from SOI through its scans to an EOI
// marker (libjpeg silently pads a truncated file with grey, so truncation
// must be found here).
bool JpegIsComplete(const ByteSource& source);

// True when a PNG held in memory is a chain of whole chunks (4-byte
// big-endian length, type, data, CRC; PNG spec, ISO/IEC 15948 section 5.3)
// from the signature to an IEND chunk. A truncated file fails here with our
// own message, before libpng can print its own to standard error.
bool PngIsComplete(const ByteSource& source);

// Throws InputError when width x height exceeds max_pixels or a side does not
// fit in an int (OpenCV's limit).
void CheckPixelLimit(const std::string& name, std::int64_t width,
                     std::int64_t height, std::int64_t max_pixels);

}  // namespace figura
