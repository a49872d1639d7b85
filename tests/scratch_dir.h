// Private scratch folders for test programs: one area per layer under
// FIGURA_TEST_TMP (e.g. test_tmp/io), each folder named with this process's
// id, so that the test processes ctest runs side by side never share one;
// removed when the test program exits.
#pragma once

#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <set>
#include <string>
#include <system_error>

namespace figura::test {

// Suffix that keeps scratch folders of concurrent test processes apart
// (ctest runs each test in its own process, several at a time).
inline std::string ProcessSuffix() {
  std::string suffix(1, '-');
  suffix += std::to_string(::getpid());
  return suffix;
}

// Removes, when the test program exits, this process's folders in every
// area ScratchDir was asked for, unless FIGURA_KEEP_TEST_FILES is set (to
// look at the files a test wrote).
class ScratchCleanup {
 public:
  ScratchCleanup() = default;
  ScratchCleanup(const ScratchCleanup&) = delete;
  ScratchCleanup& operator=(const ScratchCleanup&) = delete;
  ~ScratchCleanup() {
    if (std::getenv("FIGURA_KEEP_TEST_FILES") != nullptr) return;
    std::error_code ec;
    const std::string suffix = ProcessSuffix();
    for (const std::filesystem::path& root : roots_) {
      for (const auto& e : std::filesystem::directory_iterator(root, ec)) {
        const std::string name = e.path().filename().string();
        if (name.size() > suffix.size() &&
            name.compare(name.size() - suffix.size(), suffix.size(), suffix) ==
                0) {
          std::filesystem::remove_all(e.path(), ec);
        }
      }
    }
  }
  void Add(const std::filesystem::path& root) { roots_.insert(root); }

 private:
  std::set<std::filesystem::path> roots_;
};

// A fresh, empty folder FIGURA_TEST_TMP/<area>/<name>-<pid>, private to this
// process and removed when it exits (ScratchCleanup).
inline std::filesystem::path ScratchDir(const std::string& area,
                                        const std::string& name) {
  static ScratchCleanup cleanup;
  const std::filesystem::path root =
      std::filesystem::path(FIGURA_TEST_TMP) / area;
  cleanup.Add(root);
  std::filesystem::path dir = root / (name + ProcessSuffix());
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

}  // namespace figura::test
