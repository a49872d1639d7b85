// End-to-end output safety (issue 6): writing to a full device (/dev/full,
// ENOSPC on every write) or into a read-only folder gives one line naming
// the destination, exit code 2, and leaves neither a partial file nor a
// temporary one; a failed output does not leave a result JSON claiming a
// finished run. An interrupted lot (SIGINT after the first part), resumed
// with the same command, gives the same summary.csv byte for byte and the
// same summary.json except for started_utc/finished_utc (wall-clock times)
// and the per-part `skipped` flags (true for the parts the resumed run
// reused).
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "e2e/e2e_util.h"
#include "inspect/sim_lot.h"

namespace figura::e2e {
namespace {

// One folder per test process (ctest runs the tests of this suite in
// parallel processes, each of which builds its inputs).
fs::path Root() { return ProcessRoot("output_e2e_"); }

constexpr const char* kRingOptions =
    " --wavelength 546.07nm --pixel-pitch 32um";

class OutputSafetyE2e : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    fs::remove_all(Root());
    fs::create_directories(Root() / "lot");
    // Six parts of the simulated lot (fixed seeds), powers inside and
    // outside the +-8 fringe limit of the job.
    const double powers[] = {6.0, 5.0, 9.5, 6.5, 5.5, 7.0};
    for (int i = 0; i < 6; ++i) {
      const std::string name = "OW117-" + std::to_string(i + 1) + ".tif";
      figura::test::WriteLotPhoto(Root() / "lot" / name, powers[i],
                                  700 + static_cast<std::uint64_t>(i));
    }
    std::ofstream(Root() / "job.ini") << figura::test::LotJobText();
    // A carrier-fringe photo for `map`: the demo window (images_demo).
    const fs::path gap =
        fs::path(FIGURA_SOURCE_DIR) / "images_demo/flat-w01.ini";
    const CommandOutcome sim = RunFigura(
        "simulate --gap " + Quote(gap) + " --out " + Quote(MapPhoto()),
        Root() / "cap-sim");
    ASSERT_EQ(sim.exit_code, 0) << sim.err;
  }

  // A ring photo `rings` measures (6.5 fringes of power).
  static fs::path Photo() { return Root() / "lot/OW117-4.tif"; }
  static fs::path MapPhoto() { return Root() / "window.tif"; }
  // The photo for `command` with the options it needs.
  static std::string Input(const std::string& command) {
    return command == "rings"
               ? Quote(Photo()) + " --wavelength 546.07nm --pixel-pitch 32um"
               : Quote(MapPhoto()) + " --wavelength helium-d --thin-side left";
  }

  // A fresh folder with a symbolic link `name` to /dev/full in it.
  static fs::path FullLink(const std::string& folder, const std::string& name) {
    const fs::path dir = Root() / folder;
    fs::remove_all(dir);
    fs::create_directories(dir);
    fs::create_symlink("/dev/full", dir / name);
    return dir / name;
  }

  // The one-line failure every full-device case must give.
  static void ExpectFullDeviceError(const CommandOutcome& run,
                                    const std::string& path) {
    EXPECT_EQ(run.exit_code, 2) << run.err;
    EXPECT_EQ(CountLines(run.err), 1) << run.err;
    EXPECT_NE(run.err.find("cannot write: " + path), std::string::npos)
        << run.err;
    EXPECT_NE(run.err.find("No space left on device"), std::string::npos)
        << run.err;
  }
};

// /dev/full as every kind of output of `rings` and `map`, directly and
// through a symbolic link with the right extension: one line, exit 2, no
// JSON result claiming success, no temporary file next to the output or in
// the system temporary folder.
TEST_F(OutputSafetyE2e, FullDeviceGivesOneLineAndNoPartialFile) {
  struct Output {
    std::string command, option, name;
  };
  const std::vector<Output> outputs = {
      {"rings", "--json", "r.json"}, {"rings", "--overlay", "o.png"},
      {"rings", "--plot", "p.svg"},  {"rings", "--plot", "p.png"},
      {"map", "--json", "m.json"},   {"map", "--height", "h.tif"},
      {"map", "--picture", "m.png"},
  };
  for (const Output& o : outputs) {
    SCOPED_TRACE(o.command + " " + o.option + " " + o.name);
    const std::string folder = "full-" + o.command + o.option + "-" + o.name;
    const fs::path link = FullLink(folder, o.name);
    const fs::path json = Root() / folder / "result.json";
    std::string args =
        o.command + " " + Input(o.command) + " " + o.option + " " + Quote(link);
    if (o.option != "--json") args += " --json " + Quote(json);
    const CommandOutcome run =
        RunFiguraBounded(args, Root() / folder / "cap", RunBounds{});
    ExpectFullDeviceError(run, link.string());
    // The JSON is written last: a failed output leaves no result file.
    EXPECT_FALSE(fs::exists(json));
    EXPECT_TRUE(LeftoverTemps(Root() / folder).empty());
    std::string temp_name = ".";
    temp_name += o.name;
    temp_name += ".tmp-";
    for (const auto& e : fs::directory_iterator(fs::temp_directory_path())) {
      EXPECT_EQ(e.path().filename().string().rfind(temp_name, 0),
                std::string::npos)
          << e.path();
    }
  }
  // /dev/full itself (no extension): the JSON is written in place.
  const CommandOutcome run = RunFiguraBounded(
      "rings " + Quote(Photo()) + kRingOptions + " --json /dev/full",
      Root() / "cap-devfull", RunBounds{});
  ExpectFullDeviceError(run, "/dev/full");
}

// A read-only output folder. Root ignores permissions, so as root the
// command runs as uid 65534 (setpriv); skipped with the reason when that
// cannot be arranged.
TEST_F(OutputSafetyE2e, ReadOnlyFolderGivesOneLineAndLeavesItEmpty) {
  const fs::path ro = Root() / "read-only";
  fs::remove_all(ro);
  fs::create_directories(ro);
  RunBounds bounds;
  if (::geteuid() == 0) {
    const std::string why = CannotRunAsNobody(Photo());
    if (!why.empty()) GTEST_SKIP() << why;
    bounds.as_nobody = true;
  }
  fs::permissions(ro, fs::perms::owner_read | fs::perms::owner_exec |
                          fs::perms::group_read | fs::perms::group_exec |
                          fs::perms::others_read | fs::perms::others_exec);
  struct Case {
    std::string command, outputs;
  };
  const std::vector<Case> cases = {
      {"rings", " --json " + Quote(ro / "r.json")},
      {"rings", " --overlay " + Quote(ro / "o.png")},
      {"rings", " --plot " + Quote(ro / "p.svg")},
      {"map", " --height " + Quote(ro / "h.tif")},
      {"map", " --picture " + Quote(ro / "m.png")},
  };
  for (const Case& k : cases) {
    SCOPED_TRACE(k.command + k.outputs);
    const CommandOutcome run =
        RunFiguraBounded(k.command + " " + Input(k.command) + k.outputs,
                         Root() / "cap-ro", bounds);
    EXPECT_EQ(run.exit_code, 2) << run.err;
    EXPECT_EQ(CountLines(run.err), 1) << run.err;
    EXPECT_NE(run.err.find("cannot write: " + ro.string()), std::string::npos)
        << run.err;
    EXPECT_NE(run.err.find("Permission denied"), std::string::npos) << run.err;
    EXPECT_TRUE(fs::is_empty(ro));
  }
  // A lot whose --out folder is read-only: one line, exit 2, nothing in it.
  const CommandOutcome lot = RunFiguraBounded(
      "inspect --job " + Quote(Root() / "job.ini") + " --out " + Quote(ro) +
          " --progress quiet " + Quote(Photo()),
      Root() / "cap-ro-lot", bounds);
  EXPECT_EQ(lot.exit_code, 2) << lot.err;
  EXPECT_EQ(lot.err.find("internal error"), std::string::npos) << lot.err;
  EXPECT_NE(lot.err.find(ro.string()), std::string::npos) << lot.err;
  EXPECT_TRUE(fs::is_empty(ro));
  fs::permissions(ro, fs::perms::owner_all);
}

// The lot's summary.csv, index.html and summary.json are one set: when
// index.html cannot be written (a symbolic link to /dev/full, which is
// written in place and fails with ENOSPC), neither summary file is written
// either, on a first run (none) or on a rerun with --force (the previous
// set stays as it was). One line naming the file, exit 2, no temporaries.
TEST_F(OutputSafetyE2e, LotSummaryFilesAreWrittenTogether) {
  const fs::path out = Root() / "lot-set";
  fs::remove_all(out);
  fs::create_directories(out);
  fs::create_symlink("/dev/full", out / "index.html");
  const std::string args = "inspect --job " + Quote(Root() / "job.ini") +
                           " --out " + Quote(out) + " --progress quiet " +
                           Quote(Photo());
  CommandOutcome run =
      RunFiguraBounded(args, Root() / "cap-lot-set", RunBounds{});
  ExpectFullDeviceError(run, (out / "index.html").string());
  EXPECT_FALSE(fs::exists(out / "summary.csv"));
  EXPECT_FALSE(fs::exists(out / "summary.json"));
  EXPECT_TRUE(LeftoverTemps(out).empty());

  // A complete set, then a rerun that cannot write index.html.
  fs::remove(out / "index.html");
  run =
      RunFiguraBounded(args + " --force", Root() / "cap-lot-set2", RunBounds{});
  ASSERT_NE(run.exit_code, 2) << run.err;
  const std::string csv = ReadFile(out / "summary.csv");
  const std::string json = ReadFile(out / "summary.json");
  ASSERT_FALSE(csv.empty());
  ASSERT_FALSE(json.empty());
  fs::remove(out / "index.html");
  fs::create_symlink("/dev/full", out / "index.html");
  run =
      RunFiguraBounded(args + " --force", Root() / "cap-lot-set3", RunBounds{});
  ExpectFullDeviceError(run, (out / "index.html").string());
  EXPECT_EQ(ReadFile(out / "summary.csv"), csv);
  EXPECT_EQ(ReadFile(out / "summary.json"), json);
  EXPECT_TRUE(LeftoverTemps(out).empty());
}

// Starts `figura ARGS...` with output to files; returns the child's pid.
pid_t Spawn(const std::vector<std::string>& args, const fs::path& out,
            const fs::path& err) {
  const pid_t pid = ::fork();
  if (pid == 0) {
    if (std::freopen(out.c_str(), "w", stdout) == nullptr ||
        std::freopen(err.c_str(), "w", stderr) == nullptr) {
      ::_exit(127);
    }
    std::vector<char*> argv;
    std::string binary = FIGURA_BINARY;
    argv.push_back(binary.data());
    std::vector<std::string> copy = args;
    for (std::string& a : copy) argv.push_back(a.data());
    argv.push_back(nullptr);
    ::execv(binary.c_str(), argv.data());
    ::_exit(127);
  }
  return pid;
}

// summary.json without the fields that legitimately differ between a
// resumed and an uninterrupted run: the wall-clock times and `skipped`.
nlohmann::json Comparable(nlohmann::json j) {
  j.erase("started_utc");
  j.erase("finished_utc");
  for (auto& p : j["parts"]) p.erase("skipped");
  return j;
}

// SIGINT after the first part's result exists: exit 130, an interrupted
// summary of the parts finished; the same command again finishes the lot
// and equals an uninterrupted run.
TEST_F(OutputSafetyE2e, InterruptedLotResumesToTheSameSummary) {
  const fs::path whole = Root() / "whole";
  const fs::path cut = Root() / "cut";
  fs::remove_all(whole);
  fs::remove_all(cut);
  const std::string job = (Root() / "job.ini").string();
  const std::string lot = (Root() / "lot").string();
  const CommandOutcome reference = RunFiguraBounded(
      "inspect --job " + Quote(job) + " --out " + Quote(whole) +
          " --jobs 1 --progress lines " + Quote(lot),
      Root() / "cap-whole", RunBounds{});
  ASSERT_EQ(reference.exit_code, 1) << reference.err;  // one part fails

  const std::vector<std::string> args = {
      "inspect", "--job", job,          "--out", cut.string(),
      "--jobs",  "1",     "--progress", "lines", lot};
  const pid_t pid = Spawn(args, Root() / "cut.out", Root() / "cut.err");
  ASSERT_GT(pid, 0);
  // Wait (at most 5 minutes) until the first part's JSON is in place.
  const auto deadline =
      std::chrono::steady_clock::now() + std::chrono::minutes(5);
  int status = 0;
  bool exited = false;
  while (!fs::exists(cut / "OW117-1.json") &&
         std::chrono::steady_clock::now() < deadline) {
    if (::waitpid(pid, &status, WNOHANG) == pid) {
      exited = true;
      break;
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(10));
  }
  ASSERT_FALSE(exited) << ReadFile(Root() / "cut.err");
  ASSERT_EQ(::kill(pid, SIGINT), 0);
  ASSERT_EQ(::waitpid(pid, &status, 0), pid);
  ASSERT_TRUE(WIFEXITED(status));
  EXPECT_EQ(WEXITSTATUS(status), 130) << ReadFile(Root() / "cut.err");
  const auto partial = nlohmann::json::parse(ReadFile(cut / "summary.json"));
  EXPECT_TRUE(partial["interrupted"].get<bool>());
  EXPECT_GE(partial["parts"].size(), 1U);
  EXPECT_LT(partial["parts"].size(), 6U);
  EXPECT_TRUE(LeftoverTemps(cut).empty());

  const CommandOutcome resumed =
      RunFiguraBounded("inspect --job " + Quote(job) + " --out " + Quote(cut) +
                           " --jobs 1 --progress lines " + Quote(lot),
                       Root() / "cap-resumed", RunBounds{});
  EXPECT_EQ(resumed.exit_code, reference.exit_code) << resumed.err;
  EXPECT_EQ(ReadFile(cut / "summary.csv"), ReadFile(whole / "summary.csv"));
  const auto a = nlohmann::json::parse(ReadFile(whole / "summary.json"));
  const auto b = nlohmann::json::parse(ReadFile(cut / "summary.json"));
  EXPECT_EQ(Comparable(a), Comparable(b)) << a.dump(1) << "\n" << b.dump(1);
  // The parts finished before the interruption were reused, not redone.
  int skipped = 0;
  for (const auto& p : b["parts"]) skipped += p["skipped"].get<bool>() ? 1 : 0;
  EXPECT_EQ(skipped, static_cast<int>(partial["parts"].size()));
  EXPECT_TRUE(LeftoverTemps(cut).empty());
}

}  // namespace
}  // namespace figura::e2e
