#include "io/byte_source.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <system_error>

#include "core/error.h"
#include "io/huge_pages.h"

namespace figura {
namespace {

std::string Reason(int err) {
  return std::error_code(err, std::generic_category()).message();
}

}  // namespace

std::int64_t MemorySource::ReadAt(std::uint64_t offset, void* out,
                                  std::size_t n) const noexcept {
  if (offset >= bytes_.size()) return 0;
  const std::size_t count = std::min<std::uint64_t>(n, bytes_.size() - offset);
  std::memcpy(out, bytes_.data() + offset, count);
  return static_cast<std::int64_t>(count);
}

FileSource::FileSource(const std::filesystem::path& path,
                       std::uintmax_t max_bytes)
    : name_(path.string()) {
  if (name_.empty()) throw InputError("image path is empty");
  // O_NONBLOCK so that opening a FIFO does not wait for a writer; it is
  // refused below anyway.
  fd_ = ::open(name_.c_str(), O_RDONLY | O_CLOEXEC | O_NONBLOCK);
  if (fd_ < 0) {
    const int err = errno;
    if (err == ENOENT) throw InputError(name_ + ": no such file");
    throw InputError(name_ + ": cannot open (" + Reason(err) + ")");
  }
  struct stat st {};
  if (::fstat(fd_, &st) != 0) {
    const int err = errno;
    ::close(fd_);
    throw InputError(name_ + ": cannot read file status (" + Reason(err) + ")");
  }
  std::string problem;
  if (S_ISDIR(st.st_mode)) {
    problem = ": is a directory, expected an image file";
  } else if (!S_ISREG(st.st_mode)) {
    problem = ": not a regular file (device, FIFO or socket)";
  } else if (st.st_size == 0) {
    problem = ": empty file (0 bytes)";
  } else if (static_cast<std::uintmax_t>(st.st_size) > max_bytes) {
    problem = ": file too large (" + std::to_string(st.st_size) +
              " bytes, limit " + std::to_string(max_bytes) + ")";
  }
  if (!problem.empty()) {
    ::close(fd_);
    throw InputError(name_ + problem);
  }
  size_ = static_cast<std::uint64_t>(st.st_size);
}

FileSource::~FileSource() {
  if (fd_ >= 0) ::close(fd_);
}

std::int64_t FileSource::ReadAt(std::uint64_t offset, void* out,
                                std::size_t n) const noexcept {
  auto* dst = static_cast<char*>(out);
  std::size_t done = 0;
  while (done < n) {
    const ssize_t got =
        ::pread(fd_, dst + done, n - done, static_cast<off_t>(offset + done));
    if (got < 0) {
      if (errno == EINTR) continue;
      return -1;
    }
    if (got == 0) break;
    done += static_cast<std::size_t>(got);
  }
  return static_cast<std::int64_t>(done);
}

std::string FileSource::ReadAll() const {
  std::string bytes;
  bytes.reserve(size_);
  AdviseHugePages(bytes.data(), size_);  // before the pages are first touched
  bytes.resize(size_);
  std::size_t done = 0;
  while (done < bytes.size()) {
    const ssize_t got = ::pread(fd_, bytes.data() + done, bytes.size() - done,
                                static_cast<off_t>(done));
    if (got < 0) {
      if (errno == EINTR) continue;
      throw InputError(name_ + ": read error (" + Reason(errno) + ")");
    }
    if (got == 0) {
      throw InputError(name_ + ": file shrank while being read (" +
                       std::to_string(done) + " of " + std::to_string(size_) +
                       " bytes)");
    }
    done += static_cast<std::size_t>(got);
  }
  return bytes;
}

}  // namespace figura
