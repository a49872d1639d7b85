// Helpers for the report tests: private scratch folders and running an
// external program (poppler-utils, Debian's /usr/bin/python3, node,
// chromium) with its standard output captured.
#pragma once

#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <system_error>

namespace figura::report_test {

namespace fs = std::filesystem;

// Removes this process's scratch folders when the test program exits, unless
// FIGURA_KEEP_TEST_FILES is set (to look at the PDFs).
struct ScratchCleanup {
  ScratchCleanup() = default;
  ScratchCleanup(const ScratchCleanup&) = delete;
  ScratchCleanup& operator=(const ScratchCleanup&) = delete;
  ~ScratchCleanup() {
    if (std::getenv("FIGURA_KEEP_TEST_FILES") != nullptr) return;
    std::error_code ec;
    std::string suffix(1, '-');
    suffix += std::to_string(::getpid());
    for (const auto& e :
         fs::directory_iterator(fs::path(FIGURA_TEST_TMP) / "report", ec)) {
      const std::string name = e.path().filename().string();
      if (name.size() > suffix.size() &&
          name.compare(name.size() - suffix.size(), suffix.size(), suffix) ==
              0) {
        fs::remove_all(e.path(), ec);
      }
    }
  }
};
inline ScratchCleanup g_scratch_cleanup;

// A fresh, empty folder under FIGURA_TEST_TMP, private to this process.
inline fs::path ScratchDir(const std::string& name) {
  std::string folder = name;
  folder += '-';
  folder += std::to_string(::getpid());
  const fs::path dir = fs::path(FIGURA_TEST_TMP) / "report" / folder;
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// `s` quoted for /bin/sh.
inline std::string ShellQuote(const std::string& s) {
  std::string out = "'";
  for (const char c : s) {
    if (c == '\'') {
      out += "'\\''";
    } else {
      out += c;
    }
  }
  return out + "'";
}

// Output and exit code of a shell command (standard error discarded unless
// the command redirects it).
struct RunResult {
  std::string out;
  int code = -1;
};

inline RunResult RunCommand(const std::string& command) {
  RunResult r;
  FILE* pipe = ::popen((command + " 2>/dev/null").c_str(), "r");
  if (pipe == nullptr) return r;
  char buf[4096];
  std::size_t n = 0;
  while ((n = std::fread(buf, 1, sizeof buf, pipe)) > 0) r.out.append(buf, n);
  const int status = ::pclose(pipe);
  r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return r;
}

// True when `program` is an executable file.
inline bool Have(const std::string& program) {
  return ::access(program.c_str(), X_OK) == 0;
}

inline std::string ReadAll(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

inline void WriteAll(const fs::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
}

}  // namespace figura::report_test
