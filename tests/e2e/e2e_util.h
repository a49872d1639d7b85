// Shared helpers of the end-to-end tests: run the figura binary with
// captured output, read files, fresh scratch folders, fixtures.
#pragma once

#include <sys/wait.h>
#include <unistd.h>

#include <array>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <regex>
#include <string>
#include <utility>
#include <vector>

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
  fs::path dir = fs::path(FIGURA_TEST_TMP) / name;
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// A folder under the build tree's test_tmp named `prefix` followed by this
// process's id (not created): ctest runs the tests of one suite in parallel
// processes, each of which makes its own inputs there.
inline fs::path ProcessRoot(const std::string& prefix) {
  return fs::path(FIGURA_TEST_TMP) / (prefix + std::to_string(::getpid()));
}

// A file under tests/fixtures.
inline fs::path Fixture(const std::string& relative) {
  return fs::path(FIGURA_SOURCE_DIR) / "tests/fixtures" / relative;
}

// A path single-quoted for the shell (paths with a ' are not supported).
// Appending avoids GCC 12's false -Wrestrict on "'" + std::string.
inline std::string Quote(const fs::path& path) {
  std::string q(1, '\'');
  q += path.string();
  q += '\'';
  return q;
}

// Runs the shell command `command` with standard input from /dev/null and
// standard output and error captured into capture_dir/stdout.txt and
// stderr.txt (the tail of RunFigura and RunFiguraBounded).
inline CommandOutcome RunCaptured(std::string command,
                                  const fs::path& capture_dir) {
  fs::create_directories(capture_dir);
  const fs::path out = capture_dir / "stdout.txt";
  const fs::path err = capture_dir / "stderr.txt";
  command += " >" + Quote(out) + " 2>" + Quote(err) + " </dev/null";
  const int status = std::system(command.c_str());
  CommandOutcome run;
  run.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  run.out = ReadFile(out);
  run.err = ReadFile(err);
  return run;
}

// Runs `figura ARGS` (ARGS already quoted for the shell), capturing standard
// output and error into capture_dir/stdout.txt and stderr.txt.
inline CommandOutcome RunFigura(const std::string& args,
                                const fs::path& capture_dir) {
  return RunCaptured(Quote(FIGURA_BINARY) + " " + args, capture_dir);
}

// As above, capturing into a folder named after `tag` under test_tmp.
inline CommandOutcome RunFigura(const std::string& args,
                                const std::string& tag) {
  return RunFigura(args, fs::path(FIGURA_TEST_TMP) / "e2e_capture" / tag);
}

// As above for a literal tag (a const char* converts to both a path and a
// string: this overload makes such calls unambiguous).
inline CommandOutcome RunFigura(const std::string& args, const char* tag) {
  return RunFigura(args, std::string(tag));
}

// Number of newline characters in a text.
inline int CountLines(const std::string& text) {
  int lines = 0;
  for (char c : text) lines += c == '\n' ? 1 : 0;
  return lines;
}

// Whether a shell command exits 0 (its output discarded).
inline bool Succeeds(const std::string& command) {
  const std::string quiet = command + " >/dev/null 2>&1 </dev/null";
  return std::system(quiet.c_str()) == 0;
}

// The unprivileged user the bounded runs drop to when the tests run as root
// (root ignores file permissions): Debian's `nobody`.
inline constexpr int kNobodyId = 65534;

// setpriv (util-linux) arguments that run a command as kNobodyId.
inline std::string DropToNobody() {
  return "setpriv --reuid=65534 --regid=65534 --clear-groups -- ";
}

// Empty when the binary can run as kNobodyId and read `readable` (a folder
// or file the run needs), otherwise why not (used for GTEST_SKIP: no test
// that cannot fail).
inline std::string CannotRunAsNobody(const fs::path& readable) {
  if (!Succeeds("command -v setpriv")) return "setpriv (util-linux) missing";
  if (!Succeeds(DropToNobody() + "true")) {
    return "setpriv cannot switch to uid 65534 here (no CAP_SETUID?)";
  }
  if (!Succeeds(DropToNobody() + Quote(FIGURA_BINARY) + " --version")) {
    return std::string("uid 65534 cannot run ") + FIGURA_BINARY +
           " (a folder on its path is not searchable)";
  }
  if (!Succeeds(DropToNobody() + "test -r " + Quote(readable))) {
    return "uid 65534 cannot read " + readable.string();
  }
  return {};
}

// Bounds of one run: wall time (killed after it) and address space (a cap
// on virtual memory, so any huge allocation fails instead of swapping).
struct RunBounds {
  int seconds = 120;
  long long address_space_bytes = 3LL << 30;
  bool as_nobody = false;  // drop to kNobodyId (see CannotRunAsNobody)
};

// Exit code `timeout -s KILL` reports for a killed run (128 + SIGKILL).
inline constexpr int kKilledByTimeout = 137;

// Runs `figura ARGS` under `timeout` and `prlimit --as` (coreutils,
// util-linux), capturing as RunFigura. A run that hits the time bound
// exits kKilledByTimeout; one that overruns the memory cap gets a failed
// allocation.
inline CommandOutcome RunFiguraBounded(const std::string& args,
                                       const fs::path& capture_dir,
                                       const RunBounds& bounds) {
  std::string command = "timeout -s KILL " + std::to_string(bounds.seconds);
#ifdef FIGURA_SANITIZER_BUILD
  // AddressSanitizer reserves terabytes of shadow address space at start-up,
  // which no --as cap admits: the sanitizer tree runs without the cap, and
  // the memory bound is checked by the Release tree's run of these tests.
  command += ' ';
#else
  command +=
      " prlimit --as=" + std::to_string(bounds.address_space_bytes) + " -- ";
#endif
  if (bounds.as_nobody) command += DropToNobody();
  command += Quote(FIGURA_BINARY);
  command += ' ';
  command += args;
  return RunCaptured(std::move(command), capture_dir);
}

// The words "nan", "inf" or "infinity" (any case, as whole words, with an
// optional sign) in a text: a non-finite number printed as text. Returns
// each hit with a little context.
inline std::vector<std::string> NonFiniteTokens(const std::string& text) {
  static const std::regex kToken(
      R"((^|[^A-Za-z0-9_])[-+]?(nan|inf|infinity)([^A-Za-z0-9_]|$))",
      std::regex::icase);
  std::vector<std::string> hits;
  for (auto it = std::sregex_iterator(text.begin(), text.end(), kToken);
       it != std::sregex_iterator(); ++it) {
    const auto at = static_cast<std::size_t>(it->position());
    const std::size_t from = at > 30 ? at - 30 : 0;
    hits.push_back(text.substr(from, 70));
  }
  return hits;
}

// Files in `dir` (recursively) whose names contain ".tmp-": temporaries an
// atomic write left behind.
inline std::vector<std::string> LeftoverTemps(const fs::path& dir) {
  std::vector<std::string> found;
  std::error_code ec;
  for (fs::recursive_directory_iterator it(dir, ec), end; !ec && it != end;
       it.increment(ec)) {
    const std::string name = it->path().filename().string();
    if (name.find(".tmp-") != std::string::npos)
      found.push_back(it->path().string());
  }
  return found;
}

}  // namespace figura::e2e
