// End-to-end: `figura rings` on a simulated photograph (the simulator's
// fixture gap file) and on a measured-diameter CSV (worked example of
// ../shared/references.md); bad input gives one line and exit code 2.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>

#include "e2e/e2e_util.h"

namespace {

namespace fs = std::filesystem;

using figura::e2e::ReadFile;
using figura::e2e::TempDir;

// Runs `figura ARGS` with output captured in dir; returns the exit code and
// sets *err to standard error.
int Figura(const std::string& args, const fs::path& dir, std::string* err) {
  const figura::e2e::CommandOutcome run = figura::e2e::RunFigura(args, dir);
  *err = run.err;
  return run.exit_code;
}

TEST(RingsE2e, SimulatedLensOnFlat) {
  const fs::path dir = TempDir("rings_e2e_lens");
  const fs::path gap = fs::path(FIGURA_SOURCE_DIR) /
                       "tests/fixtures/sim/plano_convex_on_flat.ini";
  std::string err;
  ASSERT_EQ(Figura("simulate --gap '" + gap.string() + "' --out '" +
                       (dir / "lens.tif").string() + "'",
                   dir, &err),
            0)
      << err;
  ASSERT_EQ(Figura("rings '" + (dir / "lens.tif").string() +
                       "' --wavelength mercury-e --pixel-pitch 25um --json '" +
                       (dir / "r.json").string() + "' --overlay '" +
                       (dir / "o.png").string() + "' --plot '" +
                       (dir / "p.svg").string() + "'",
                   dir, &err),
            0)
      << err;
  const auto truth =
      nlohmann::json::parse(ReadFile(dir / "lens.truth.json"))["truth"];
  const auto r = nlohmann::json::parse(ReadFile(dir / "r.json"));
  const double expected = truth["part_radius_mm"].get<double>();
  // Issue target: R within 0.05 % on a 16-bit photo with blur, noise and
  // falloff; centre within 0.2 px.
  EXPECT_NEAR(r["radius_of_curvature_mm"].get<double>() / expected, 1.0, 5e-4);
  EXPECT_NEAR(r["fringe_centre_px"][0].get<double>(),
              truth["fringe_centre_px"][0].get<double>(), 0.2);
  EXPECT_NEAR(r["fringe_centre_px"][1].get<double>(),
              truth["fringe_centre_px"][1].get<double>(), 0.2);
  EXPECT_EQ(r["centre_fringe"], truth["centre_fringe"]);
  EXPECT_EQ(r["coverage_factor"].get<double>(), 2.0);
  // GUM (JCGM 100:2008) k = 2: the expanded uncertainty covers the truth
  // (calibrated on separate seeds in tests/fringe/ring_accuracy_test.cpp),
  // and the budget names the ring-detection systematic.
  EXPECT_LE(std::abs(r["radius_of_curvature_mm"].get<double>() - expected),
            r["radius_of_curvature_u95_mm"].get<double>());
  EXPECT_GT(r["uncertainty_budget_relative"]["ring_detection"].get<double>(),
            0.0);
  EXPECT_TRUE(fs::exists(dir / "o.png"));
  EXPECT_TRUE(fs::exists(dir / "p.svg"));
}

TEST(RingsE2e, TestPlateWithTooFewRingsIsAnError) {
  // The fixture's lens (+51.68 mm) in a -51.70 mm plate shows 1.4 fringes
  // over 20 mm (gap radius 1/(1/51.68 - 1/51.70) mm = 134 m; r^2 = k lambda
  // R / n, references.md): too few for a radius. Exit 2, one line, and a
  // result file without a made-up radius.
  const fs::path dir = TempDir("rings_e2e_plate");
  const fs::path gap =
      fs::path(FIGURA_SOURCE_DIR) / "tests/fixtures/sim/lens_on_test_plate.ini";
  std::string err;
  ASSERT_EQ(Figura("simulate --gap '" + gap.string() + "' --out '" +
                       (dir / "plate.tif").string() + "'",
                   dir, &err),
            0)
      << err;
  EXPECT_EQ(Figura("rings '" + (dir / "plate.tif").string() +
                       "' --wavelength sodium --pixel-pitch 60um "
                       "--reference-radius -51.70mm --json '" +
                       (dir / "r.json").string() + "'",
                   dir, &err),
            2);
  EXPECT_NE(err.find("too few rings"), std::string::npos) << err;
  const auto r = nlohmann::json::parse(ReadFile(dir / "r.json"));
  EXPECT_EQ(r["status"]["state"], "error");
  for (const char* key : {"radius_of_curvature_mm", "part_radius_mm"}) {
    EXPECT_TRUE(!r.contains(key) || r[key].is_null()) << key;
  }
}

TEST(RingsE2e, DiameterModeWorkedExample) {
  // lambda = 500 nm, 10th dark ring diameter 5.00 mm -> R = 1.25 m
  // (references.md worked example).
  const fs::path dir = TempDir("rings_e2e_diam");
  std::ofstream(dir / "d.csv") << "order,diameter,kind\n10,5.00mm,dark\n";
  std::string err;
  ASSERT_EQ(Figura("rings --diameters '" + (dir / "d.csv").string() +
                       "' --wavelength 500nm --json '" +
                       (dir / "d.json").string() + "'",
                   dir, &err),
            0)
      << err;
  const auto r = nlohmann::json::parse(ReadFile(dir / "d.json"));
  EXPECT_NEAR(r["radius_of_curvature_mm"].get<double>(), 1250.0, 0.01);
  EXPECT_TRUE(
      r["radius_of_curvature_u95_mm"].is_null());  // one ring: no u, said why
}

TEST(RingsE2e, BadInputOneLineExit2) {
  const fs::path dir = TempDir("rings_e2e_bad");
  std::string err;
  EXPECT_EQ(Figura("rings '" + (dir / "missing.tif").string() +
                       "' --wavelength 546nm --pixel-pitch 10um",
                   dir, &err),
            2);
  EXPECT_NE(err.find("missing.tif"), std::string::npos);
  EXPECT_EQ(
      Figura("rings x.tif --wavelength 546 --pixel-pitch 10um", dir, &err), 2);
  EXPECT_NE(err.find("unit"), std::string::npos);
}

}  // namespace
