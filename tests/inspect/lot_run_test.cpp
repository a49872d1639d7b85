// A simulated lot through RunLot: one row per input, verdicts from the
// simulator's truth under the ISO 14253-1 decision rule, resume, refusal to
// overwrite, interruption and merge.
#include "inspect/lot_run.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <string>

#include "core/error.h"
#include "core/ini.h"
#include "core/text_file.h"
#include "inspect/sim_lot.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

// One folder per test process: ctest runs the tests of this suite in
// parallel processes, each of which sets the suite up.
fs::path Root() {
  static const fs::path root =
      fs::path(FIGURA_TEST_TMP) /
      ("inspect_lot_run_" + std::to_string(::getpid()));
  return root;
}

// Part -> truth power (fringes); "junk" is unreadable.
std::map<std::string, double>& Truth() {
  static std::map<std::string, double> truth;
  return truth;
}

class LotRunTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    fs::remove_all(Root());
    fs::create_directories(Root() / "photos");
    // 6 fringes: inside +-8; 11: outside; 8: on the limit.
    Truth()["P-pass"] =
        test::WriteLotPhoto(Root() / "photos/P-pass.tif", 6.0, 101);
    Truth()["P-fail"] =
        test::WriteLotPhoto(Root() / "photos/P-fail.tif", 11.0, 102);
    Truth()["P-edge"] =
        test::WriteLotPhoto(Root() / "photos/P-edge.tif", 8.0, 103);
    test::WriteJunkPhoto(Root() / "photos/P-junk.tif");
  }

  static LotOptions Options(const std::string& out,
                            const std::string& extra = {}) {
    LotOptions o;
    o.job = ParseJob(IniFile::Parse(test::LotJobText(extra), "job.ini"), ".");
    o.inputs = {(Root() / "photos").string()};
    o.out_dir = Root() / out;
    o.jobs = 2;
    o.progress = ProgressStyle::kQuiet;
    return o;
  }
};

// The verdict the truth calls for under ISO 14253-1 with a +-8 fringe
// limit: clearly inside passes, clearly outside fails, on the limit cannot
// be decided.
std::string ExpectedVerdict(double truth) {
  if (std::abs(std::abs(truth) - 8.0) < 1e-6) return "indeterminate";
  return std::abs(truth) < 8.0 ? "pass" : "fail";
}

TEST_F(LotRunTest, VerdictsMatchTruth) {
  const LotResult r = RunLot(Options("run"));
  ASSERT_EQ(r.summary.rows.size(), 4U);  // one row per input, errors too
  EXPECT_EQ(r.exit_code, 2);             // an unreadable photo
  for (const LotRow& row : r.summary.rows) {
    if (row.part == "P-junk") {
      EXPECT_EQ(row.status, "error");
      EXPECT_EQ(row.verdict, "");
      EXPECT_FALSE(row.message.empty());
      continue;
    }
    ASSERT_NE(row.status, "error") << row.file << ": " << row.message;
    const double truth = Truth().at(row.part);
    EXPECT_EQ(row.verdict, ExpectedVerdict(truth)) << row.part;
    // The measured power and its U95 cover the simulated truth (GUM k = 2).
    const double power = row.Value("power_fringes");
    const double u95 = row.Value("power_u95_fringes");
    EXPECT_LE(std::abs(power - truth), u95) << row.part;
    EXPECT_GT(u95, 0.0);
    std::printf("%s: power %.4f fringes (truth %.4f), U95 %.4f\n",
                row.part.c_str(), power, truth, u95);
    EXPECT_TRUE(fs::exists(Root() / "run" / row.result_json));
    EXPECT_TRUE(fs::exists(Root() / "run" / row.pdf));
  }
  const std::string csv = ReadTextFile(Root() / "run/summary.csv");
  int lines = 0;
  for (char c : csv) lines += c == '\n' ? 1 : 0;
  EXPECT_EQ(lines, 5);
  EXPECT_EQ(csv.rfind("file,part,serial,status,verdict,message,", 0), 0U);
  const LotSummary back = ReadLotSummary(Root() / "run/summary.json");
  EXPECT_EQ(back.rows.size(), 4U);
  EXPECT_EQ(back.lot, "T-0042");
  EXPECT_EQ(back.Counts().pass, 1);
  EXPECT_EQ(back.Counts().fail, 1);
  EXPECT_EQ(back.Counts().indeterminate, 1);
  EXPECT_EQ(back.Counts().error, 1);
}

TEST_F(LotRunTest, RerunSkipsUnchangedAndForceRecomputes) {
  (void)RunLot(Options("resume"));
  const LotResult again = RunLot(Options("resume"));
  int skipped = 0;
  for (const LotRow& row : again.summary.rows) skipped += row.skipped ? 1 : 0;
  // Every unchanged input, the unreadable one too (its error is reused).
  EXPECT_EQ(skipped, 4);
  EXPECT_EQ(again.exit_code, 2);
  LotOptions force = Options("resume");
  force.force = true;
  const LotResult forced = RunLot(force);
  for (const LotRow& row : forced.summary.rows) EXPECT_FALSE(row.skipped);
}

TEST_F(LotRunTest, OtherSettingsDoNotOverwrite) {
  (void)RunLot(Options("guard"));
  EXPECT_THROW(RunLot(Options("guard", "pixel-pitch-u = 0.1um\n")),
               OutputError);
}

TEST_F(LotRunTest, ChangedPhotoIsNotOverwrittenSilently) {
  const fs::path dir = Root() / "changed";
  fs::create_directories(dir / "in");
  fs::copy_file(Root() / "photos/P-pass.tif", dir / "in/P-x.tif");
  LotOptions o = Options("changed/out");
  o.inputs = {(dir / "in/P-x.tif").string()};
  EXPECT_EQ(RunLot(o).summary.rows.at(0).verdict, "pass");
  fs::copy_file(Root() / "photos/P-fail.tif", dir / "in/P-x.tif",
                fs::copy_options::overwrite_existing);
  const LotRow row = RunLot(o).summary.rows.at(0);
  EXPECT_EQ(row.status, "error");
  EXPECT_NE(row.message.find("not overwritten"), std::string::npos);
  o.force = true;
  EXPECT_EQ(RunLot(o).summary.rows.at(0).verdict, "fail");
}

TEST_F(LotRunTest, StopFlagLeavesACompleteSummary) {
  std::atomic<bool> stop{true};
  LotOptions o = Options("stopped");
  o.stop = &stop;
  const LotResult r = RunLot(o);
  EXPECT_TRUE(r.summary.interrupted);
  EXPECT_EQ(r.exit_code, kExitInterrupted);
  EXPECT_EQ(r.summary.inputs_total, 4);
  const LotSummary back = ReadLotSummary(Root() / "stopped/summary.json");
  EXPECT_TRUE(back.interrupted);
  EXPECT_EQ(back.rows.size(), r.summary.rows.size());
}

TEST_F(LotRunTest, MergeShards) {
  LotOptions a = Options("shards/a");
  a.inputs = {(Root() / "photos/P-pass.tif").string(),
              (Root() / "photos/P-junk.tif").string()};
  LotOptions b = Options("shards/b");
  b.inputs = {(Root() / "photos/P-fail.tif").string(),
              (Root() / "photos/P-edge.tif").string()};
  (void)RunLot(a);
  (void)RunLot(b);
  MergeOptions m;
  m.shards = {Root() / "shards/a", Root() / "shards/b"};
  m.out_dir = Root() / "shards/all";
  const LotResult r = MergeLots(m);
  ASSERT_EQ(r.summary.rows.size(), 4U);
  EXPECT_EQ(r.summary.inputs_total, 4);
  EXPECT_EQ(r.exit_code, 2);
  for (const LotRow& row : r.summary.rows) {
    if (!row.pdf.empty()) {
      EXPECT_TRUE(fs::exists(Root() / "shards/all" / row.pdf)) << row.pdf;
    }
  }
  // A shard made with other settings is refused.
  LotOptions c = Options("shards/c", "pixel-pitch-u = 0.1um\n");
  c.inputs = {(Root() / "photos/P-pass.tif").string()};
  (void)RunLot(c);
  m.shards = {Root() / "shards/a", Root() / "shards/c"};
  m.out_dir = Root() / "shards/bad";
  EXPECT_THROW(MergeLots(m), InputError);
  // The same part in two shards is refused.
  m.shards = {Root() / "shards/a", Root() / "shards/a"};
  EXPECT_THROW(MergeLots(m), InputError);
}

// A manifest column `contact` overrides the job's contact (centre) for one
// part: a part flatter than the plate's match touches at its rim, and only
// with `edge` does its radius come out on the flat side of the plate's
// match (the sign of the sag difference, references.md test plates).
TEST_F(LotRunTest, ManifestContactOverridesTheJobPerPart) {
  const fs::path dir = Root() / "contact";
  fs::create_directories(dir / "in");
  // 5 fringes flatter than the -100 mm plate's match over 12 mm.
  const double edge_radius_mm = test::PartRadiusFor(-5.0) * 1e3;
  (void)test::WriteLotPhoto(dir / "in/E-1.tif", -5.0, 104, Contact::kEdge);
  fs::copy_file(Root() / "photos/P-pass.tif", dir / "in/C-1.tif");
  std::ofstream(dir / "parts.csv") << "file,part,contact\n"
                                   << "E-1.tif,E-1,edge\n"
                                   << "C-1.tif,C-1,\n";
  std::ofstream(dir / "plain.csv") << "file,part\nE-1.tif,E-1\n";
  LotOptions o =
      Options("contact/out",
              std::string("manifest = ").append((dir / "parts.csv").string()));
  o.inputs = {(dir / "in").string()};
  const LotResult r = RunLot(o);
  ASSERT_EQ(r.summary.rows.size(), 2U);
  const auto part = [&](const std::string& id) {
    return nlohmann::json::parse(
        ReadTextFile(Root() / "contact/out" / (id + ".json")));
  };
  const nlohmann::json e = part("E-1");
  const nlohmann::json c = part("C-1");
  // ok, or a warning (few rings over 12 mm); not an error.
  ASSERT_NE(e["status"]["state"], "error") << e["status"].dump();
  EXPECT_EQ(e["settings"]["contact"], "edge");
  EXPECT_EQ(e["part"]["contact"], "edge");
  EXPECT_EQ(c["settings"]["contact"], "centre");
  EXPECT_TRUE(c["part"]["contact"].is_null());
  const double radius = e["part_radius_mm"].get<double>();
  const double u95 = e["part_radius_u95_mm"].get<double>();
  std::printf("edge part: %.5f mm (truth %.5f, U95 %.5f)\n", radius,
              edge_radius_mm, u95);
  EXPECT_LE(std::abs(radius - edge_radius_mm), std::max(u95, 1e-4));
  EXPECT_GT(radius, 100.0);  // flatter than the plate's +100 mm match
  EXPECT_EQ(e["conformance"]["verdict"], "pass");  // |5| within +-8
  // The part's own settings hash differs from the lot's; the plain part's
  // equals it.
  EXPECT_NE(e["job_settings_sha256"], r.summary.settings_sha256);
  EXPECT_EQ(c["job_settings_sha256"], r.summary.settings_sha256);
  // A rerun recognises both parts as unchanged.
  const LotResult again = RunLot(o);
  for (const LotRow& row : again.summary.rows) {
    EXPECT_TRUE(row.skipped) << row.part << ": " << row.message;
  }
  // Without the column the job's centre contact puts the same photo on the
  // steep side of the match: the override is what makes it right.
  LotOptions plain =
      Options("contact/plain",
              std::string("manifest = ").append((dir / "plain.csv").string()));
  plain.inputs = {(dir / "in/E-1.tif").string()};
  (void)RunLot(plain);
  const nlohmann::json p =
      nlohmann::json::parse(ReadTextFile(Root() / "contact/plain/E-1.json"));
  EXPECT_LT(p["part_radius_mm"].get<double>(), 100.0);
}

// A folder contributes every entry named like an image, also those that
// are not regular files (a folder, a looping link): they become error rows
// rather than vanishing from the lot. Other names are left out.
TEST(ExpandInputs, EveryImageNamedEntryOfAFolder) {
  const fs::path dir = fs::path(FIGURA_TEST_TMP) /
                       ("expand_inputs_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir / "b.tif");
  std::ofstream(dir / "a.png") << "x";
  std::ofstream(dir / "notes.txt") << "x";
  fs::create_symlink("c.jpg", dir / "c.jpg");  // a link to itself
  const std::vector<std::string> files = ExpandInputs({dir.string()});
  const std::vector<std::string> expected = {(dir / "a.png").string(),
                                             (dir / "b.tif").string(),
                                             (dir / "c.jpg").string()};
  EXPECT_EQ(files, expected);
  fs::remove_all(dir);
}

}  // namespace
}  // namespace figura
