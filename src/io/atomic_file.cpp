#include "io/atomic_file.h"

#include <fcntl.h>
#include <stdio.h>  // renameat2, RENAME_NOREPLACE (glibc >= 2.28)
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <string>
#include <system_error>

#include "core/error.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

std::atomic<unsigned> g_temp_counter{0};

std::string Reason(int err) {
  return std::error_code(err, std::generic_category()).message();
}

[[noreturn]] void Fail(const fs::path& dest, const std::string& what) {
  throw OutputError(dest.string() + ": " + what);
}

// Where and how a destination is written.
struct Target {
  fs::path path;        // the file to create or replace (symlinks resolved)
  bool stream = false;  // an existing device or FIFO: written in place
  bool exists = false;  // a regular file is already there
  mode_t mode = 0;      // its permission bits, kept on replacement
};

Target Inspect(const fs::path& dest, Overwrite overwrite) {
  if (dest.empty()) throw OutputError("output path is empty");
  if (dest == "-") Fail(dest, "standard output is not accepted here");
  Target t;
  t.path = dest;
  std::error_code ec;
  if (fs::is_symlink(fs::symlink_status(dest, ec))) {
    // Replace the file the link points to, not the link.
    const fs::path resolved = fs::weakly_canonical(dest, ec);
    if (ec) Fail(dest, "cannot resolve symbolic link (" + ec.message() + ")");
    t.path = resolved;
  }
  struct stat st {};
  if (::stat(t.path.c_str(), &st) == 0) {
    if (S_ISDIR(st.st_mode)) Fail(dest, "is a directory");
    if (S_ISCHR(st.st_mode) || S_ISFIFO(st.st_mode)) {
      t.stream = true;
      return t;
    }
    if (!S_ISREG(st.st_mode)) Fail(dest, "exists and is not a regular file");
    if (overwrite == Overwrite::kRefuse)
      Fail(dest, "exists; not overwritten (use --force)");
    t.exists = true;
    t.mode = st.st_mode & 07777;
    return t;
  }
  if (errno != ENOENT) Fail(dest, Reason(errno));
  const fs::path folder =
      t.path.has_parent_path() ? t.path.parent_path() : fs::path(".");
  if (::stat(folder.c_str(), &st) != 0) {
    Fail(dest,
         "cannot use folder " + folder.string() + " (" + Reason(errno) + ")");
  }
  if (!S_ISDIR(st.st_mode)) Fail(dest, folder.string() + " is not a folder");
  return t;
}

fs::path TempPathFor(const fs::path& target, const fs::path& folder) {
  const unsigned n = g_temp_counter.fetch_add(1);
  std::string name(1, '.');
  name.append(target.filename().string());
  name.append(".tmp-");
  name.append(std::to_string(::getpid()));
  name.push_back('-');
  name.append(std::to_string(n));
  return folder / name;
}

// Creates an empty temporary file next to `t.path` and returns its name and
// an open descriptor.
int CreateTemp(const Target& t, const fs::path& dest, fs::path* temp) {
  const fs::path folder =
      t.path.has_parent_path() ? t.path.parent_path() : fs::path(".");
  for (int attempt = 0; attempt < 100; ++attempt) {
    *temp = TempPathFor(t.path, folder);
    const int fd =
        ::open(temp->c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd >= 0) {
      if (t.exists) (void)::fchmod(fd, t.mode);
      return fd;
    }
    if (errno != EEXIST) {
      Fail(dest, "cannot create a file in " + folder.string() + " (" +
                     Reason(errno) + ")");
    }
  }
  Fail(dest, "cannot find a free temporary name in " + folder.string());
}

void WriteAll(int fd, std::string_view bytes, const fs::path& dest) {
  std::size_t done = 0;
  while (done < bytes.size()) {
    const ssize_t n = ::write(fd, bytes.data() + done, bytes.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      Fail(dest, "write failed (" + Reason(errno) + ")");
    }
    done += static_cast<std::size_t>(n);
  }
}

// Syncs and closes `fd`; throws on failure (the close is always done).
void SyncAndClose(int fd, const fs::path& dest) {
  const int sync_rc = ::fsync(fd);
  const int sync_err = errno;
  const int close_rc = ::close(fd);
  const int close_err = errno;
  // fsync on a FIFO or terminal is not supported: nothing to sync.
  if (sync_rc != 0 && sync_err != EINVAL && sync_err != EROFS) {
    Fail(dest, "write failed (" + Reason(sync_err) + ")");
  }
  if (close_rc != 0) Fail(dest, "write failed (" + Reason(close_err) + ")");
}

// Writes to an existing device or FIFO in place (no rename is possible).
void WriteStream(const fs::path& path, std::string_view bytes,
                 const fs::path& dest) {
  const int fd = ::open(path.c_str(), O_WRONLY | O_CLOEXEC);
  if (fd < 0) Fail(dest, "cannot open for writing (" + Reason(errno) + ")");
  try {
    WriteAll(fd, bytes, dest);
  } catch (...) {
    ::close(fd);
    throw;
  }
  SyncAndClose(fd, dest);
}

// Moves the finished temporary file over the target.
void Commit(const fs::path& temp, const Target& t, Overwrite overwrite,
            const fs::path& dest) {
  int rc = 0;
  if (overwrite == Overwrite::kRefuse) {
    // Atomic "create if absent": fails with EEXIST if a file appeared since.
    rc = ::renameat2(AT_FDCWD, temp.c_str(), AT_FDCWD, t.path.c_str(),
                     RENAME_NOREPLACE);
    if (rc != 0 && (errno == EINVAL || errno == ENOSYS)) {
      // File system without RENAME_NOREPLACE: check, then rename.
      std::error_code ec;
      if (fs::exists(t.path, ec)) {
        errno = EEXIST;
      } else {
        rc = ::rename(temp.c_str(), t.path.c_str());
      }
    }
    if (rc != 0 && errno == EEXIST)
      Fail(dest, "exists; not overwritten (use --force)");
  } else {
    rc = ::rename(temp.c_str(), t.path.c_str());
  }
  if (rc != 0)
    Fail(dest,
         "cannot rename the temporary file into place (" + Reason(errno) + ")");
  // Make the rename itself durable (best effort: some file systems refuse).
  const fs::path folder =
      t.path.has_parent_path() ? t.path.parent_path() : fs::path(".");
  const int dir = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dir >= 0) {
    (void)::fsync(dir);
    ::close(dir);
  }
}

void RemoveQuietly(const fs::path& temp) {
  std::error_code ec;
  fs::remove(temp, ec);
}

}  // namespace

void WriteFileAtomic(const fs::path& path, std::string_view bytes,
                     Overwrite overwrite) {
  const Target t = Inspect(path, overwrite);
  if (t.stream) {
    WriteStream(t.path, bytes, path);
    return;
  }
  fs::path temp;
  const int fd = CreateTemp(t, path, &temp);
  try {
    try {
      WriteAll(fd, bytes, path);
    } catch (...) {
      ::close(fd);
      throw;
    }
    SyncAndClose(fd, path);
    Commit(temp, t, overwrite, path);
  } catch (...) {
    RemoveQuietly(temp);
    throw;
  }
}

void WriteFilesTogether(const std::vector<FileContent>& files) {
  std::vector<Target> targets;
  targets.reserve(files.size());
  for (const FileContent& f : files) {
    targets.push_back(Inspect(f.path, Overwrite::kAllow));
  }
  std::vector<fs::path> temps(files.size());
  try {
    for (std::size_t i = 0; i < files.size(); ++i) {
      if (targets[i].stream)
        WriteStream(targets[i].path, files[i].bytes, files[i].path);
    }
    for (std::size_t i = 0; i < files.size(); ++i) {
      if (targets[i].stream) continue;
      const int fd = CreateTemp(targets[i], files[i].path, &temps[i]);
      try {
        WriteAll(fd, files[i].bytes, files[i].path);
      } catch (...) {
        ::close(fd);
        throw;
      }
      SyncAndClose(fd, files[i].path);
    }
    for (std::size_t i = 0; i < files.size(); ++i) {
      if (targets[i].stream) continue;
      Commit(temps[i], targets[i], Overwrite::kAllow, files[i].path);
      temps[i].clear();
    }
  } catch (...) {
    for (const fs::path& temp : temps) {
      if (!temp.empty()) RemoveQuietly(temp);
    }
    throw;
  }
}

void WriteViaTemp(const fs::path& path,
                  const std::function<void(const fs::path&)>& write_temp,
                  Overwrite overwrite) {
  const Target t = Inspect(path, overwrite);
  fs::path temp;
  if (t.stream) {
    // Produce the file in the system's temporary folder, then copy it into
    // the device or FIFO.
    Target scratch;
    std::error_code ec;
    scratch.path = fs::temp_directory_path(ec) / path.filename();
    if (ec) Fail(path, "no temporary folder (" + ec.message() + ")");
    ::close(CreateTemp(scratch, path, &temp));
  } else {
    ::close(CreateTemp(t, path, &temp));
  }
  try {
    try {
      write_temp(temp);
    } catch (const OutputError&) {
      throw;
    } catch (const std::exception& e) {
      Fail(path, e.what());
    }
    const int fd = ::open(temp.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) Fail(path, "temporary file vanished (" + Reason(errno) + ")");
    if (t.stream) {
      std::string bytes;
      char buf[1 << 16];
      while (true) {
        const ssize_t n = ::read(fd, buf, sizeof buf);
        if (n < 0 && errno == EINTR) continue;
        if (n < 0) {
          const int err = errno;
          ::close(fd);
          Fail(path,
               "cannot read back the temporary file (" + Reason(err) + ")");
        }
        if (n == 0) break;
        bytes.append(buf, static_cast<std::size_t>(n));
      }
      ::close(fd);
      WriteStream(t.path, bytes, path);
      RemoveQuietly(temp);
      return;
    }
    SyncAndClose(fd, path);
    Commit(temp, t, overwrite, path);
  } catch (...) {
    RemoveQuietly(temp);
    throw;
  }
}

}  // namespace figura
