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

#include "scratch_dir.h"

namespace figura::report_test {

namespace fs = std::filesystem;

// A fresh, empty folder under FIGURA_TEST_TMP/report, private to this
// process (kept when FIGURA_KEEP_TEST_FILES is set, to look at the PDFs).
inline fs::path ScratchDir(const std::string& name) {
  return test::ScratchDir("report", name);
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
