// Shared helpers of the end-to-end tests: run the figura binary with
// captured output, read files, fresh scratch folders, fixtures.
#pragma once

#include <sys/wait.h>

#include <array>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>

namespace figura::e2e {

namespace fs = std::filesystem;

// Exit code and captured output of one run of the binary.
struct CommandOutcome {
  int exit_code = -1;
  std::string out;  // standard output
  std::string err;  // standard error
};

// The whole content of a file ("" if it cannot be read). Read with stdio:
// std::istreambuf_iterator trips -Wnull-dereference in GCC 12 at -O3.
inline std::string ReadFile(const fs::path& path) {
  std::string text;
  if (FILE* f = std::fopen(path.c_str(), "rb"); f != nullptr) {
    std::array<char, 4096> buffer{};
    std::size_t n = 0;
    while ((n = std::fread(buffer.data(), 1, buffer.size(), f)) > 0)
      text.append(buffer.data(), n);
    std::fclose(f);
  }
  return text;
}

// A fresh, empty folder under the build tree's test_tmp.
inline fs::path TempDir(const std::string& name) {
  const fs::path dir = fs::path(FIGURA_TEST_TMP) / name;
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// A file under tests/fixtures.
inline fs::path Fixture(const std::string& relative) {
  return fs::path(FIGURA_SOURCE_DIR) / "tests/fixtures" / relative;
}

// Runs `figura ARGS` (ARGS already quoted for the shell), capturing standard
// output and error into capture_dir/stdout.txt and stderr.txt.
inline CommandOutcome RunFigura(const std::string& args,
                                const fs::path& capture_dir) {
  fs::create_directories(capture_dir);
  const fs::path out = capture_dir / "stdout.txt";
  const fs::path err = capture_dir / "stderr.txt";
  const std::string command = std::string("'") + FIGURA_BINARY + "' " + args +
                              " >'" + out.string() + "' 2>'" + err.string() +
                              "' </dev/null";
  const int status = std::system(command.c_str());
  CommandOutcome run;
  run.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  run.out = ReadFile(out);
  run.err = ReadFile(err);
  return run;
}

// As above, capturing into a folder named after `tag` under test_tmp.
inline CommandOutcome RunFigura(const std::string& args,
                                const std::string& tag) {
  return RunFigura(args, fs::path(FIGURA_TEST_TMP) / "e2e_capture" / tag);
}

// Number of newline characters in a text.
inline int CountLines(const std::string& text) {
  int lines = 0;
  for (char c : text) lines += c == '\n' ? 1 : 0;
  return lines;
}

}  // namespace figura::e2e
