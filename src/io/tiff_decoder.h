// Decoding TIFF through libtiff from raw samples (never the 8-bit RGBA
// interface, which would scale 16-bit data down): 8/16-bit unsigned or
// 32-bit IEEE float samples; grey (min-is-black or min-is-white) or RGB,
// interleaved or in separate planes; strips or tiles; any compression
// libtiff decodes. Only the first image of a multi-page file is read.
#pragma once

#include <cstdint>
#include <opencv2/core.hpp>

#include "io/byte_source.h"
#include "io/image.h"

namespace figura {

// Largest strip or tile buffer the decoder allocates (1 GiB).
inline constexpr std::uint64_t kTiffMaxChunkBytes = std::uint64_t{1} << 30;

// Reads the header of the first image: fills format, width, height,
// bit_depth, channels, is_float and full_scale of `info`. Throws InputError
// naming the file for corrupt headers, unsupported sample formats, or more
// than max_pixels pixels.
void ProbeTiff(const ByteSource& source, std::int64_t max_pixels,
               ImageInfo* info);

// As ProbeTiff, then decodes the pixels to one grey CV_32FC1 channel in the
// file's own scale (Rec. 601 luma for RGB; min-is-white inverted as
// full_scale - value; float NaN passed through). Throws InputError for
// truncated or corrupt data.
cv::Mat DecodeTiff(const ByteSource& source, std::int64_t max_pixels,
                   ImageInfo* info);

}  // namespace figura
