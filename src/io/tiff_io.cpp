#include "io/tiff_io.h"

#include <array>
#include <cstdarg>
#include <cstdio>
#include <cstring>

namespace figura {
namespace {

constexpr std::size_t kMaxWarnings = 8;

__attribute__((format(printf, 2, 0))) std::string Format(const char* module,
                                                         const char* fmt,
                                                         va_list ap) {
  std::array<char, 512> buf{};
  std::vsnprintf(buf.data(), buf.size(), fmt, ap);
  std::string text = buf.data();
  if (module != nullptr && *module != '\0')
    text = std::string(module) + ": " + text;
  // libtiff breaks some messages over lines ("...:\n  Value 32 of ...") and
  // quotes strings from the file: every run of control characters and the
  // blanks around it becomes one space, so that errors stay one line.
  std::string line;
  line.reserve(text.size());
  bool gap = false;
  for (const char c : text) {
    const auto u = static_cast<unsigned char>(c);
    if (u < 0x20 || u == 0x7f || c == ' ') {
      gap = true;
      continue;
    }
    if (gap && !line.empty()) line.push_back(' ');
    gap = false;
    line.push_back(c);
  }
  return line;
}

__attribute__((format(printf, 4, 0))) int OnError(TIFF* /*tif*/,
                                                  void* user_data,
                                                  const char* module,
                                                  const char* fmt, va_list ap) {
  auto* m = static_cast<TiffMessages*>(user_data);
  if (m != nullptr && m->first_error.empty())
    m->first_error = Format(module, fmt, ap);
  return 1;  // handled: do not call the global handlers
}

__attribute__((format(printf, 4, 0))) int OnWarning(TIFF* /*tif*/,
                                                    void* user_data,
                                                    const char* module,
                                                    const char* fmt,
                                                    va_list ap) {
  auto* m = static_cast<TiffMessages*>(user_data);
  if (m != nullptr && m->warnings.size() < kMaxWarnings) {
    m->warnings.push_back(Format(module, fmt, ap));
  }
  return 1;
}

// Per-file open options; freed after the open call (libtiff copies them).
struct OptionsDeleter {
  void operator()(TIFFOpenOptions* o) const { TIFFOpenOptionsFree(o); }
};
std::unique_ptr<TIFFOpenOptions, OptionsDeleter> MakeOptions(
    TiffMessages* messages) {
  std::unique_ptr<TIFFOpenOptions, OptionsDeleter> opts(TIFFOpenOptionsAlloc());
  if (!opts) return opts;
  TIFFOpenOptionsSetMaxSingleMemAlloc(opts.get(), kTiffMaxSingleAlloc);
  TIFFOpenOptionsSetErrorHandlerExtR(opts.get(), &OnError, messages);
  TIFFOpenOptionsSetWarningHandlerExtR(opts.get(), &OnWarning, messages);
  return opts;
}

tmsize_t ReadProc(thandle_t h, void* buf, tmsize_t n) {
  auto* c = static_cast<TiffReadClient*>(h);
  if (n < 0) return -1;
  const std::int64_t got =
      c->source->ReadAt(c->pos, buf, static_cast<std::size_t>(n));
  if (got < 0) return -1;
  c->pos += static_cast<std::uint64_t>(got);
  return static_cast<tmsize_t>(got);
}

tmsize_t NoWriteProc(thandle_t /*h*/, void* /*buf*/, tmsize_t /*n*/) {
  return -1;
}

toff_t ReadSeekProc(thandle_t h, toff_t off, int whence) {
  auto* c = static_cast<TiffReadClient*>(h);
  std::uint64_t base = 0;
  if (whence == SEEK_CUR) base = c->pos;
  if (whence == SEEK_END) base = c->source->Size();
  c->pos = base + off;
  return c->pos;
}

int ReadCloseProc(thandle_t /*h*/) { return 0; }

toff_t ReadSizeProc(thandle_t h) {
  return static_cast<TiffReadClient*>(h)->source->Size();
}

int MapProc(thandle_t h, void** base, toff_t* size) {
  const std::string_view mem =
      static_cast<TiffReadClient*>(h)->source->Memory();
  if (mem.empty()) return 0;
  // libtiff only reads through the mapping of a file opened for reading.
  *base = const_cast<char*>(mem.data());
  *size = mem.size();
  return 1;
}

void UnmapProc(thandle_t /*h*/, void* /*base*/, toff_t /*size*/) {}

// Writing client over a TiffMemoryFile.
tmsize_t MemReadProc(thandle_t h, void* buf, tmsize_t n) {
  auto* f = static_cast<TiffMemoryFile*>(h);
  if (n < 0) return -1;
  if (f->pos >= f->bytes.size()) return 0;
  const std::size_t count = std::min<std::uint64_t>(
      static_cast<std::uint64_t>(n), f->bytes.size() - f->pos);
  std::memcpy(buf, f->bytes.data() + f->pos, count);
  f->pos += count;
  return static_cast<tmsize_t>(count);
}

tmsize_t MemWriteProc(thandle_t h, void* buf, tmsize_t n) {
  auto* f = static_cast<TiffMemoryFile*>(h);
  if (n < 0) return -1;
  const auto count = static_cast<std::size_t>(n);
  try {
    if (f->pos + count > f->bytes.size()) f->bytes.resize(f->pos + count);
  } catch (const std::bad_alloc&) {
    return -1;
  }
  std::memcpy(f->bytes.data() + f->pos, buf, count);
  f->pos += count;
  return n;
}

toff_t MemSeekProc(thandle_t h, toff_t off, int whence) {
  auto* f = static_cast<TiffMemoryFile*>(h);
  std::uint64_t base = 0;
  if (whence == SEEK_CUR) base = f->pos;
  if (whence == SEEK_END) base = f->bytes.size();
  f->pos = base + off;
  return f->pos;
}

int MemCloseProc(thandle_t /*h*/) { return 0; }

toff_t MemSizeProc(thandle_t h) {
  return static_cast<TiffMemoryFile*>(h)->bytes.size();
}

int NoMapProc(thandle_t /*h*/, void** /*base*/, toff_t* /*size*/) { return 0; }

}  // namespace

TiffHandle OpenTiffForReading(const ByteSource& source, TiffReadClient* client,
                              TiffMessages* messages) {
  auto opts = MakeOptions(messages);
  if (!opts) {
    messages->first_error = "out of memory";
    return nullptr;
  }
  *client = TiffReadClient{&source, 0};
  TIFF* tif =
      TIFFClientOpenExt(source.Name().c_str(), "r", client, &ReadProc,
                        &NoWriteProc, &ReadSeekProc, &ReadCloseProc,
                        &ReadSizeProc, &MapProc, &UnmapProc, opts.get());
  if (tif == nullptr && messages->first_error.empty()) {
    messages->first_error = "cannot open";
  }
  return TiffHandle(tif);
}

TiffHandle OpenTiffForWriting(const std::string& name, TiffMemoryFile* file,
                              TiffMessages* messages) {
  auto opts = MakeOptions(messages);
  if (!opts) {
    messages->first_error = "out of memory";
    return nullptr;
  }
  TIFF* tif = TIFFClientOpenExt(
      name.c_str(), "w", file, &MemReadProc, &MemWriteProc, &MemSeekProc,
      &MemCloseProc, &MemSizeProc, &NoMapProc, &UnmapProc, opts.get());
  if (tif == nullptr && messages->first_error.empty()) {
    messages->first_error = "cannot create";
  }
  return TiffHandle(tif);
}

}  // namespace figura
