// The plain C interface between figura_io and the image codec module
// (figura_opencv_codecs, built from opencv_codecs_module.cpp as a loadable
// module that alone links OpenCV's imgcodecs). figura_io loads the module
// with dlopen() only when a PNG, JPEG or BMP is read or written, so that
// starting the program does not load the ~140 libraries behind imgcodecs.
//
// The module exports one symbol, kFiguraCodecEntryName, a function returning
// a table of entry points. The caller checks abi_version (and that
// table_size covers the fields it uses) before calling anything. Only C
// types cross the boundary, and no exception does: every entry point returns
// a status and writes a one-line reason into the caller's buffer.
#pragma once

#include <cstddef>
#include <cstdint>

extern "C" {

// Bump when any struct or signature below changes.
inline constexpr std::uint32_t kFiguraCodecAbiVersion = 1;

// Name of the exported entry function (FiguraCodecEntryFn).
inline constexpr const char* kFiguraCodecEntryName = "figura_codec_entry";

// Return values of the entry points.
enum FiguraCodecStatus : int {
  kFiguraCodecOk = 0,
  kFiguraCodecFailed = 1,   // could not decode / encode; reason in `error`
  kFiguraCodecCorrupt = 2,  // decode(): the decoder gave no image (a
                            // truncated or corrupt file)
};

// Output formats of encode().
enum FiguraCodecFormat : int {
  kFiguraCodecPng = 1,
  kFiguraCodecJpeg = 2,
};

// Pixels decoded by the module, owned by it until release(handle).
// Samples are interleaved B, G, R(, A) as OpenCV stores them.
struct FiguraCodecPixels {
  void* handle;               // pass to release()
  const unsigned char* data;  // first row
  std::size_t step;           // bytes from one row to the next
  int rows;                   // image height in pixels
  int cols;                   // image width in pixels
  int channels;               // 1, 2, 3 or 4
  int bits;                   // bits per sample: 8 or 16 (unsigned)
};

// Pixels handed to the module for encoding (not owned by it).
struct FiguraCodecImageView {
  const unsigned char* data;  // first row
  std::size_t step;           // bytes from one row to the next
  int rows;                   // image height in pixels
  int cols;                   // image width in pixels
  int channels;               // 1 or 3 (B, G, R)
  int bits;                   // 8 or 16 (unsigned)
};

// Encoded file bytes, owned by the module until release(handle).
struct FiguraCodecBytes {
  void* handle;               // pass to release()
  const unsigned char* data;  // the encoded file
  std::size_t size;           // its length in bytes
};

// The entry points. `error` receives a NUL-terminated one-line reason of at
// most error_size bytes when the status is not kFiguraCodecOk.
struct FiguraCodecTable {
  std::uint32_t abi_version;  // kFiguraCodecAbiVersion of the module
  std::uint32_t table_size;   // sizeof(FiguraCodecTable) in the module
  // Decodes a PNG, JPEG or BMP file held in memory, keeping 16-bit samples
  // and ignoring EXIF orientation (pixels as stored).
  int (*decode)(const unsigned char* bytes, std::size_t size,
                FiguraCodecPixels* out, char* error, std::size_t error_size);
  // Encodes an 8/16-bit PNG (OpenCV's default settings) or an 8-bit JPEG
  // (`quality` 1..100; ignored for PNG).
  int (*encode)(const FiguraCodecImageView* image, int format, int quality,
                FiguraCodecBytes* out, char* error, std::size_t error_size);
  // Frees what a successful decode() or encode() returned (null: no-op).
  void (*release)(void* handle);
};

// Type of the exported entry function: returns the module's table (static
// storage, never null).
using FiguraCodecEntryFn = const FiguraCodecTable* (*)();

}  // extern "C"
