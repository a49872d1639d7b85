// libtiff plumbing shared by the TIFF decoder and writer: per-file error and
// warning handlers (OpenCV installs silent process-wide ones, so global
// handlers cannot be relied on), an allocation cap, and client callbacks that
// read from a ByteSource or write to a growing memory buffer.
#pragma once

#include <tiffio.h>

#include <memory>
#include <string>
#include <vector>

#include "io/byte_source.h"

namespace figura {

// Largest single allocation libtiff may make for one file (1 GiB).
inline constexpr tmsize_t kTiffMaxSingleAlloc = tmsize_t{1} << 30;

// Messages libtiff reported for one file.
struct TiffMessages {
  std::string first_error;            // empty when none
  std::vector<std::string> warnings;  // at most a few kept
};

// Closes a TIFF handle.
struct TiffCloser {
  void operator()(TIFF* tif) const { TIFFClose(tif); }
};
// An open TIFF handle.
using TiffHandle = std::unique_ptr<TIFF, TiffCloser>;

// Read position of a TIFF opened through OpenTiffForReading.
struct TiffReadClient {
  const ByteSource* source = nullptr;
  std::uint64_t pos = 0;
};

// Opens `source` for reading through client callbacks (memory-mapped when
// the source is in memory), with per-file handlers collecting into
// `messages`. `client` and `messages` must outlive the handle. Returns null
// on failure, with the reason in messages->first_error.
TiffHandle OpenTiffForReading(const ByteSource& source, TiffReadClient* client,
                              TiffMessages* messages);

// A growing in-memory file that libtiff writes into.
struct TiffMemoryFile {
  std::string bytes;
  std::uint64_t pos = 0;
};

// Opens `file` for writing a classic TIFF, with per-file handlers collecting
// into `messages`. Returns null on failure.
TiffHandle OpenTiffForWriting(const std::string& name, TiffMemoryFile* file,
                              TiffMessages* messages);

}  // namespace figura
