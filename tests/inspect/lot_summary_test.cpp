// Lot summaries: counts, lot verdict and exit code rules (docs/lots.md), a
// JSON round trip, and the CSV read back by Python's csv module (RFC 4180
// reference reader, Debian python3, test-only via /usr/bin/python3).
#include "inspect/lot_summary.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/error.h"
#include "core/text_file.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

LotRow Row(const std::string& part, const std::string& status,
           const std::string& verdict) {
  LotRow r;
  r.file = "photos/" + part + ".tif";
  r.part = part;
  r.status = status;
  r.verdict = verdict;
  return r;
}

TEST(LotSummary, VerdictAndExitCode) {
  LotSummary s;
  s.rows = {Row("a", "ok", "pass"), Row("b", "warning", "pass")};
  EXPECT_EQ(s.Verdict(), "pass");
  EXPECT_EQ(s.ExitCode(), 0);
  s.rows.push_back(Row("c", "ok", "indeterminate"));
  EXPECT_EQ(s.Verdict(), "indeterminate");
  EXPECT_EQ(s.ExitCode(), 1);
  s.rows.push_back(Row("d", "ok", "fail"));
  EXPECT_EQ(s.ExitCode(), 1);
  s.rows.push_back(Row("e", "error", ""));
  EXPECT_EQ(s.Verdict(), "error");
  EXPECT_EQ(s.ExitCode(), 2);
  s.interrupted = true;
  EXPECT_EQ(s.ExitCode(), kExitInterrupted);
  const LotCounts c = s.Counts();
  EXPECT_EQ(c.total, 5);
  EXPECT_EQ(c.pass, 2);
  EXPECT_EQ(c.indeterminate, 1);
  EXPECT_EQ(c.fail, 1);
  EXPECT_EQ(c.error, 1);
}

TEST(LotSummary, JsonRoundTrip) {
  LotSummary s;
  s.lot = "L-0001";
  s.analysis = "rings";
  s.settings_sha256 = std::string(64, 'a');
  s.inputs_total = 2;
  LotRow a = Row("P-1", "ok", "pass");
  a.values["radius_of_curvature_mm"] = 99.87;
  a.values["power_fringes"] = std::nan("");
  s.rows = {a, Row("P-2", "error", "")};
  const nlohmann::json j = LotSummaryJson(s);
  EXPECT_TRUE(j["parts"][0]["power_fringes"].is_null());  // never NaN
  EXPECT_EQ(j["counts"]["pass"], 1);
  const LotSummary back = LotSummaryFromJson(j, "x");
  ASSERT_EQ(back.rows.size(), 2U);
  EXPECT_DOUBLE_EQ(back.rows[0].Value("radius_of_curvature_mm"), 99.87);
  EXPECT_TRUE(std::isnan(back.rows[0].Value("power_fringes")));
  EXPECT_EQ(back.settings_sha256, s.settings_sha256);
  EXPECT_THROW(LotSummaryFromJson({{"format", "other"}}, "x"), InputError);
}

TEST(LotSummary, CsvReadsBackWithPythonCsv) {
  LotSummary s;
  s.analysis = "rings";
  LotRow a = Row("P-1", "warning", "pass");
  a.file = "photos/lens, \"first\".tif";
  a.message = "few rings: 4 dark rings fitted\nsecond line";
  a.values["radius_of_curvature_mm"] = 100.0125;
  s.rows = {a, Row("P-2", "error", "")};
  const fs::path dir = fs::path(FIGURA_TEST_TMP) / "inspect_lot_summary";
  fs::create_directories(dir);
  const fs::path csv = dir / "summary.csv";
  std::ofstream(csv) << LotSummaryCsv(s);
  const fs::path out = dir / "py.txt";
  const std::string cmd =
      "/usr/bin/python3 -c \"import csv,sys; r=list(csv.DictReader(open(sys."
      "argv[1], newline=''))); open(sys.argv[2],'w').write(repr((len(r), "
      "r[0]['file'], r[0]['message'], float(r[0]['radius_of_curvature_mm']),"
      " r[1]['verdict'], r[1]['power_fringes'])))\" '" +
      csv.string() + "' '" + out.string() + "'";
  if (std::system(cmd.c_str()) != 0) GTEST_SKIP() << "/usr/bin/python3 absent";
  EXPECT_EQ(ReadTextFile(out),
            "(2, 'photos/lens, \"first\".tif', 'few rings: 4 dark rings "
            "fitted\\nsecond line', 100.0125, '', '')");
}

TEST(LotSummary, ColumnsCarryUnits) {
  for (const LotColumn& c : LotColumns("rings")) {
    if (c.unit.empty()) continue;
    EXPECT_NE(c.key.rfind("_" + c.unit), std::string::npos) << c.key;
  }
}

}  // namespace
}  // namespace figura
