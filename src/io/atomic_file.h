// Atomic file output: write to a temporary name in the destination folder,
// flush and sync, then rename over the final name. A reader never sees a
// half-written file; a failure leaves nothing behind.
#pragma once

#include <filesystem>
#include <functional>
#include <string_view>

namespace figura {

// What to do when the destination exists.
enum class Overwrite { kAllow, kRefuse };

// Writes `bytes` to `path` atomically. Throws OutputError naming the file
// (no space, read-only folder, refused overwrite); "-" is not accepted here.
void WriteFileAtomic(const std::filesystem::path& path, std::string_view bytes,
                     Overwrite overwrite = Overwrite::kAllow);

// Calls `write_temp(temp_path)` to produce the file under a temporary name in
// the same folder, then renames it to `path`. Removes the temporary file on
// any exception, which is rethrown (library errors become OutputError).
void WriteViaTemp(
    const std::filesystem::path& path,
    const std::function<void(const std::filesystem::path&)>& write_temp,
    Overwrite overwrite = Overwrite::kAllow);

}  // namespace figura
