// PNG, JPEG and BMP pixels come from the image codec module
// (figura_opencv_codecs, see io/codecs/codec_abi.h), which alone links
// OpenCV's imgcodecs and is opened with dlopen() on first need. Programs that
// only read TIFF never load it, and start without the ~140 libraries behind
// imgcodecs.
//
// Where the module is looked for, in order: the folder of the running
// executable (/proc/self/exe), the install folder (<libdir>/figura), the
// build folder it was built in (so test programs in other folders find it).
#pragma once

#include <filesystem>
#include <opencv2/core.hpp>
#include <string>
#include <string_view>
#include <vector>

struct FiguraCodecTable;

namespace figura {

// Pixels decoded by the module: a view into memory the module owns, given
// back when this object goes away. Move-only.
class DecodedPixels {
 public:
  DecodedPixels() = default;
  DecodedPixels(cv::Mat view, void* handle, void (*release)(void*))
      : view_(std::move(view)), handle_(handle), release_(release) {}
  DecodedPixels(DecodedPixels&& other) noexcept;
  DecodedPixels& operator=(DecodedPixels&& other) noexcept;
  DecodedPixels(const DecodedPixels&) = delete;
  DecodedPixels& operator=(const DecodedPixels&) = delete;
  ~DecodedPixels();

  // CV_8U or CV_16U with 1 to 4 channels (B, G, R, A); valid while this
  // object lives.
  [[nodiscard]] const cv::Mat& pixels() const { return view_; }

 private:
  cv::Mat view_;
  void* handle_ = nullptr;
  void (*release_)(void*) = nullptr;
};

// Output formats of the module.
enum class EncodedFormat { kPng, kJpeg };

// One attempt to load the module from a list of folders (the first that
// holds a loadable module with the right interface version wins). The module
// stays loaded for the life of the process.
class CodecModule {
 public:
  // Looks in `folders` in order. Never throws: a failure is kept in
  // problem().
  explicit CodecModule(const std::vector<std::filesystem::path>& folders);

  // True when the module was loaded and its interface version matches.
  [[nodiscard]] bool loaded() const { return table_ != nullptr; }
  // The module file that was loaded (empty when none).
  [[nodiscard]] const std::filesystem::path& path() const { return path_; }
  // Why no module was loaded, one line naming every place looked in (empty
  // when loaded).
  [[nodiscard]] const std::string& problem() const { return problem_; }

  // Decodes a PNG, JPEG or BMP file held in memory (16-bit kept, EXIF
  // orientation ignored). `kind` ("png", "jpeg", "bmp") names the format in
  // messages. Throws InputError "<name>: cannot decode <kind>: <reason>",
  // also when the module is not loaded.
  [[nodiscard]] DecodedPixels Decode(const std::string& name, const char* kind,
                                     std::string_view bytes) const;

  // Encodes an 8/16-bit, 1 or 3 channel (BGR) image as PNG, or an 8-bit one
  // as JPEG with `jpeg_quality` (1..100). Throws OutputError "<name>: cannot
  // encode <format>: <reason>", also when the module is not loaded.
  [[nodiscard]] std::string Encode(const std::string& name,
                                   const cv::Mat& image, EncodedFormat format,
                                   int jpeg_quality) const;

  // The process-wide module, loaded from CodecModuleFolders() on the first
  // call (thread-safe, once per process; a failure is not retried).
  static const CodecModule& Shared();

 private:
  const FiguraCodecTable* table_ = nullptr;
  std::filesystem::path path_;
  std::string problem_;
};

// File name of the module ("figura_opencv_codecs.so").
const char* CodecModuleFileName();

// The folders CodecModule::Shared() looks in, in order: the running
// executable's folder, the install folder relative to it, the install
// folder, and the build folder when the executable runs from inside it.
std::vector<std::filesystem::path> CodecModuleFolders();

// CodecModuleFolders() for an executable at `exe` (empty: unknown).
std::vector<std::filesystem::path> CodecModuleFoldersFor(
    const std::filesystem::path& exe);

// True once CodecModule::Shared() has loaded the module in this process
// (does not load it).
bool CodecModuleLoaded();

}  // namespace figura
