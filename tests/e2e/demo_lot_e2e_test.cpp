// End-to-end: the demo lot OW-117 of README command (a) through `figura
// inspect` with its job file and manifest (config/ow117-job.ini,
// config/ow117-parts.csv). The verdicts follow from the truth files beside
// the photos (images_demo/*.truth.json: power over the 20 mm test diameter
// against the 6-fringe limit of 3/6(1)), and part 03, whose manifest row
// says contact = edge, comes out with its true radius (flatter than the
// plate's 51.68 mm match) while the lot's contact stays centre.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>

#include "e2e/e2e_util.h"

namespace figura::e2e {
namespace {

nlohmann::json ReadJson(const fs::path& path) {
  return nlohmann::json::parse(ReadFile(path));
}

TEST(DemoLot, VerdictsFollowTheTruthAndPart03TouchesAtTheEdge) {
  const fs::path src(FIGURA_SOURCE_DIR);
  const fs::path out =
      TempDir(std::string("demo_lot_").append(std::to_string(::getpid()))) /
      "lot-ow117";
  std::ostringstream args;
  args << "inspect --job '" << (src / "config/ow117-job.ini").string()
       << "' --out '" << out.string() << "' --jobs 2 --progress quiet";
  for (const char* name :
       {"ow117-01.tif", "ow117-02.tif", "ow117-03.tif", "ow117-04.jpg",
        "ow117-05.tif", "ow117-06.tif", "ow117-07.tif"}) {
    args << " '" << (src / "images_demo" / name).string() << "'";
  }
  const CommandOutcome run = RunFigura(args.str(), std::string("demo_lot"));
  // 07 is unusable (blown out): exit code 2, the other parts still judged.
  EXPECT_EQ(run.exit_code, 2) << run.out << run.err;
  const nlohmann::json summary = ReadJson(out / "summary.json");
  std::map<std::string, std::string> verdict;
  for (const nlohmann::json& row : summary.at("parts")) {
    const std::string part = row.value("part", "");
    verdict[part] =
        row.value("status", "") == "error" ? "error" : row.value("verdict", "");
  }
  // Expected from the truth files: |power| of 01, 02, 03 inside 6 fringes,
  // 04 (7.21) and 06 (8.52) outside, 05 (6.000) on the limit.
  const std::map<std::string, std::string> expected = {
      {"01", "pass"},          {"02", "pass"}, {"03", "pass"}, {"04", "fail"},
      {"05", "indeterminate"}, {"06", "fail"}, {"07", "error"}};
  EXPECT_EQ(verdict, expected) << summary.dump(1);

  for (const char* part : {"01", "02", "03", "04", "05", "06"}) {
    const nlohmann::json truth = ReadJson(
        src / "images_demo" / (std::string("ow117-") + part + ".truth.json"));
    const nlohmann::json r = ReadJson(out / (std::string(part) + ".json"));
    ASSERT_TRUE(r.contains("part_radius_mm")) << part << r["status"].dump();
    const double true_mm =
        truth.at("settings").at("gap").at("part_radius_mm").get<double>();
    const double measured = r.at("part_radius_mm").get<double>();
    const double u95 = r.at("part_radius_u95_mm").get<double>();
    // U95 covers the truth (GUM k = 2); the demo photos are mild.
    EXPECT_LE(std::abs(measured - true_mm), std::max(u95, 2e-4))
        << part << ": " << measured << " vs truth " << true_mm;
    EXPECT_EQ(r.at("settings").at("contact"),
              std::string(part) == "03" ? "edge" : "centre")
        << part;
  }
  const nlohmann::json p03 = ReadJson(out / "03.json");
  EXPECT_EQ(p03.at("part").at("contact"), "edge");
  EXPECT_EQ(p03.at("part").at("serial"), "OW117-0003");
  EXPECT_GT(p03.at("part_radius_mm").get<double>(), 51.68);  // flatter
  EXPECT_NE(p03.at("job_settings_sha256"),
            summary.at("job").at("settings_sha256"));
  EXPECT_EQ(ReadJson(out / "01.json").at("job_settings_sha256"),
            summary.at("job").at("settings_sha256"));
}

}  // namespace
}  // namespace figura::e2e
