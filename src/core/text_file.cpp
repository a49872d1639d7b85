#include "core/text_file.h"

#include <fstream>
#include <sstream>
#include <system_error>

#include "core/error.h"

namespace figura {

std::string ReadTextFile(const std::filesystem::path& path,
                         std::uintmax_t max_bytes) {
  namespace fs = std::filesystem;
  std::error_code ec;
  const fs::file_status st = fs::status(path, ec);
  if (ec || !fs::exists(st)) {
    throw InputError(path.string() + ": no such file" +
                     (ec ? " (" + ec.message() + ")" : ""));
  }
  if (fs::is_directory(st))
    throw InputError(path.string() + ": is a directory, expected a file");
  const std::uintmax_t size = fs::file_size(path, ec);
  if (!ec && size > max_bytes) {
    throw InputError(path.string() + ": too large for a text file (" +
                     std::to_string(size) + " bytes, limit " +
                     std::to_string(max_bytes) + ")");
  }
  std::ifstream in(path, std::ios::binary);
  if (!in)
    throw InputError(path.string() + ": cannot open file (permission denied?)");
  std::ostringstream buf;
  buf << in.rdbuf();
  if (in.bad()) throw InputError(path.string() + ": read error");
  return buf.str();
}

}  // namespace figura
