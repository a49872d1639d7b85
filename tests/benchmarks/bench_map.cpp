// Surface-map speed and accuracy benchmark (issue "Surface maps: Speed").
// Renders a 12-megapixel (4000 x 3000) 16-bit TIFF of carrier fringes with
// the simulator (two flats, a wedge of about 60 fringes, shape terms through
// radial order 4, blur, shot and read noise, fall-off, gamma), then times in
// the same run:
//   (a) LoadImage alone,
//   (b) the analysis alone (AnalyseMap on the loaded image, in process),
//   (c) the whole `figura map` command (spawned; wall time and peak RSS),
//   (d) the numpy/scikit-image peer ../shared/peers/map_peer.py (spawned).
// Prints peer / command (target >= 5) and both errors against the truth:
// the RMS over j = 3..14 (radial orders 2..4; piston and tilt excluded) of
// the coefficient differences, the truth re-fitted over each program's own
// evaluated aperture (ours: from the JSON; the peer's: 0.97 of the clear
// aperture, as its source says). Times are the minimum over repetitions
// [practice: the least disturbed run on a shared machine].
//
// Usage: figura_bench_map [--reps N] [--dir FOLDER] [--no-peer] [--size WxH]
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "bench_util.h"
#include "core/error.h"
#include "core/light_source.h"
#include "io/image.h"
#include "sim/gap.h"
#include "sim/simulation.h"
#include "surface/surface_map.h"
#include "surface/zernike_fit.h"

namespace {

namespace fs = std::filesystem;
using figura::bench::Clock;
using figura::bench::Min;
using figura::bench::Seconds;

constexpr double kPixelPitchUm = 10.0;
constexpr int kLastTerm = 14;  // j of the last radial-order-4 term

// Invented scene: a window against a reference flat, helium d line.
figura::SimulationOptions Scene(int width, int height) {
  figura::SimulationOptions o;
  o.gap.part_radius_m = figura::GapOptions::kFlat;
  o.gap.plate_radius_m = figura::GapOptions::kFlat;
  o.gap.contact_offset_m = 10.5e-6;
  o.gap.tilt_x_m = 8.0e-6;  // ~54 fringes across
  o.gap.tilt_y_m = -2.0e-6;
  o.gap.zernike_m = {0,      0,     0,    30e-9, 55e-9, -40e-9, 10e-9, 18e-9,
                     -12e-9, -7e-9, 6e-9, 8e-9,  14e-9, -5e-9,  4e-9};
  o.wavelength =
      figura::ResolveWavelength("helium-d", figura::SourceTable::Default());
  o.aperture_diameter_m = 0.93 * height * kPixelPitchUm * 1e-6;
  o.centre_x_px = (width - 1) / 2.0 + 41.5;
  o.centre_y_px = (height - 1) / 2.0 - 12.25;
  o.camera.width_px = width;
  o.camera.height_px = height;
  o.camera.pixel_pitch_m = kPixelPitchUm * 1e-6;
  o.camera.blur_sigma_px = 1.0;
  o.camera.falloff = 0.15;
  o.camera.background = 0.02;
  o.camera.full_well_e = 15000.0;
  o.camera.read_noise_e = 6.0;
  o.camera.gamma = 0.9;
  o.camera.bit_depth = 16;
  o.seed = 20261203;
  o.origin = "figura_bench_map";
  return o;
}

// The truth's coefficients (nm) over `circle`: the exact gap at the pixel
// centres of the disc, fitted to radial order 6.
std::vector<double> TruthOver(const figura::SimulationOptions& sim,
                              const figura::Circle& circle) {
  const figura::GapModel model(sim.gap, sim.aperture_diameter_m / 2.0);
  const double p = sim.camera.pixel_pitch_m;
  cv::Mat h(sim.camera.height_px, sim.camera.width_px, CV_32FC1,
            cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
  for (int y = 0; y < h.rows; y += 2) {  // every other row and column
    for (int x = 0; x < h.cols; x += 2) {
      if (std::hypot(x - circle.centre.x, y - circle.centre.y) > circle.radius)
        continue;
      h.at<float>(y, x) = static_cast<float>(
          model.At((x - sim.CentreX()) * p, (sim.CentreY() - y) * p));
    }
  }
  figura::ZernikeFitOptions fo;
  fo.max_order = 6;
  const figura::ZernikeFitResult fit = figura::FitZernikeGrid(h, circle, fo);
  std::vector<double> nm;
  for (double c : fit.coefficients_m) nm.push_back(c * 1e9);
  return nm;
}

// RMS over j = 3..kLastTerm of (list coefficient - truth), nm.
double CoefficientError(const nlohmann::json& list,
                        const std::vector<double>& truth) {
  double ss = 0.0;
  int n = 0;
  for (const auto& t : list) {
    const int j = t["j"].get<int>();
    if (j < 3 || j > kLastTerm) continue;
    const double d = t["coefficient_nm"].get<double>() - truth[j];
    ss += d * d;
    ++n;
  }
  return n > 0 ? std::sqrt(ss / n) : std::nan("");
}

}  // namespace

int main(int argc, char** argv) {
  figura::bench::BenchArgs args;
  args.dir = fs::path(FIGURA_BENCH_TMP) / "bench_map";
  if (!figura::bench::ParseBenchArgs(
          argc, argv,
          "figura_bench_map [--reps N] [--dir FOLDER] [--no-peer] [--size WxH]",
          &args)) {
    return 2;
  }
  const int reps = args.reps;
  const fs::path& dir = args.dir;
  const int width = args.width;
  const int height = args.height;
  try {
    fs::create_directories(dir);
    const fs::path image_path = dir / "bench_window.tif";
    const auto r0 = Clock::now();
    const figura::SimulationOptions sim = Scene(width, height);
    const figura::SimulationResult rendered = figura::Simulate(sim);
    figura::WriteSimulation(rendered, image_path, sim.camera);
    std::printf("rendered %dx%d 16-bit TIFF in %.1f s: %s\n", width, height,
                Seconds(r0, Clock::now()), image_path.c_str());
    const double lambda_nm = sim.wavelength.value.metres * 1e9;

    figura::MapOptions options;
    options.wavelength = sim.wavelength;
    options.stack = sim.stack;
    options.thin_side = figura::ThinSide::kLeft;
    options.thin_side_given = true;

    const std::optional<fs::path> peer_script =
        args.peer ? figura::bench::FindPeer("map_peer.py") : std::nullopt;
    std::vector<double> decode, analysis, command, peer_s, peak;
    nlohmann::json ours_json, peer_json;
    for (int rep = 0; rep < reps; ++rep) {
      const auto t0 = Clock::now();
      const figura::Image image = figura::LoadImage(image_path);
      const auto t1 = Clock::now();
      const figura::MapResult result = figura::AnalyseMap(image, options);
      const auto t2 = Clock::now();
      decode.push_back(Seconds(t0, t1));
      analysis.push_back(Seconds(t1, t2));
      if (result.status == figura::Status::kError) {
        std::printf("analysis failed: %s\n", result.messages.back().c_str());
        return 1;
      }
      const fs::path json = dir / "figura.json";
      const auto ours = figura::bench::RunFigura(
          {"map", image_path.string(), "--wavelength", "helium-d",
           "--thin-side", "left", "--json", json.string()},
          dir, json);
      if (!ours) return 1;
      command.push_back(ours->child.seconds);
      peak.push_back(ours->child.peak_mb);
      ours_json = ours->result;
      std::optional<double> peer_rep_s;
      if (peer_script) {
        const auto theirs = figura::bench::RunPeer(
            *peer_script, {image_path.string(), std::to_string(lambda_nm)},
            dir);
        if (theirs) {
          peer_rep_s = theirs->child.seconds;
          peer_s.push_back(*peer_rep_s);
          peer_json = theirs->result;
        }
      }
      figura::bench::PrintRep(rep, decode.back(), analysis.back(), ours->child,
                              peer_rep_s);
    }
    std::printf(
        "\nminimum over %d runs, seconds: decode %.3f, analysis "
        "%.3f, command %.3f, peer %.3f\n",
        reps, Min(decode), Min(analysis), Min(command), Min(peer_s));
    bool met = true;
    if (!peer_s.empty()) {
      const double ratio = Min(peer_s) / Min(command);
      std::printf("  peer / command  %.2f   target >= 5   %s\n", ratio,
                  ratio >= 5.0 ? "met" : "NOT met");
      met = ratio >= 5.0;
    }
    // Errors against the truth over each program's evaluated aperture.
    const figura::Circle ours_circle{
        {ours_json["aperture_centre_px"][0].get<double>(),
         ours_json["aperture_centre_px"][1].get<double>()},
        ours_json["aperture_diameter_px"].get<double>() / 2.0};
    const double our_error =
        CoefficientError(ours_json["zernike"], TruthOver(sim, ours_circle));
    std::printf("  figura map: RMS coefficient error (j = 3..14) %.3f nm\n",
                our_error);
    if (!peer_json.is_null()) {
      const figura::Circle peer_circle{
          {sim.CentreX(), sim.CentreY()},
          0.97 * sim.aperture_diameter_m / 2.0 / sim.camera.pixel_pitch_m};
      const double peer_error =
          CoefficientError(peer_json["zernike"], TruthOver(sim, peer_circle));
      std::printf("  peer:       RMS coefficient error (j = 3..14) %.3f nm\n",
                  peer_error);
      met = met && our_error < peer_error;
      std::printf("  more accurate than the peer: %s\n",
                  our_error < peer_error ? "yes" : "NO");
    }
    std::printf("\n%s\n", met ? "targets met" : "some targets not met");
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "figura_bench_map: %s\n", e.what());
    return 1;
  }
}
