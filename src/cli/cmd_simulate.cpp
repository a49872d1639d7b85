// `figura simulate --gap FILE --out IMAGE [--seed N] [--json PATH|-]`:
// renders a synthetic fringe photograph from a gap file (sim/gap_file.h)
// and writes it with its truth file "<stem>.truth.json" beside it. Parses,
// validates, calls Simulate (sim/simulation.h) and writes.
#include <chrono>
#include <cstdint>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "cli/command.h"
#include "cli/options.h"
#include "core/error.h"
#include "io/result_json.h"
#include "sim/gap_file.h"
#include "sim/simulation.h"

namespace figura::cli {
namespace {

int Run(const std::vector<std::string>& args) {
  po::options_description desc("simulate options");
  desc.add_options()("gap", po::value<std::string>(),
                     "gap file (INI): the gap, media, light, aperture and "
                     "camera; see docs")(
      "out", po::value<std::string>(),
      "image to write (.tif, .png or .jpg); the truth goes to "
      "<stem>.truth.json beside it")(
      "seed", po::value<std::uint64_t>(),
      "noise seed, overriding the gap file's [camera] seed")(
      "json", po::value<std::string>(),
      "also write the truth JSON to PATH ('-' for standard output)");
  po::variables_map vm;
  if (!ParseCommand("simulate",
                    "--gap FILE --out IMAGE [--seed N] [--json PATH|-]", args,
                    desc, {}, &vm, std::cout)) {
    return kExitOk;
  }
  for (const char* name : {"gap", "out"}) {
    if (vm.count(name) == 0U) {
      throw InputError(std::string("--") + name +
                       " is required (see figura simulate --help)");
    }
  }
  const std::string gap_path = vm["gap"].as<std::string>();
  const std::string out_path = vm["out"].as<std::string>();
  const std::string json_path =
      vm.count("json") != 0U ? vm["json"].as<std::string>() : std::string();
  SimulationOptions options = LoadGapFile(gap_path);
  if (vm.count("seed") != 0U) options.seed = vm["seed"].as<std::uint64_t>();
  if (const std::string m = CheckOutputPath(out_path, options.camera.bit_depth);
      !m.empty()) {
    throw InputError("--out " + m);
  }
  const auto start = std::chrono::steady_clock::now();
  const SimulationResult result = Simulate(options);
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start)
          .count();
  WriteSimulation(result, out_path, options.camera);
  if (!json_path.empty()) {
    WriteJson(json_path, SimulationTruthJson(result, out_path, options.camera));
  }
  std::ostream& log = json_path == "-" ? std::cerr : std::cout;
  const nlohmann::json& t = result.truth["truth"];
  std::ostringstream line;
  line.precision(4);
  line << "wrote " << out_path << " (" << result.image.cols << " x "
       << result.image.rows << ", " << options.camera.bit_depth << "-bit) and "
       << TruthPathFor(out_path).string() << ": "
       << t["fringes_across_aperture"].get<double>()
       << " fringes across the aperture, shortest period "
       << result.min_fringe_period_px << " px, seed " << options.seed << ", "
       << seconds << " s\n";
  log << line.str();
  for (const std::string& m : result.messages) log << "warning: " << m << "\n";
  return kExitOk;
}

const Registrar kRegistrar({"simulate",
                            "render a synthetic fringe photo with a truth file",
                            &Run});

}  // namespace
}  // namespace figura::cli
