#include "sim/simulation.h"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>
#include <vector>

#include "check_record.h"
#include "core/error.h"
#include "core/ini.h"
#include "io/image.h"
#include "sim/gap_file.h"

namespace figura {
namespace {

constexpr double kPi = std::numbers::pi;

// A noiseless, unblurred float render of a sphere on a flat (the baseline
// of most checks below): 5 mm aperture at 10 um per pixel.
SimulationOptions Newton(double radius_m, double lambda_m) {
  SimulationOptions o;
  o.gap.part_radius_m = radius_m;
  o.wavelength = Wavelength{Length{lambda_m}, {}, {}, {}, {}};
  o.aperture_diameter_m = 5e-3;
  o.camera.width_px = 520;
  o.camera.height_px = 520;
  o.camera.pixel_pitch_m = 10e-6;
  o.camera.full_well_e = 0.0;
  o.camera.read_noise_e = 0.0;
  o.camera.surround = 0.0;
  o.camera.exposure = 1.0;
  o.camera.bit_depth = 32;
  o.centre_x_px = 259.3;  // off the pixel grid on purpose
  o.centre_y_px = 261.0;
  return o;
}

// Sub-pixel positions of intensity minima along image row `row`: the
// profile is fitted, in u = r^2 about the centre (where the fringes are
// periodic with period P = lambda R / n_gap), by a + sum_{h<=2} (b_h cos +
// c_h sin)(2 pi h u / P) over two periods around each expected minimum, and
// the fitted curve's minimum located by Newton's method [practice: local
// harmonic fit]. Returns the x positions (pixels) of the minima of order k
// on the side `sign` (+1 right, -1 left) of the centre.
double FitMinimumX(const cv::Mat& image, int row, double cx, double cy,
                   double period_u, double u_expected, int sign) {
  std::vector<double> us;
  std::vector<double> values;
  const double dy = row - cy;
  for (int x = 0; x < image.cols; ++x) {
    const double dx = x - cx;
    if (dx * sign <= 0) continue;
    const double u = dx * dx + dy * dy;
    if (std::abs(u - u_expected) > period_u) continue;
    us.push_back(u);
    values.push_back(static_cast<double>(image.at<float>(row, x)));
  }
  const int n = static_cast<int>(us.size());
  EXPECT_GE(n, 8);
  Eigen::MatrixXd a(n, 5);
  Eigen::VectorXd b(n);
  for (int i = 0; i < n; ++i) {
    const double w =
        2 * kPi * (us[static_cast<std::size_t>(i)] - u_expected) / period_u;
    a.row(i) << 1, std::cos(w), std::sin(w), std::cos(2 * w), std::sin(2 * w);
    b(i) = values[static_cast<std::size_t>(i)];
  }
  const Eigen::VectorXd c = a.colPivHouseholderQr().solve(b);
  // Newton on the derivative of the fitted series in w, from w = 0.
  double w = 0.0;
  for (int it = 0; it < 50; ++it) {
    const double d1 = -c(1) * std::sin(w) + c(2) * std::cos(w) -
                      2 * c(3) * std::sin(2 * w) + 2 * c(4) * std::cos(2 * w);
    const double d2 = -c(1) * std::cos(w) - c(2) * std::sin(w) -
                      4 * c(3) * std::cos(2 * w) - 4 * c(4) * std::sin(2 * w);
    w -= d1 / d2;
  }
  const double u = u_expected + w * period_u / (2 * kPi);
  return cx + sign * std::sqrt(u - dy * dy);
}

TEST(Simulate, NewtonRingMinimaSitAtTheTextbookRadii) {
  // Newton's rings in reflection, air gap between crown glasses, contact at
  // the centre: dark rings at r_k^2 = k lambda R / n_gap (references.md,
  // "Newton's rings and test plates"). The exact sphere sag differs from
  // this paraxial form by r^2/(4 R^2) relative, under 0.001 px here.
  // Values: sodium D mean 589.2938 nm (RP Photonics) and R = 500 mm, as in
  // the worked example of references.md.
  const double lambda = 589.2938e-9;
  const double radius = 0.5;
  const SimulationOptions o = Newton(radius, lambda);
  const SimulationResult r = Simulate(o);
  ASSERT_EQ(r.image.type(), CV_32FC1);
  const double pitch = o.camera.pixel_pitch_m;
  const double period_u = lambda * radius / (pitch * pitch);  // px^2
  double worst = 0.0;
  int checked = 0;
  for (const int row : {261, 250, 275}) {
    for (int k = 2; k <= 19; ++k) {
      const double u = k * period_u;
      const double dy = row - *o.centre_y_px;
      if (u - dy * dy < period_u * 1.5) continue;
      for (int sign : {-1, 1}) {
        const double x = FitMinimumX(r.image, row, *o.centre_x_px,
                                     *o.centre_y_px, period_u, u, sign);
        const double expected = *o.centre_x_px + sign * std::sqrt(u - dy * dy);
        worst = std::max(worst, std::abs(x - expected));
        ++checked;
      }
    }
  }
  EXPECT_GT(checked, 90);
  EXPECT_LT(worst, 0.05) << "worst minimum offset (px)";
  figura::testing::RecordCheck(
      "rendered Newton-ring minima vs r_k^2 = k lambda R / n (worst)",
      "Hecht, Optics, sec. 9.4 (references.md)", 0.0, worst, 0.05, "px");
  std::cout << "[ measured ] worst Newton-ring minimum offset " << worst
            << " px over " << checked << " minima\n";
  // The centre (contact) is dark in reflection for glass/air/glass
  // (half-wave rule, references.md).
  EXPECT_LT(r.image.at<float>(261, 259), 0.02F);
}

TEST(Simulate, TransmittedMinimaSitWhereReflectedHasMaxima) {
  // The transmitted pattern is the complement (references.md): its minima
  // are at r^2 = (k + 1/2) lambda R / n_gap.
  const double lambda = 546.074e-9;  // mercury e, RP Photonics
  const double radius = 0.5;
  SimulationOptions o = Newton(radius, lambda);
  o.view = View::kTransmitted;
  const SimulationResult r = Simulate(o);
  const double pitch = o.camera.pixel_pitch_m;
  const double period_u = lambda * radius / (pitch * pitch);
  const int row = 261;
  double worst = 0.0;
  for (int k = 2; k <= 18; ++k) {
    const double u = (k + 0.5) * period_u;
    const double x = FitMinimumX(r.image, row, *o.centre_x_px, *o.centre_y_px,
                                 period_u, u, +1);
    worst = std::max(worst, std::abs(x - (*o.centre_x_px + std::sqrt(u))));
  }
  EXPECT_LT(worst, 0.05);
  // Contact is bright in transmission, and the contrast is low: visibility
  // 2R/(1+R^2) ~ 0.08 for 4 % surfaces (references.md, [derived]); with
  // N-BK7's 4.22 % per surface about 0.084.
  EXPECT_GT(r.image.at<float>(261, 259), 0.99F);
  EXPECT_EQ(r.truth["truth"]["centre_fringe"], "bright");
  const double visibility = r.truth["truth"]["fringe_visibility"];
  EXPECT_NEAR(visibility, 2 * 0.0422 / (1 + 0.0422 * 0.0422), 0.003);
}

TEST(Simulate, ContactFluidBetweenDifferentGlassesMakesTheCentreBright) {
  // Half-wave rule (references.md): crown (1.5168) -> fluid (1.60) -> flint
  // (1.72): both reflections go from lower to higher index, both shift by
  // half a wave, so contact is bright in reflection.
  SimulationOptions o = Newton(0.5, 589.2938e-9);
  o.stack = MediaStack{1.5168, 1.60, 1.72};
  const SimulationResult r = Simulate(o);
  EXPECT_GT(r.image.at<float>(261, 259), 0.98F);
  EXPECT_EQ(r.truth["truth"]["centre_fringe"], "bright");
  // The fluid shortens the fringe period by n_gap: first dark ring at
  // r^2 = (1/2) lambda R / n_gap (references.md, the liquid-film example).
  const auto& dark = r.truth["truth"]["dark_fringes"];
  ASSERT_FALSE(dark.empty());
  EXPECT_NEAR(dark[0]["radius_mm"].get<double>(),
              1e3 * std::sqrt(0.5 * 589.2938e-9 * 0.5 / 1.60), 1e-5);
}

TEST(Simulate, TruthHoldsTheGapsKeyNumbers) {
  // Test-plate example (references.md, Saayman tutorial [derived]): R =
  // 100 mm, D = 30 mm, lambda = 546.07 nm, N = 2: the small-sag rule dR =
  // 4 N lambda R^2 / D^2 gives 48.5 um, while the exact sag of a plate that
  // much longer in radius gives N = 2.033. Plate radius signed as seen from
  // the gap (optics/sphere.h).
  const double dr = 4 * 2 * 546.07e-9 * 0.1 * 0.1 / (0.03 * 0.03);
  const double plate = 0.1 + dr;
  SimulationOptions o;
  o.gap.part_radius_m = 0.1;
  o.gap.plate_radius_m = -plate;
  o.wavelength = Wavelength{Length::Nanometres(546.07), {}, {}, {}, {}};
  o.aperture_diameter_m = 30e-3;
  o.camera.width_px = 200;
  o.camera.height_px = 180;
  o.camera.pixel_pitch_m = 160e-6;
  o.centre_x_px = 101.25;
  o.gap.contact_x_m = 1e-3;
  o.gap.contact_y_m = -0.5e-3;
  o.gap.zernike_m = {0, 0, 0, 0, 0, 30e-9};  // j = 5, astigmatism
  const SimulationResult r = Simulate(o);
  const nlohmann::json& t = r.truth["truth"];
  for (const char* k :
       {"part_radius_mm", "plate_radius_mm", "gap_radius_mm",
        "contact_point_px", "fringe_centre_px", "centre_fringe", "dark_fringes",
        "bright_fringes", "fringes_across_aperture", "gap_sag_um",
        "power_fringes", "zernike", "half_wave_nm", "min_fringe_period_px"}) {
    EXPECT_TRUE(t.contains(k)) << k;
  }
  figura::testing::CheckNear(
      "exact fringe count, R 100 mm vs 100.04854 mm over D 30 mm",
      "[derived] references.md (exact sag)", 2.033,
      t["power_fringes"].get<double>(), 0.001, "fringes");
  EXPECT_EQ(t["part_radius_mm"].get<double>(), 100.0);
  EXPECT_EQ(r.truth["seed"].get<int>(), 1);
  EXPECT_EQ(r.truth["settings"]["camera"]["bit_depth"].get<int>(), 16);
  // Contact point: x right, y up in the surface, y down in pixels.
  EXPECT_NEAR(t["contact_point_px"][0].get<double>(), 101.25 + 1.0 / 0.16,
              1e-9);
  EXPECT_NEAR(t["contact_point_px"][1].get<double>(), 89.5 + 0.5 / 0.16, 1e-9);
  // Astigmatism about the aperture centre tilts the gap at the decentred
  // contact point, so the ring centre moves a little (about 1 px here).
  EXPECT_NEAR(t["fringe_centre_px"][0].get<double>(),
              t["contact_point_px"][0].get<double>(), 3.0);
  ASSERT_EQ(t["zernike"].size(), 1U);
  EXPECT_EQ(t["zernike"][0]["j"], 5);
  EXPECT_EQ(t["zernike"][0]["noll"], 6);  // Noll 1976, references.md
  // Dark rings from the exact gap: gap at radius r_k equals k lambda / 2.
  for (const auto& ring : t["dark_fringes"]) {
    const double rk = ring["radius_mm"].get<double>() * 1e-3;
    const double gap = (0.1 - std::sqrt(0.01 - rk * rk)) -
                       (plate - std::sqrt(plate * plate - rk * rk));
    EXPECT_NEAR(gap, ring["order"].get<int>() * 546.07e-9 / 2, 1e-13);
  }
}

TEST(Simulate, TiltMovesTheRingCentre) {
  // A wedge of slope g added to a sphere-on-flat moves the gap minimum by
  // R g / sqrt(1 + g^2) against the slope (minimum of s(r) + g x).
  SimulationOptions o = Newton(0.5, 589.2938e-9);
  o.gap.tilt_x_m = 5e-6 * 2.5e-3;   // 5 urad over a 2.5 mm radius
  o.gap.contact_offset_m = 100e-9;  // keeps the tilted gap positive
  const SimulationResult r = Simulate(o);
  const double shift_px = 0.5 * 5e-6 / std::sqrt(1 + 25e-12) / 10e-6;
  EXPECT_NEAR(r.truth["truth"]["fringe_centre_px"][0].get<double>(),
              *o.centre_x_px - shift_px, 1e-4);
}

TEST(Simulate, SameSeedSameBytesOtherSeedOtherNoise) {
  SimulationOptions o = Newton(0.5, 589.2938e-9);
  o.camera.width_px = 160;
  o.camera.height_px = 120;
  o.centre_x_px.reset();
  o.centre_y_px.reset();
  o.aperture_diameter_m = 1.2e-3;
  o.camera.full_well_e = 5000;
  o.camera.read_noise_e = 8;
  o.camera.bit_depth = 16;
  o.camera.blur_sigma_px = 0.8;
  o.camera.falloff = 0.2;
  o.camera.background = 0.02;
  o.seed = 42;
  const SimulationResult a = Simulate(o);
  const SimulationResult b = Simulate(o);
  ASSERT_EQ(a.image.type(), CV_16UC1);
  EXPECT_EQ(cv::norm(a.image, b.image, cv::NORM_INF), 0.0);
  o.seed = 43;
  const SimulationResult c = Simulate(o);
  const double diff = cv::norm(a.image, c.image, cv::NORM_L1) / a.image.total();
  EXPECT_GT(diff, 10.0);  // shot noise ~ sqrt(5000)/5000 of full scale
  EXPECT_EQ(a.truth, b.truth);
  EXPECT_EQ(c.truth["seed"].get<int>(), 43);
  // Shot noise in a flat region (surround 0 + background 0.02, blurred
  // only at the edge; the 20 x 20 px corner lies > 12 px outside the
  // aperture): Poisson, sigma = sqrt(N) electrons, N = 0.02 * 5000
  // [practice: photon transfer], plus 8 e read noise.
  cv::Mat corner;
  a.image(cv::Rect(0, 0, 20, 20)).convertTo(corner, CV_64F, 5000.0 / 65535.0);
  cv::Scalar mean;
  cv::Scalar sd;
  cv::meanStdDev(corner, mean, sd);
  EXPECT_NEAR(mean[0], 100.0, 2.0);
  EXPECT_NEAR(sd[0], std::sqrt(100.0 + 64.0), 1.5);
}

TEST(Simulate, RefusesAliasingAndNegativeGaps) {
  SimulationOptions o = Newton(0.02, 589.2938e-9);  // R = 20 mm: too fast
  try {
    Simulate(o);
    FAIL() << "aliasing accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("alias"), std::string::npos)
        << e.what();
  }
  o = Newton(0.5, 589.2938e-9);
  o.gap.tilt_x_m = 200e-9;  // wedge without offset: negative gap at -x
  EXPECT_THROW(Simulate(o), InputError);
  o = Newton(0.5, 589.2938e-9);
  o.camera.bit_depth = 12;
  EXPECT_NE(o.Check().find("camera.bit-depth"), std::string::npos);
}

TEST(Simulate, SodiumDoubletBeatsAtTheExpectedGap) {
  // Two lines 588.9950 and 589.5924 nm (NIST via HyperPhysics,
  // references.md) with weights 1 : 0.5 (config/sources.ini): the fringe
  // visibility falls to (1 - 0.5)/(1 + 0.5) = 1/3 of its value at contact
  // where the two fringe systems are in antiphase, at gap t = lambda1
  // lambda2 / (4 (lambda2 - lambda1)) [derived: two-line beat]. A wedge of
  // flats spans 0 .. 300 um of gap.
  SimulationOptions o;
  o.gap.part_radius_m = GapOptions::kFlat;
  o.wavelength = ResolveWavelength("sodium", SourceTable::Default());
  ASSERT_EQ(o.wavelength.lines.size(), 2U);
  o.stack = MediaStack{1.5168, 1.0, 1.5168};
  o.camera.width_px = 7000;
  o.camera.height_px = 8;
  o.camera.pixel_pitch_m = 1e-6;
  o.aperture_diameter_m = 7.2e-3;
  o.gap.tilt_x_m = 150e-6;
  o.gap.contact_offset_m = 150e-6;
  o.camera.full_well_e = 0;
  o.camera.read_noise_e = 0;
  o.camera.bit_depth = 32;
  const SimulationResult r = Simulate(o);
  const double l1 = 588.9950e-9;
  const double l2 = 589.5924e-9;
  const double t_beat = l1 * l2 / (4 * (l2 - l1));
  const double cx = 0.5 * (o.camera.width_px - 1);
  // Modulation by a local least-squares sinusoid of the known local period
  // over about three periods [practice]: visibility = amplitude / mean.
  const double slope_px = 150e-6 / 3.6e-3 * 1e-6;  // gap per pixel
  const double period_px = 589.29e-9 / 2 / slope_px;
  auto visibility_at = [&](double gap) {
    const double x = cx + (gap - 150e-6) / 150e-6 * 3.6e-3 / 1e-6;
    const int x0 = static_cast<int>(std::lround(x));
    Eigen::MatrixXd a(21, 3);
    Eigen::VectorXd b(21);
    for (int i = 0; i < 21; ++i) {
      const double w = 2 * kPi * (i - 10) / period_px;
      a.row(i) << 1, std::cos(w), std::sin(w);
      b(i) = static_cast<double>(r.image.at<float>(4, x0 + i - 10));
    }
    const Eigen::VectorXd c = a.colPivHouseholderQr().solve(b);
    return std::hypot(c(1), c(2)) / c(0);
  };
  const double v0 = visibility_at(10e-6);
  const double vb = visibility_at(t_beat);
  EXPECT_NEAR(vb / v0, 1.0 / 3.0, 0.03) << v0 << " " << vb;
}

TEST(GapFile, ParsesEveryKeyAndPointsAtBadLines) {
  const std::string text =
      "[gap]\npart-radius = 250mm\nplate-radius = flat\ncontact = centre\n"
      "contact-offset = 20nm\ncontact-x = 0.1mm\ncontact-y = -0.05mm\n"
      "tilt-x = 2urad\ntilt-y = 30nm\n[zernike]\nz5 = 40nm\nz12 = -10nm\n"
      "[media]\nupper-index = 1.5168\ngap-index = 1.0\nlower-index = 1.5168\n"
      "view = reflected\n[light]\nwavelength = helium-d\nbandwidth = 0.1nm\n"
      "[aperture]\ndiameter = 400px\ncentre-x-px = 250\ncentre-y-px = 240.5\n"
      "[camera]\nwidth-px = 500\nheight-px = 480\npixel-pitch = 12.5um\n"
      "blur-sigma-px = 0.7\nfalloff = 0.1\nbackground = 0.01\nsurround = "
      "0.04\nexposure = 0.75\nfull-well = 15000\nread-noise = 6\ngamma = "
      "1\nbit-depth = 8\njpeg-quality = 90\nseed = 7\n";
  const SimulationOptions o = ParseGapFile(IniFile::Parse(text, "lens.ini"));
  EXPECT_DOUBLE_EQ(o.gap.part_radius_m, 0.25);
  EXPECT_TRUE(std::isinf(o.gap.plate_radius_m));
  EXPECT_NEAR(o.aperture_diameter_m, 400 * 12.5e-6, 1e-15);
  EXPECT_NEAR(o.gap.tilt_x_m, 2e-6 * 2.5e-3, 1e-18);
  EXPECT_NEAR(o.gap.tilt_y_m, 30e-9, 1e-18);
  ASSERT_EQ(o.gap.zernike_m.size(), 13U);
  EXPECT_NEAR(o.gap.zernike_m[12], -10e-9, 1e-20);
  EXPECT_EQ(o.wavelength.source_name, "helium-d");
  EXPECT_EQ(o.camera.bit_depth, 8);
  EXPECT_EQ(o.seed, 7U);

  auto message = [](const std::string& bad) {
    try {
      ParseGapFile(IniFile::Parse(bad, "bad.ini"));
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("accepted");
  };
  EXPECT_NE(message("[gap]\npart-radius = 250\n").find("bad.ini:2"),
            std::string::npos);
  EXPECT_NE(message("[camera]\nwidth-px = 100\nsensor = x\n")
                .find("bad.ini:3: unknown key 'sensor'"),
            std::string::npos);
  EXPECT_NE(message("[optics]\na = 1\n").find("unknown section"),
            std::string::npos);
  EXPECT_NE(message("[camera]\nbit-depth = 12\n")
                .find("bad.ini:2: [camera] bit-depth"),
            std::string::npos);
  EXPECT_NE(message("[zernike]\nz200 = 1nm\n").find("bad.ini:2"),
            std::string::npos);
  EXPECT_NE(message("[gap]\npart-radius = 1mm\n").find("[gap] part-radius"),
            std::string::npos);
  EXPECT_NE(message("[gap]\npart-radius = 100mm\nplate-radius = -90mm\n")
                .find("contact = edge"),
            std::string::npos);
}

TEST(GapFile, FixturesRenderAndWrite) {
  const std::filesystem::path dir =
      std::filesystem::path(FIGURA_SOURCE_DIR) / "tests/fixtures/sim";
  const std::filesystem::path tmp =
      std::filesystem::path(FIGURA_TEST_TMP) / "sim_unit";
  std::filesystem::create_directories(tmp);
  int count = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) {
    if (entry.path().extension() != ".ini" ||
        entry.path().filename().string().starts_with("bad")) {
      continue;
    }
    SimulationOptions o = LoadGapFile(entry.path());
    const SimulationResult r = Simulate(o);
    const std::filesystem::path out =
        tmp / (entry.path().stem().string() +
               (o.camera.bit_depth == 8 ? ".png" : ".tif"));
    WriteSimulation(r, out, o.camera);
    const Image back = LoadImage(out);
    EXPECT_EQ(back.info.width, o.camera.width_px);
    EXPECT_EQ(back.info.bit_depth, o.camera.bit_depth);
    EXPECT_TRUE(std::filesystem::exists(TruthPathFor(out)));
    ++count;
  }
  EXPECT_GE(count, 3);
}

}  // namespace
}  // namespace figura
