// Atomic output: complete files or nothing, no temporaries left behind,
// clear errors for full disks, missing or read-only folders, and refused
// overwrites.
#include "io/atomic_file.h"

#include <gtest/gtest.h>

#include <stdexcept>
#include <thread>

#include "core/error.h"
#include "io_test_util.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

// Runs `f`, expects OutputError, returns its message.
template <typename F>
std::string OutputErrorOf(F f) {
  try {
    f();
  } catch (const OutputError& e) {
    return e.what();
  }
  ADD_FAILURE() << "no OutputError";
  return {};
}

TEST(AtomicFile, WritesAndReplaces) {
  const fs::path dir = io_test::ScratchDir("atomic_basic");
  const fs::path path = dir / "result.json";
  WriteFileAtomic(path, "first\n");
  EXPECT_EQ(io_test::ReadBytes(path), "first\n");
  WriteFileAtomic(path, "second, longer\n");
  EXPECT_EQ(io_test::ReadBytes(path), "second, longer\n");
  WriteFileAtomic(path, "");
  EXPECT_EQ(io_test::ReadBytes(path), "");
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

TEST(AtomicFile, RefusedOverwriteKeepsTheFile) {
  const fs::path dir = io_test::ScratchDir("atomic_refuse");
  const fs::path path = dir / "report.json";
  WriteFileAtomic(path, "kept", Overwrite::kRefuse);  // absent: written
  const std::string what =
      OutputErrorOf([&] { WriteFileAtomic(path, "new", Overwrite::kRefuse); });
  EXPECT_EQ(what, path.string() + ": exists; not overwritten (use --force)");
  EXPECT_EQ(io_test::ReadBytes(path), "kept");
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

// /dev/full accepts the open and fails every write with ENOSPC (Linux
// null(4) man page): the error names the file and the reason.
TEST(AtomicFile, DeviceFullReportsNoSpace) {
  if (!fs::exists("/dev/full")) GTEST_SKIP() << "no /dev/full";
  const std::string what =
      OutputErrorOf([] { WriteFileAtomic("/dev/full", "x"); });
  EXPECT_NE(what.find("/dev/full"), std::string::npos) << what;
  EXPECT_NE(what.find("No space left on device"), std::string::npos) << what;
  EXPECT_TRUE(fs::is_character_file("/dev/full"));  // not replaced by a file
  const std::string via_temp = OutputErrorOf([] {
    WriteViaTemp("/dev/full", [](const fs::path& temp) {
      std::ofstream(temp) << "payload";
    });
  });
  EXPECT_NE(via_temp.find("No space left on device"), std::string::npos)
      << via_temp;
}

TEST(AtomicFile, DevicesAreWrittenInPlace) {
  WriteFileAtomic("/dev/null", "discarded");
  WriteViaTemp("/dev/null",
               [](const fs::path& temp) { std::ofstream(temp) << "x"; });
  EXPECT_TRUE(fs::is_character_file("/dev/null"));
}

// Folders that cannot take a file. Tests run as root, so permission bits do
// not stop writes: /proc and /sys refuse new files for everyone.
TEST(AtomicFile, UnwritableOrMissingFolders) {
  const fs::path dir = io_test::ScratchDir("atomic_folders");
  const fs::path missing = dir / "no_such_folder" / "out.json";
  std::string what = OutputErrorOf([&] { WriteFileAtomic(missing, "x"); });
  EXPECT_NE(what.find(missing.string()), std::string::npos) << what;
  EXPECT_NE(what.find("No such file or directory"), std::string::npos) << what;
  for (const char* path :
       {"/proc/figura_io_test.json", "/sys/figura_io_test.json"}) {
    if (!fs::exists(fs::path(path).parent_path())) continue;
    what = OutputErrorOf([&] { WriteFileAtomic(path, "x"); });
    EXPECT_NE(what.find(path), std::string::npos) << what;
    EXPECT_FALSE(fs::exists(path));
  }
  what = OutputErrorOf([&] { WriteFileAtomic(dir, "x"); });
  EXPECT_EQ(what, dir.string() + ": is a directory");
  io_test::WriteBytes(dir / "plain", "x");
  what =
      OutputErrorOf([&] { WriteFileAtomic(dir / "plain" / "out.json", "x"); });
  EXPECT_NE(what.find("Not a directory"), std::string::npos) << what;
  what = OutputErrorOf([&] { WriteFileAtomic("-", "x"); });
  EXPECT_NE(what.find("standard output"), std::string::npos) << what;
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

TEST(AtomicFile, ViaTempCleansUpOnFailure) {
  const fs::path dir = io_test::ScratchDir("atomic_via_temp");
  const fs::path path = dir / "plot.pdf";
  WriteViaTemp(path, [](const fs::path& temp) {
    EXPECT_EQ(temp.parent_path(), temp.parent_path());
    EXPECT_NE(temp.filename().string().find(".plot.pdf.tmp-"),
              std::string::npos);
    std::ofstream(temp) << "%PDF";
  });
  EXPECT_EQ(io_test::ReadBytes(path), "%PDF");
  // A library failure becomes an OutputError naming the destination.
  const std::string what = OutputErrorOf([&] {
    WriteViaTemp(path, [](const fs::path& temp) {
      std::ofstream(temp) << "half";
      throw std::runtime_error("surface error");
    });
  });
  EXPECT_EQ(what, path.string() + ": surface error");
  EXPECT_EQ(io_test::ReadBytes(path), "%PDF");  // the old file is intact
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
  EXPECT_THROW(WriteViaTemp(
                   path, [](const fs::path&) {}, Overwrite::kRefuse),
               OutputError);
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

// Writing through a symbolic link replaces the file it points to.
// A set of files: all replaced, or (when one destination cannot be
// written: a folder in its place, or /dev/full behind a link) none touched.
TEST(AtomicFile, FilesTogetherAllOrNone) {
  const fs::path dir = io_test::ScratchDir("atomic_together");
  const fs::path a = dir / "a.csv";
  const fs::path b = dir / "b.html";
  const fs::path c = dir / "c.json";
  WriteFilesTogether({{a, "a1"}, {b, "b1"}, {c, "c1"}});
  EXPECT_EQ(io_test::ReadBytes(a), "a1");
  EXPECT_EQ(io_test::ReadBytes(b), "b1");
  EXPECT_EQ(io_test::ReadBytes(c), "c1");

  fs::remove(b);
  fs::create_directory(b);
  std::string what = OutputErrorOf([&] {
    WriteFilesTogether({{a, "a2"}, {b, "b2"}, {c, "c2"}});
  });
  EXPECT_EQ(what, b.string() + ": is a directory");
  EXPECT_EQ(io_test::ReadBytes(a), "a1");
  EXPECT_EQ(io_test::ReadBytes(c), "c1");
  EXPECT_TRUE(io_test::TempFiles(dir).empty());

  if (!fs::exists("/dev/full")) GTEST_SKIP() << "no /dev/full";
  fs::remove(b);
  fs::create_symlink("/dev/full", b);
  what = OutputErrorOf([&] {
    WriteFilesTogether({{a, "a3"}, {b, "b3"}, {c, "c3"}});
  });
  EXPECT_NE(what.find(b.string()), std::string::npos) << what;
  EXPECT_NE(what.find("No space left on device"), std::string::npos) << what;
  EXPECT_EQ(io_test::ReadBytes(a), "a1");
  EXPECT_EQ(io_test::ReadBytes(c), "c1");
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

TEST(AtomicFile, SymlinkTargetReplaced) {
  const fs::path dir = io_test::ScratchDir("atomic_symlink");
  io_test::WriteBytes(dir / "target.txt", "old");
  fs::create_symlink("target.txt", dir / "link.txt");
  WriteFileAtomic(dir / "link.txt", "new");
  EXPECT_TRUE(fs::is_symlink(dir / "link.txt"));
  EXPECT_EQ(io_test::ReadBytes(dir / "target.txt"), "new");
}

// Concurrent writers of one name: the reader sees one complete version.
TEST(AtomicFile, ConcurrentWritersLeaveOneCompleteFile) {
  const fs::path dir = io_test::ScratchDir("atomic_concurrent");
  const fs::path path = dir / "shared.txt";
  const std::string a(100000, 'a');
  const std::string b(50000, 'b');
  std::thread ta([&] {
    for (int i = 0; i < 20; ++i) WriteFileAtomic(path, a);
  });
  std::thread tb([&] {
    for (int i = 0; i < 20; ++i) WriteFileAtomic(path, b);
  });
  for (int i = 0; i < 50; ++i) {
    const std::string seen = io_test::ReadBytes(path);
    EXPECT_TRUE(seen.empty() || seen == a || seen == b) << seen.size();
  }
  ta.join();
  tb.join();
  const std::string last = io_test::ReadBytes(path);
  EXPECT_TRUE(last == a || last == b);
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

}  // namespace
}  // namespace figura
