// End-to-end: `figura simulate` on the small gap files in
// tests/fixtures/sim writes an image and its truth; a broken gap file gives
// one line and exit code 2.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>

#include "e2e/e2e_util.h"
#include "io/image.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

using CommandRun = e2e::CommandOutcome;
using e2e::ReadFile;
using e2e::TempDir;

// Runs `figura ARGS` with output captured in dir.
CommandRun Figura(const std::string& args, const fs::path& dir) {
  return e2e::RunFigura(args, dir);
}

// A gap file of tests/fixtures/sim.
fs::path Fixture(const std::string& name) {
  return e2e::Fixture("sim/" + name);
}

TEST(SimulateE2e, WritesImageAndTruth) {
  const fs::path dir = TempDir("simulate_e2e_ok");
  const fs::path image = dir / "lens.tif";
  const CommandRun r =
      Figura("simulate --gap " + Fixture("plano_convex_on_flat.ini").string() +
                 " --out " + image.string() + " --seed 99 --json -",
             dir);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  ASSERT_TRUE(fs::exists(image));
  const fs::path truth_path = dir / "lens.truth.json";
  ASSERT_TRUE(fs::exists(truth_path));
  const nlohmann::json truth = nlohmann::json::parse(ReadFile(truth_path));
  EXPECT_EQ(truth["seed"].get<int>(), 99);  // --seed overrides the file's 11
  EXPECT_EQ(truth["image"]["width"].get<int>(), 400);
  EXPECT_EQ(truth["truth"]["centre_fringe"], "dark");
  EXPECT_DOUBLE_EQ(truth["truth"]["part_radius_mm"].get<double>(), 1500.0);
  // --json - prints the same truth on standard output.
  const nlohmann::json printed = nlohmann::json::parse(r.out);
  EXPECT_EQ(printed["truth"], truth["truth"]);
  // The image is what the file asked for: 16-bit, 400 x 360, dark at the
  // fringe centre (Newton's rings in reflection, references.md).
  const Image img = LoadImage(image);
  EXPECT_EQ(img.info.bit_depth, 16);
  EXPECT_EQ(img.info.height, 360);
  const double cx = truth["truth"]["fringe_centre_px"][0].get<double>();
  const double cy = truth["truth"]["fringe_centre_px"][1].get<double>();
  const float centre = img.pixels.at<float>(static_cast<int>(std::lround(cy)),
                                            static_cast<int>(std::lround(cx)));
  double max = 0.0;
  cv::minMaxLoc(img.pixels, nullptr, &max);
  EXPECT_LT(centre, 0.2 * max);
  // First dark ring radius from the truth: r_1^2 = lambda R (references.md),
  // mercury e 546.074 nm, R = 1500 mm.
  const double r1 =
      truth["truth"]["dark_fringes"][1]["radius_mm"].get<double>();
  EXPECT_NEAR(r1, 1e3 * std::sqrt(546.074e-9 * 1.5), 1e-5);
}

TEST(SimulateE2e, EveryFixtureRenders) {
  const fs::path dir = TempDir("simulate_e2e_all");
  for (const char* name : {"lens_on_test_plate", "flats_tilt_astigmatism"}) {
    const fs::path image = dir / (std::string(name) + ".png");
    const CommandRun r = Figura(
        "simulate --gap " + Fixture(std::string(name) + ".ini").string() +
            " --out " + image.string(),
        dir);
    EXPECT_EQ(r.exit_code, 0) << name << ": " << r.err;
    EXPECT_TRUE(fs::exists(image)) << name;
    EXPECT_TRUE(fs::exists(dir / (std::string(name) + ".truth.json"))) << name;
    EXPECT_NE(r.out.find("wrote"), std::string::npos);
  }
}

TEST(SimulateE2e, BadGapFileIsOneLineAndExitTwo) {
  const fs::path dir = TempDir("simulate_e2e_bad");
  const fs::path image = dir / "bad.tif";
  const CommandRun r =
      Figura("simulate --gap " + Fixture("bad_missing_unit.ini").string() +
                 " --out " + image.string(),
             dir);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
  EXPECT_NE(r.err.find("bad_missing_unit.ini:3"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("part-radius"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(image));
  // A JPEG cannot hold the file's 16 bits: refused before rendering.
  const CommandRun j =
      Figura("simulate --gap " + Fixture("plano_convex_on_flat.ini").string() +
                 " --out " + (dir / "x.jpg").string(),
             dir);
  EXPECT_EQ(j.exit_code, 2);
  EXPECT_NE(j.err.find("JPEG"), std::string::npos) << j.err;
  // Missing --gap.
  const CommandRun m = Figura("simulate --out " + image.string(), dir);
  EXPECT_EQ(m.exit_code, 2);
}

}  // namespace
}  // namespace figura
