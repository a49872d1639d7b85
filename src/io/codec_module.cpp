#include "io/codec_module.h"

#include <dlfcn.h>

#include <algorithm>
#include <atomic>
#include <cstring>
#include <mutex>
#include <system_error>
#include <utility>

#include "core/error.h"
#include "io/codecs/codec_abi.h"

// Set by the build (CMakeLists.txt, figura_io); empty folders are skipped.
#ifndef FIGURA_CODEC_MODULE_NAME
#define FIGURA_CODEC_MODULE_NAME "figura_opencv_codecs.so"
#endif
#ifndef FIGURA_CODEC_INSTALL_DIR
#define FIGURA_CODEC_INSTALL_DIR ""
#endif
#ifndef FIGURA_CODEC_RELATIVE_DIR
#define FIGURA_CODEC_RELATIVE_DIR ""
#endif
#ifndef FIGURA_CODEC_BUILD_DIR
#define FIGURA_CODEC_BUILD_DIR ""
#endif

namespace figura {
namespace {

namespace fs = std::filesystem;

// Set once the shared module has loaded.
std::atomic<bool> g_shared_loaded{false};

// Size of the reason buffer handed to the module.
constexpr std::size_t kErrorBytes = 512;

// The last dlerror() text, or `fallback`.
std::string DlError(const std::string& fallback) {
  const char* text = dlerror();
  return text != nullptr ? text : fallback;
}

const char* FormatName(EncodedFormat format) {
  return format == EncodedFormat::kJpeg ? "jpeg" : "png";
}

}  // namespace

DecodedPixels::DecodedPixels(DecodedPixels&& other) noexcept
    : view_(std::move(other.view_)),
      handle_(std::exchange(other.handle_, nullptr)),
      release_(std::exchange(other.release_, nullptr)) {}

DecodedPixels& DecodedPixels::operator=(DecodedPixels&& other) noexcept {
  if (this != &other) {
    if (handle_ != nullptr && release_ != nullptr) release_(handle_);
    view_ = std::move(other.view_);
    handle_ = std::exchange(other.handle_, nullptr);
    release_ = std::exchange(other.release_, nullptr);
  }
  return *this;
}

DecodedPixels::~DecodedPixels() {
  view_.release();  // the view must not outlive the module's buffer
  if (handle_ != nullptr && release_ != nullptr) release_(handle_);
}

CodecModule::CodecModule(const std::vector<fs::path>& folders) {
  std::vector<fs::path> tried;
  std::string reasons;
  for (const fs::path& folder : folders) {
    if (folder.empty()) continue;
    const fs::path candidate = folder / CodecModuleFileName();
    if (std::find(tried.begin(), tried.end(), candidate) != tried.end())
      continue;
    tried.push_back(candidate);
    std::error_code ec;
    if (!fs::is_regular_file(candidate, ec)) continue;  // the usual case
    void* handle = dlopen(candidate.c_str(), RTLD_NOW | RTLD_LOCAL);
    if (handle == nullptr) {
      reasons += "; " + DlError("cannot load " + candidate.string());
      continue;
    }
    void* symbol = dlsym(handle, kFiguraCodecEntryName);
    FiguraCodecEntryFn entry = nullptr;
    static_assert(sizeof(entry) == sizeof(symbol));
    std::memcpy(&entry, &symbol, sizeof(entry));
    const FiguraCodecTable* table = entry != nullptr ? entry() : nullptr;
    if (table == nullptr || table->abi_version != kFiguraCodecAbiVersion ||
        table->table_size < sizeof(FiguraCodecTable) ||
        table->decode == nullptr || table->encode == nullptr ||
        table->release == nullptr) {
      reasons += "; " + candidate.string() + ": not a codec module of " +
                 "interface version " + std::to_string(kFiguraCodecAbiVersion);
      if (table != nullptr) {
        reasons +=
            " (it has version " + std::to_string(table->abi_version) + ")";
      }
      dlclose(handle);
      continue;
    }
    // Loaded; the handle stays open for the life of the process.
    table_ = table;
    path_ = candidate;
    return;
  }
  problem_ = std::string("image codec module ") + CodecModuleFileName() +
             (reasons.empty() ? " not found" : " not loaded") + " (looked in";
  for (std::size_t i = 0; i < tried.size(); ++i) {
    problem_ += (i == 0 ? " " : ", ") + tried[i].parent_path().string();
  }
  if (tried.empty()) problem_ += " no folder";
  problem_ += ")" + reasons;
}

DecodedPixels CodecModule::Decode(const std::string& name, const char* kind,
                                  std::string_view bytes) const {
  if (table_ == nullptr) {
    throw InputError(name + ": cannot decode " + kind + ": " + problem_);
  }
  FiguraCodecPixels out{};
  char error[kErrorBytes] = {};
  const int status =
      table_->decode(reinterpret_cast<const unsigned char*>(bytes.data()),
                     bytes.size(), &out, error, sizeof(error));
  if (status == kFiguraCodecCorrupt)
    throw InputError(name + ": truncated or corrupt " + kind);
  if (status != kFiguraCodecOk) {
    throw InputError(name + ": cannot decode " + kind + " (" + error + ")");
  }
  const int depth = out.bits == 16 ? CV_16U : CV_8U;
  if (out.data == nullptr || out.rows <= 0 || out.cols <= 0 ||
      out.channels < 1 || out.channels > 4 ||
      (out.bits != 8 && out.bits != 16) ||
      out.step < static_cast<std::size_t>(out.cols) *
                     static_cast<std::size_t>(out.channels * out.bits / 8)) {
    table_->release(out.handle);
    throw InputError(name + ": cannot decode " + kind +
                     " (unexpected answer from the codec module)");
  }
  cv::Mat view(out.rows, out.cols, CV_MAKETYPE(depth, out.channels),
               const_cast<unsigned char*>(out.data), out.step);
  return {std::move(view), out.handle, table_->release};
}

std::string CodecModule::Encode(const std::string& name, const cv::Mat& image,
                                EncodedFormat format, int jpeg_quality) const {
  const char* kind = FormatName(format);
  if (table_ == nullptr) {
    throw OutputError(name + ": cannot encode " + kind + ": " + problem_);
  }
  const int depth = image.depth();
  if (image.empty() || image.dims != 2 || (depth != CV_8U && depth != CV_16U) ||
      (image.channels() != 1 && image.channels() != 3)) {
    throw OutputError(name + ": cannot encode " + kind +
                      " (need 8/16-bit, 1 or 3 channels)");
  }
  const FiguraCodecImageView view{image.ptr(),      image.step[0],
                                  image.rows,       image.cols,
                                  image.channels(), depth == CV_16U ? 16 : 8};
  FiguraCodecBytes out{};
  char error[kErrorBytes] = {};
  const int status = table_->encode(
      &view,
      format == EncodedFormat::kJpeg ? kFiguraCodecJpeg : kFiguraCodecPng,
      jpeg_quality, &out, error, sizeof(error));
  if (status != kFiguraCodecOk) {
    throw OutputError(name + ": cannot encode " + kind + " (" + error + ")");
  }
  std::string bytes;
  try {
    bytes.assign(reinterpret_cast<const char*>(out.data), out.size);
  } catch (...) {
    table_->release(out.handle);
    throw;
  }
  table_->release(out.handle);
  return bytes;
}

const CodecModule& CodecModule::Shared() {
  static std::once_flag once;
  static const CodecModule* shared = nullptr;
  std::call_once(once, [] {
    // Never deleted: the module stays loaded until the process ends.
    shared = new CodecModule(CodecModuleFolders());
    g_shared_loaded.store(shared->loaded(), std::memory_order_release);
  });
  return *shared;
}

const char* CodecModuleFileName() { return FIGURA_CODEC_MODULE_NAME; }

std::vector<fs::path> CodecModuleFolders() {
  std::error_code ec;
  const fs::path exe = fs::read_symlink("/proc/self/exe", ec);
  return CodecModuleFoldersFor(ec ? fs::path() : exe);
}

std::vector<fs::path> CodecModuleFoldersFor(const fs::path& exe) {
  std::vector<fs::path> folders;
  if (!exe.empty()) {
    folders.push_back(exe.parent_path());
    // An installed tree moved to another prefix (or a package installed
    // under /usr): the module's folder relative to the binary's.
    if (*FIGURA_CODEC_RELATIVE_DIR != '\0') {
      folders.push_back(
          (exe.parent_path() / FIGURA_CODEC_RELATIVE_DIR).lexically_normal());
    }
  }
  if (*FIGURA_CODEC_INSTALL_DIR != '\0') {
    folders.emplace_back(FIGURA_CODEC_INSTALL_DIR);
  }
  // The build folder only for programs run from inside the build tree
  // (tests, benchmarks): an installed or packaged binary never looks there.
  const fs::path build_dir = FIGURA_CODEC_BUILD_DIR;
  if (!build_dir.empty() && !exe.empty()) {
    const fs::path rel =
        exe.lexically_normal().lexically_relative(build_dir.lexically_normal());
    if (!rel.empty() && *rel.begin() != "..") folders.push_back(build_dir);
  }
  return folders;
}

bool CodecModuleLoaded() {
  return g_shared_loaded.load(std::memory_order_acquire);
}

}  // namespace figura
