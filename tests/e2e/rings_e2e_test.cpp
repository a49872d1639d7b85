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

// --aperture-diameter as pixels and as a length fixes the same aperture:
// the simulator's truth file gives its centre and diameter (diameter_px =
// diameter_mm / pixel pitch: 8 mm / 25 um = 320 px for the fixture).
TEST(RingsE2e, ApertureDiameterInPixelsOrAsALength) {
  const fs::path dir = TempDir("rings_e2e_aperture");
  const fs::path gap = fs::path(FIGURA_SOURCE_DIR) /
                       "tests/fixtures/sim/plano_convex_on_flat.ini";
  const fs::path photo = dir / "lens.tif";
  std::string err;
  ASSERT_EQ(Figura("simulate --gap '" + gap.string() + "' --out '" +
                       photo.string() + "'",
                   dir, &err),
            0)
      << err;
  const auto truth = nlohmann::json::parse(ReadFile(dir / "lens.truth.json"));
  const auto& aperture = truth["settings"]["aperture"];
  const double d_px = aperture["diameter_px"].get<double>();
  const double d_mm = aperture["diameter_mm"].get<double>();
  ASSERT_NEAR(d_px, 320.0, 1e-9);  // 8 mm / 25 um
  std::ostringstream centre;
  centre.precision(17);
  centre << aperture["centre_px"][0].get<double>() << ","
         << aperture["centre_px"][1].get<double>();
  std::ostringstream as_px, as_mm;
  as_px.precision(17);
  as_mm.precision(17);
  as_px << d_px;
  as_mm << d_mm << "mm";
  for (const std::string& given : {as_px.str(), as_mm.str()}) {
    SCOPED_TRACE(given);
    const fs::path json = dir / "r.json";
    fs::remove(json);
    ASSERT_EQ(Figura("rings '" + photo.string() +
                         "' --wavelength mercury-e --pixel-pitch 25um "
                         "--aperture-centre " +
                         centre.str() + " --aperture-diameter " + given +
                         " --json '" + json.string() + "'",
                     dir, &err),
              0)
        << err;
    const auto r = nlohmann::json::parse(ReadFile(json));
    EXPECT_NEAR(r["settings"]["aperture_diameter_px"].get<double>(), d_px,
                1e-9);
    EXPECT_NEAR(r["settings"]["aperture_diameter_mm"].get<double>(), d_mm,
                1e-12);
    // docs/cli.md: the given diameter is the one sag and power are over.
    EXPECT_NEAR(r["aperture_diameter_mm"].get<double>(), d_mm, 1e-12);
    // The fixed aperture still gives the truth's radius (issue target
    // 0.05 %, as SimulatedLensOnFlat).
    EXPECT_NEAR(r["radius_of_curvature_mm"].get<double>() /
                    truth["truth"]["part_radius_mm"].get<double>(),
                1.0, 5e-4);
  }
}

TEST(RingsE2e, ApertureOptionsBadInputOneLineExit2) {
  const fs::path dir = TempDir("rings_e2e_aperture_bad");
  // The option is checked before the photo is read: no photo needed.
  const std::string base = "rings '" + (dir / "none.tif").string() +
                           "' --wavelength 546nm --pixel-pitch 10um ";
  std::string err;
  // Neither pixels nor a length: one line naming the option and both forms.
  EXPECT_EQ(Figura(base + "--aperture-centre 100,100 --aperture-diameter wide",
                   dir, &err),
            2);
  EXPECT_EQ(figura::e2e::CountLines(err), 1) << err;
  EXPECT_NE(err.find("--aperture-diameter"), std::string::npos) << err;
  EXPECT_NE(err.find("'wide'"), std::string::npos) << err;
  EXPECT_NE(err.find("pixels"), std::string::npos) << err;
  EXPECT_EQ(err.find("none.tif"), std::string::npos) << err;
  // docs/cli.md: --aperture-centre needs --aperture-diameter too (both or
  // neither).
  EXPECT_EQ(Figura(base + "--aperture-centre 100,100", dir, &err), 2);
  EXPECT_EQ(figura::e2e::CountLines(err), 1) << err;
  EXPECT_NE(err.find("both"), std::string::npos) << err;
  EXPECT_NE(err.find("diameter"), std::string::npos) << err;
  EXPECT_EQ(err.find("none.tif"), std::string::npos) << err;
  // docs/cli.md: with --diameters, a length.
  std::ofstream(dir / "d.csv") << "order,diameter,kind\n10,5.00mm,dark\n";
  EXPECT_EQ(Figura("rings --diameters '" + (dir / "d.csv").string() +
                       "' --wavelength 500nm --aperture-diameter 480",
                   dir, &err),
            2);
  EXPECT_EQ(figura::e2e::CountLines(err), 1) << err;
  EXPECT_NE(err.find("--aperture-diameter"), std::string::npos) << err;
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
