// End-to-end: `figura inspect` on a simulated lot (pass, fail, on-the-limit
// and unreadable photos): summary rows equal inputs, verdicts match the
// simulator's truth under ISO 14253-1, exit codes follow docs/lots.md; every
// PDF renders with poppler's pdftoppm and its text (pdftotext) holds the
// verdict and numbers; index.html loads in headless Chromium with one table
// row per input.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "e2e/e2e_util.h"
#include "inspect/sim_lot.h"

namespace {

namespace fs = std::filesystem;
using figura::e2e::ReadFile;
using figura::e2e::RunFigura;

// One folder per test process: ctest runs the tests of this suite in
// parallel processes, each of which sets the suite up.
fs::path Root() {
  static const fs::path root =
      fs::path(FIGURA_TEST_TMP) / ("inspect_e2e_" + std::to_string(::getpid()));
  return root;
}

std::map<std::string, double>& Truth() {
  static std::map<std::string, double> truth;
  return truth;
}

// Single-quoted for the shell. (Appending avoids GCC 12's false
// -Wrestrict on "'" + std::string.)
std::string Q(const fs::path& p) {
  std::string q = "'";
  q += p.string();
  q += '\'';
  return q;
}

// Whether `tool` is on PATH.
bool Have(const std::string& tool) {
  return std::system(("command -v " + tool + " >/dev/null 2>&1").c_str()) == 0;
}

// Rows of a CSV text split on lines (no embedded line breaks expected).
std::vector<std::string> Lines(const std::string& text) {
  std::vector<std::string> out;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) out.push_back(line);
  return out;
}

class InspectE2e : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    fs::remove_all(Root());
    fs::create_directories(Root() / "photos");
    Truth()["A-pass"] =
        figura::test::WriteLotPhoto(Root() / "photos/A-pass.tif", 6.0, 201);
    Truth()["B-fail"] =
        figura::test::WriteLotPhoto(Root() / "photos/B-fail.tif", 11.0, 202);
    Truth()["C-edge"] =
        figura::test::WriteLotPhoto(Root() / "photos/C-edge.tif", 8.0, 203);
    figura::test::WriteJunkPhoto(Root() / "photos/D-junk.tif");
    std::ofstream(Root() / "job.ini") << figura::test::LotJobText();
  }
};

// ISO 14253-1 with a +-8 fringe power limit: a truth on the limit cannot be
// decided; inside passes, outside fails.
std::string Expected(double truth) {
  if (std::abs(std::abs(truth) - 8.0) < 1e-6) return "indeterminate";
  return std::abs(truth) < 8.0 ? "pass" : "fail";
}

TEST_F(InspectE2e, SimulatedLot) {
  const fs::path out = Root() / "lot";
  const auto run =
      RunFigura("inspect --job " + Q(Root() / "job.ini") + " --out " + Q(out) +
                    " --jobs 2 " + Q(Root() / "photos"),
                Root() / "cap_lot");
  EXPECT_EQ(run.exit_code, 2) << run.err;  // the unreadable photo
  // Not a terminal: one plain log line per part, no bar.
  EXPECT_EQ(run.err.find('\r'), std::string::npos);
  EXPECT_NE(run.err.find("[4/4]"), std::string::npos) << run.err;

  const std::vector<std::string> csv = Lines(ReadFile(out / "summary.csv"));
  ASSERT_EQ(csv.size(), 5U);  // header + one row per input
  EXPECT_NE(csv[0].find("radius_of_curvature_mm"), std::string::npos);
  const auto summary = nlohmann::json::parse(ReadFile(out / "summary.json"));
  ASSERT_EQ(summary["parts"].size(), 4U);
  EXPECT_EQ(summary["exit_code"], 2);
  for (const auto& p : summary["parts"]) {
    const std::string part = p["part"];
    if (part == "D-junk") {
      EXPECT_EQ(p["status"], "error");
      EXPECT_EQ(p["verdict"], "");
      continue;
    }
    EXPECT_EQ(p["verdict"], Expected(Truth().at(part))) << part;
    const fs::path pdf = out / p["pdf"].get<std::string>();
    ASSERT_TRUE(fs::exists(pdf)) << pdf;
    if (!Have("pdftoppm") || !Have("pdftotext")) continue;
    // poppler renders the page (one page) and its text holds the verdict
    // and the part radius as in the part's JSON.
    const fs::path png = Root() / ("page-" + part);
    ASSERT_EQ(std::system(("pdftoppm -r 20 -png -singlefile " + Q(pdf) + " " +
                           Q(png) + " 2>/dev/null")
                              .c_str()),
              0);
    EXPECT_TRUE(fs::exists(png.string() + ".png"));
    const fs::path txt = Root() / ("page-" + part + ".txt");
    ASSERT_EQ(std::system(("pdftotext " + Q(pdf) + " " + Q(txt)).c_str()), 0);
    const std::string text = ReadFile(txt);
    EXPECT_NE(text.find(p["verdict"].get<std::string>()), std::string::npos)
        << part;
    EXPECT_NE(text.find(part), std::string::npos);
    const auto r = nlohmann::json::parse(
        ReadFile(out / p["result_json"].get<std::string>()));
    // The report rounds a value to its uncertainty's digits (GUM 7.2.6):
    // one of 1..5 decimals of the JSON's part radius is on the page.
    const double radius = r["part_radius_mm"].get<double>();
    bool found = false;
    for (int d = 1; d <= 5 && !found; ++d) {
      char text_radius[40];
      std::snprintf(text_radius, sizeof text_radius, "%.*f", d, radius);
      found = text.find(text_radius) != std::string::npos;
    }
    EXPECT_TRUE(found) << part << " radius " << radius << "\n" << text;
    const std::string rings = std::to_string(r["ring_count"].get<int>());
    EXPECT_NE(text.find(rings), std::string::npos) << part;
  }
  if (!Have("chromium")) {
    GTEST_SKIP() << "chromium is not installed (Debian package chromium, "
                    "test-only): index.html not loaded";
  }
  const fs::path dom = Root() / "dom.html";
  const std::string cmd =
      "chromium --headless --no-sandbox --disable-gpu --dump-dom " +
      Q("file://" + fs::absolute(out / "index.html").string()) + " >" + Q(dom) +
      " 2>/dev/null";
  ASSERT_EQ(std::system(cmd.c_str()), 0);
  const std::string html = ReadFile(dom);
  for (const char* part : {"A-pass", "B-fail", "C-edge", "D-junk"}) {
    EXPECT_NE(html.find(part), std::string::npos) << part;
  }
  int rows = 0;
  const std::size_t body = html.find("<tbody");
  ASSERT_NE(body, std::string::npos);
  for (std::size_t at = html.find("<tr", body);
       at != std::string::npos && at < html.find("</tbody>", body);
       at = html.find("<tr", at + 1)) {
    ++rows;
  }
  EXPECT_EQ(rows, 4);
}

TEST_F(InspectE2e, ExitCodes) {
  const std::string job = " --job " + Q(Root() / "job.ini");
  EXPECT_EQ(RunFigura("inspect" + job + " --out " + Q(Root() / "x0") + " " +
                          Q(Root() / "photos/A-pass.tif"),
                      Root() / "cap_x0")
                .exit_code,
            0);
  EXPECT_EQ(RunFigura("inspect" + job + " --out " + Q(Root() / "x1") + " " +
                          Q(Root() / "photos/A-pass.tif") + " " +
                          Q(Root() / "photos/B-fail.tif"),
                      Root() / "cap_x1")
                .exit_code,
            1);
  // A bad job file: exit 2, one line naming the file, line and key.
  std::ofstream(Root() / "bad.ini") << figura::test::LotJobText("speed = 3\n");
  const auto bad = RunFigura("inspect --job " + Q(Root() / "bad.ini") + " " +
                                 Q(Root() / "photos/A-pass.tif"),
                             Root() / "cap_bad");
  EXPECT_EQ(bad.exit_code, 2);
  EXPECT_EQ(figura::e2e::CountLines(bad.err), 1) << bad.err;
  EXPECT_NE(bad.err.find("bad.ini:14: unknown key 'speed'"), std::string::npos)
      << bad.err;
}

TEST_F(InspectE2e, MergeTwoShards) {
  const std::string job = " --job " + Q(Root() / "job.ini");
  ASSERT_EQ(RunFigura("inspect" + job + " --out " + Q(Root() / "s1") + " " +
                          Q(Root() / "photos/A-pass.tif"),
                      Root() / "cap_s1")
                .exit_code,
            0);
  ASSERT_EQ(RunFigura("inspect" + job + " --out " + Q(Root() / "s2") + " " +
                          Q(Root() / "photos/B-fail.tif"),
                      Root() / "cap_s2")
                .exit_code,
            1);
  const auto merged =
      RunFigura("inspect --merge " + Q(Root() / "s1") + " " + Q(Root() / "s2") +
                    " --out " + Q(Root() / "merged"),
                Root() / "cap_merge");
  EXPECT_EQ(merged.exit_code, 1) << merged.err;
  const std::vector<std::string> csv =
      Lines(ReadFile(Root() / "merged/summary.csv"));
  EXPECT_EQ(csv.size(), 3U);
  EXPECT_TRUE(fs::exists(Root() / "merged/index.html"));
}

}  // namespace
