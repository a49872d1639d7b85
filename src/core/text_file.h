// Reading small text files (configs, job files, CSV) with one-line errors.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>

namespace figura {

// Largest text file we read whole (configs, manifests, CSV): 16 MiB.
inline constexpr std::uintmax_t kMaxTextFileBytes = 16u << 20;

// Reads a whole file. Throws InputError naming the file when it is missing,
// a directory, unreadable, or larger than max_bytes.
std::string ReadTextFile(const std::filesystem::path& path,
                         std::uintmax_t max_bytes = kMaxTextFileBytes);

}  // namespace figura
