// Ring-analysis speed benchmark (issue "ring analysis: Speed"). Renders a
// 12-megapixel (4000 x 3000) 16-bit TIFF of Newton's rings with the
// simulator (lens on a flat, ~100 rings, blur, shot and read noise,
// fall-off), then times in the same run:
//   (a) LoadImage alone (read, hash, decode, convert to float),
//   (b) the analysis alone (AnalyseRings on the loaded image, in process),
//   (c) the whole `figura rings` command (spawned; wall time and peak RSS),
//   (d) the numpy/scipy peer ../shared/peers/rings_peer.py (spawned).
// Prints the ratios against the targets (wall times; the analysis
// ratio also in processor time, for information) and both radius errors
// against the truth file. Times are the minimum over repetitions (the
// machine is shared and noisy: the minimum is the least disturbed run
// [practice]); medians are printed beside them.
//
// Usage: figura_bench_rings [--reps N] [--dir FOLDER] [--no-peer]
//                           [--no-command] [--size WxH]
// (--no-command: only (a) and (b), e.g. while profiling the analysis.)
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "bench_util.h"
#include "core/error.h"
#include "core/light_source.h"
#include "core/quantity.h"
#include "fringe/ring_analysis.h"
#include "io/image.h"
#include "optics/media.h"
#include "sim/simulation.h"

namespace {

namespace fs = std::filesystem;
using figura::bench::Clock;
using figura::bench::Median;
using figura::bench::Min;
using figura::bench::ReadAll;
using figura::bench::Seconds;

// Invented scene: a 1500 mm plano-convex lens on a flat, 18 mm aperture at
// 6.5 um per pixel (about 2770 px across), mercury green line. Rings in the
// aperture: a^2 / (lambda R) = 81 mm^2 / 0.819 mm^2 = ~99.
constexpr double kPixelPitchUm = 6.5;
constexpr double kWavelengthNm = 546.074;  // mercury e line in air [memory]

// The scene as simulator options (built in code, not as a gap file, so that
// the benchmark does not depend on the gap-file spelling).
figura::SimulationOptions Scene(int width, int height) {
  figura::SimulationOptions o;
  o.gap.part_radius_m = 1.5;
  o.gap.plate_radius_m = figura::GapOptions::kFlat;
  o.stack = figura::MediaStack{1.5168, 1.0, 1.5168};
  o.view = figura::View::kReflected;
  o.wavelength =
      figura::ResolveWavelength("mercury-e", figura::SourceTable::Default());
  // Scale the aperture with the image so that a --size run keeps the
  // fringe density (about 0.92 of the image height).
  o.aperture_diameter_m = 18e-3 * height / 3000.0;
  o.centre_x_px = (width - 1) / 2.0 + 37.25;
  o.centre_y_px = (height - 1) / 2.0 - 21.5;
  o.camera.width_px = width;
  o.camera.height_px = height;
  o.camera.pixel_pitch_m = kPixelPitchUm * 1e-6;
  o.camera.blur_sigma_px = 0.8;
  o.camera.falloff = 0.2;
  o.camera.background = 0.02;
  o.camera.surround = 0.03;
  o.camera.exposure = 0.8;
  o.camera.full_well_e = 20000.0;
  o.camera.read_noise_e = 5.0;
  o.camera.bit_depth = 16;
  o.seed = 20261202;
  o.origin = "figura_bench_rings";
  return o;
}

void PrintRow(const char* what, double value, const char* target, bool ok) {
  std::printf("  %-34s %10.3f   %-10s %s\n", what, value, target,
              ok ? "met" : "NOT met");
}

}  // namespace

int main(int argc, char** argv) {
  figura::bench::BenchArgs args;
  args.dir = fs::path(FIGURA_BENCH_TMP) / "bench_rings";
  bool command_runs = true;  // false: in-process analysis only
  if (!figura::bench::ParseBenchArgs(
          argc, argv,
          "figura_bench_rings [--reps N] [--dir FOLDER] [--no-peer] "
          "[--no-command] [--size WxH]",
          &args, [&](const std::string& a) {
            if (a != "--no-command") return false;
            command_runs = false;
            args.peer = false;
            return true;
          })) {
    return 2;
  }
  const int reps = args.reps;
  const fs::path& dir = args.dir;
  const int width = args.width;
  const int height = args.height;
  try {
    fs::create_directories(dir);
    const fs::path image_path = dir / "bench_lens.tif";

    // Render once per run (the same seed gives the same photograph).
    const auto r0 = Clock::now();
    const figura::SimulationOptions sim = Scene(width, height);
    const figura::SimulationResult rendered = figura::Simulate(sim);
    figura::WriteSimulation(rendered, image_path, sim.camera);
    const auto truth = nlohmann::json::parse(
        ReadAll(figura::TruthPathFor(image_path)))["truth"];
    const double true_r_mm = truth["part_radius_mm"].get<double>();
    std::printf("rendered %dx%d 16-bit TIFF in %.1f s: %s (%.1f MB)\n", width,
                height, Seconds(r0, Clock::now()), image_path.c_str(),
                static_cast<double>(fs::file_size(image_path)) / 1e6);
    std::printf("true R = %.4f mm, min fringe period %.2f px\n", true_r_mm,
                rendered.min_fringe_period_px);

    // Options as `figura rings --wavelength mercury-e --pixel-pitch 6.5um`
    // (defaults for everything else, the media stack of the gap file).
    figura::RingsOptions options;
    options.fit.wavelength = sim.wavelength;
    options.fit.pixel_pitch = figura::Length::Micrometres(kPixelPitchUm);
    options.fit.stack = sim.stack;
    options.fit.view = sim.view;

    std::vector<double> decode;
    std::vector<double> decode_cpu;
    std::vector<double> analysis;
    std::vector<double> analysis_cpu;
    std::vector<double> command;
    std::vector<double> peer_s;
    std::vector<double> peak;
    double our_r = std::nan("");
    double centre_error_px = std::nan("");
    double peer_r = std::nan("");
    double analysis_r = std::nan("");
    double analysis_centre_error_px = std::nan("");
    // Per-stage minima of the in-process analysis (detection stages, then
    // the fit and checks of AnalyseRings as the rest): wall and processor
    // seconds (the processor time is steadier on a shared machine).
    std::vector<figura::StageTime> stages;
    const auto keep_stage = [&stages](const figura::StageTime& t) {
      for (auto& best : stages) {
        if (best.name == t.name) {
          best.wall_s = std::min(best.wall_s, t.wall_s);
          best.cpu_s = std::min(best.cpu_s, t.cpu_s);
          return;
        }
      }
      stages.push_back(t);
    };
    const std::optional<fs::path> peer_script =
        args.peer ? figura::bench::FindPeer("rings_peer.py") : std::nullopt;

    for (int rep = 0; rep < reps; ++rep) {
      auto t0 = Clock::now();
      const std::clock_t c0 = std::clock();
      const figura::Image image = figura::LoadImage(image_path);
      auto t1 = Clock::now();
      const std::clock_t c1 = std::clock();
      const figura::RingsResult result = figura::AnalyseRings(image, options);
      auto t2 = Clock::now();
      const std::clock_t c2 = std::clock();
      decode.push_back(Seconds(t0, t1));
      decode_cpu.push_back(static_cast<double>(c1 - c0) / CLOCKS_PER_SEC);
      analysis.push_back(Seconds(t1, t2));
      analysis_cpu.push_back(static_cast<double>(c2 - c1) / CLOCKS_PER_SEC);
      if (result.status == figura::Status::kError) {
        std::printf("analysis failed:");
        for (const auto& m : result.messages) std::printf(" %s;", m.c_str());
        std::printf("\n");
      } else {
        analysis_r = result.fit.radius_m * 1e3;
        analysis_centre_error_px = std::hypot(
            result.fit.centre_px.x - truth["fringe_centre_px"][0].get<double>(),
            result.fit.centre_px.y -
                truth["fringe_centre_px"][1].get<double>());
      }
      figura::StageTime rest{"fit and checks", analysis.back(),
                             analysis_cpu.back()};
      for (const figura::StageTime& t : result.detection.stage_times) {
        keep_stage(t);
        rest.wall_s -= t.wall_s;
        rest.cpu_s -= t.cpu_s;
      }
      keep_stage(rest);

      if (!command_runs) {
        std::printf("rep %d: decode %.3f s, analysis %.3f s\n", rep + 1,
                    decode.back(), analysis.back());
        continue;
      }
      const fs::path json = dir / "figura.json";
      const auto ours = figura::bench::RunFigura(
          {"rings", image_path.string(), "--wavelength", "mercury-e",
           "--pixel-pitch", "6.5um", "--json", json.string()},
          dir, json);
      if (!ours) return 1;
      command.push_back(ours->child.seconds);
      peak.push_back(ours->child.peak_mb);
      const nlohmann::json& ours_json = ours->result;
      our_r = ours_json["radius_of_curvature_mm"].get<double>();
      centre_error_px =
          std::hypot(ours_json["fringe_centre_px"][0].get<double>() -
                         truth["fringe_centre_px"][0].get<double>(),
                     ours_json["fringe_centre_px"][1].get<double>() -
                         truth["fringe_centre_px"][1].get<double>());

      std::optional<double> peer_rep_s;
      if (peer_script) {
        const auto theirs = figura::bench::RunPeer(
            *peer_script,
            {image_path.string(), std::to_string(kWavelengthNm),
             std::to_string(kPixelPitchUm * 1e-3)},
            dir);
        if (theirs) {
          peer_rep_s = theirs->child.seconds;
          peer_s.push_back(*peer_rep_s);
          peer_r = theirs->result["radius_of_curvature_mm"].get<double>();
        }
      }
      figura::bench::PrintRep(rep, decode.back(), analysis.back(), ours->child,
                              peer_rep_s);
    }

    std::printf("\nminimum (median) over %d runs, seconds:\n", reps);
    std::printf("  decode   %.3f (%.3f)\n", Min(decode), Median(decode));
    std::printf("  analysis %.3f (%.3f)\n", Min(analysis), Median(analysis));
    if (!command.empty())
      std::printf("  command  %.3f (%.3f)\n", Min(command), Median(command));
    if (!peer_s.empty())
      std::printf("  peer     %.3f (%.3f)\n", Min(peer_s), Median(peer_s));

    std::printf("\nanalysis stages, minimum over %d runs, ms:\n", reps);
    std::printf("  %-34s %8s %8s\n", "stage", "wall", "cpu");
    for (const figura::StageTime& t : stages)
      std::printf("  %-34s %8.1f %8.1f\n", t.name.c_str(), 1e3 * t.wall_s,
                  1e3 * t.cpu_s);
    std::printf("  %-34s %8.1f %8.1f\n", "analysis", 1e3 * Min(analysis),
                1e3 * Min(analysis_cpu));

    std::printf("\n  %-34s %10s   %-10s\n", "ratio", "value", "target");
    const double a_over_d = Min(analysis) / Min(decode);
    PrintRow("analysis / decode", a_over_d, "<= 1", a_over_d <= 1.0);
    bool all = a_over_d <= 1.0;
    // The target compares wall times: the analysis may use both cores, the
    // decode uses one. The same ratio in processor time (all threads) gives
    // no credit for the second core and is steadier on a loaded machine;
    // printed for information.
    std::printf("  %-34s %10.3f   (processor time, information)\n",
                "analysis / decode, cpu", Min(analysis_cpu) / Min(decode_cpu));
    if (!peer_s.empty()) {
      const double p_over_c = Min(peer_s) / Min(command);
      PrintRow("peer / command", p_over_c, ">= 10", p_over_c >= 10.0);
      all = all && p_over_c >= 10.0;
    }
    if (!peak.empty()) {
      const double peak_mb = *std::max_element(peak.begin(), peak.end());
      PrintRow("peak memory of command (MB)", peak_mb, "< 400",
               peak_mb < 400.0);
      all = all && peak_mb < 400.0;
    }

    std::printf("\n  R error vs truth (%.4f mm):\n", true_r_mm);
    std::printf("    figura rings  %+.4f %%  (in-process %+.4f %%)\n",
                100.0 * (our_r / true_r_mm - 1.0),
                100.0 * (analysis_r / true_r_mm - 1.0));
    std::printf("    figura centre error %.4f px  (in-process %.4f px)\n",
                centre_error_px, analysis_centre_error_px);
    if (!peer_s.empty())
      std::printf("    peer          %+.4f %%\n",
                  100.0 * (peer_r / true_r_mm - 1.0));
    std::printf("\n%s\n", !all           ? "some speed targets not met"
                          : command_runs ? "all speed targets met"
                                         : "analysis target met (command, "
                                           "peer and memory not measured)");
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "figura_bench_rings: %s\n", e.what());
    return 1;
  }
}
