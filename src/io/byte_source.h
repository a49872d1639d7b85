// Random access to the bytes of an input file, either held in memory (the
// whole file read once, so that its hash and its pixels come from the same
// bytes) or read on demand from an open file (header probing). The decoders
// (libtiff client, header parsers) read through this one interface.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>
#include <string_view>
#include <utility>

namespace figura {

// Read-only bytes with a size and a name for messages.
class ByteSource {
 public:
  ByteSource() = default;
  ByteSource(const ByteSource&) = delete;
  ByteSource& operator=(const ByteSource&) = delete;
  virtual ~ByteSource() = default;

  // Total number of bytes.
  [[nodiscard]] virtual std::uint64_t Size() const = 0;
  // Copies up to `n` bytes starting at `offset` into `out`. Returns the
  // number copied (short or 0 at the end), or -1 on a read error. Never
  // throws (it is called from C callbacks).
  virtual std::int64_t ReadAt(std::uint64_t offset, void* out,
                              std::size_t n) const noexcept = 0;
  // The whole contents when held in memory, else an empty view.
  [[nodiscard]] virtual std::string_view Memory() const noexcept { return {}; }
  // The file name used in messages.
  [[nodiscard]] virtual const std::string& Name() const = 0;
};

// Bytes already in memory (not owned: `bytes` must outlive the source).
class MemorySource final : public ByteSource {
 public:
  MemorySource(std::string name, std::string_view bytes)
      : name_(std::move(name)), bytes_(bytes) {}
  [[nodiscard]] std::uint64_t Size() const override { return bytes_.size(); }
  std::int64_t ReadAt(std::uint64_t offset, void* out,
                      std::size_t n) const noexcept override;
  [[nodiscard]] std::string_view Memory() const noexcept override {
    return bytes_;
  }
  [[nodiscard]] const std::string& Name() const override { return name_; }

 private:
  std::string name_;
  std::string_view bytes_;
};

// An input file opened for reading. The constructor refuses, with an
// InputError naming the file, anything that is not a readable, non-empty
// regular file of at most `max_bytes` bytes (missing, a directory, a device
// or FIFO, a symlink loop, permission denied, empty, too large).
class FileSource final : public ByteSource {
 public:
  FileSource(const std::filesystem::path& path, std::uintmax_t max_bytes);
  ~FileSource() override;
  [[nodiscard]] std::uint64_t Size() const override { return size_; }
  std::int64_t ReadAt(std::uint64_t offset, void* out,
                      std::size_t n) const noexcept override;
  [[nodiscard]] const std::string& Name() const override { return name_; }
  // Reads the whole file into memory. Throws InputError on a read error or
  // when the file changed size while being read.
  [[nodiscard]] std::string ReadAll() const;

 private:
  std::string name_;
  int fd_ = -1;
  std::uint64_t size_ = 0;
};

}  // namespace figura
