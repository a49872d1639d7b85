// Atomic file output: write to a temporary name in the destination folder
// (".<name>.tmp-<pid>-<n>"), fsync, then rename over the final name. A reader
// never sees a half-written file; a failure leaves nothing behind.
//
// Special destinations: a symbolic link is followed (the file it points to is
// replaced, the link kept); an existing character device or FIFO
// (/dev/stdout, /dev/null, a pipe) cannot be renamed over, so it is written
// in place, and write errors such as ENOSPC from /dev/full are reported; a
// directory or other special file is refused. The refusal of Overwrite::
// kRefuse applies to regular files and is atomic (renameat2 with
// RENAME_NOREPLACE where the file system supports it).
#pragma once

#include <filesystem>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

namespace figura {

// What to do when the destination exists.
enum class Overwrite { kAllow, kRefuse };

// Writes `bytes` to `path` atomically. Throws OutputError "<path>: <reason>"
// (no space, missing or read-only folder, a directory, refused overwrite:
// "exists; not overwritten (use --force)"); "-" is not accepted here. A
// replaced file keeps its permission bits.
void WriteFileAtomic(const std::filesystem::path& path, std::string_view bytes,
                     Overwrite overwrite = Overwrite::kAllow);

// Calls `write_temp(temp_path)` to produce the file under a temporary name in
// the same folder, then renames it to `path`. Removes the temporary file on
// any exception, which is rethrown (OutputError as is; any other
// std::exception becomes OutputError "<path>: <what>"). For a device or FIFO
// destination the temporary file lives in the system temporary folder and
// its bytes are then written into the destination.
void WriteViaTemp(
    const std::filesystem::path& path,
    const std::function<void(const std::filesystem::path&)>& write_temp,
    Overwrite overwrite = Overwrite::kAllow);

// One file of a set written together by WriteFilesTogether.
struct FileContent {
  std::filesystem::path path;
  std::string bytes;
};

// Writes a set of files so that a failure leaves every destination as it
// was: each is checked and its bytes written to a temporary file (a device or
// FIFO destination, which cannot be renamed over, is written in place first)
// before any is renamed over its final name; then the temporaries are
// renamed in the given order (put the file that marks the set complete
// last). Throws OutputError "<path>: <reason>" naming the file that failed;
// the temporaries are removed. Only a failed rename itself, after earlier
// ones, leaves the set mixed.
void WriteFilesTogether(const std::vector<FileContent>& files);

}  // namespace figura
