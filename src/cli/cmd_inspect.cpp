// `figura inspect --job JOB.ini [--out DIR] [--jobs N] [--force] IMAGE...|DIR`
// and `figura inspect --merge DIR... [--out DIR]`: a lot of photographs
// analysed and judged against the job's tolerance (inspect/lot_run.h). Exit
// codes: 0 every part passes, 1 a part fails or is indeterminate, 2 an
// input error (errors do not stop the lot), 130 interrupted (SIGINT): the
// parts finished so far are in the summary. docs/lots.md has the details.
#include <atomic>
#include <csignal>
#include <filesystem>
#include <iostream>
#include <string>
#include <vector>

#include "cli/command.h"
#include "cli/options.h"
#include "core/error.h"
#include "inspect/job_file.h"
#include "inspect/lot_run.h"

namespace figura::cli {
namespace {

constexpr const char* kUsage =
    "--job JOB.ini [--out DIR] [--jobs N] [--force] "
    "[--progress auto|bar|lines|quiet] IMAGE...|DIR\n"
    "       figura inspect --merge SHARD_DIR... [--out DIR] [--force]";

// Set by SIGINT: stop dispatching new parts.
std::atomic<bool> g_stop{false};
static_assert(std::atomic<bool>::is_always_lock_free,
              "the SIGINT flag must be lock-free to be set in a handler");

extern "C" void OnInterrupt(int /*signal*/) {
  g_stop.store(true);
  // A second Ctrl-C ends the process at once.
  std::signal(SIGINT, SIG_DFL);
}

// Installs the SIGINT handler for the lifetime of the object.
class InterruptGuard {
 public:
  InterruptGuard() : previous_(std::signal(SIGINT, OnInterrupt)) {}
  InterruptGuard(const InterruptGuard&) = delete;
  InterruptGuard& operator=(const InterruptGuard&) = delete;
  ~InterruptGuard() { std::signal(SIGINT, previous_); }

 private:
  void (*previous_)(int);
};

ProgressStyle ParseProgress(const std::string& text) {
  if (text == "auto") return ProgressStyle::kAuto;
  if (text == "bar") return ProgressStyle::kBar;
  if (text == "lines") return ProgressStyle::kLines;
  if (text == "quiet") return ProgressStyle::kQuiet;
  throw InputError("--progress: '" + text +
                   "' is not accepted; use auto, bar, lines or quiet");
}

void PrintOutcome(const LotResult& r, const std::filesystem::path& out) {
  const LotCounts c = r.summary.Counts();
  std::cout << "lot " << (r.summary.lot.empty() ? "-" : r.summary.lot) << ": "
            << c.total << " of " << r.summary.inputs_total << " inputs, "
            << c.pass << " pass, " << c.fail << " fail, " << c.indeterminate
            << " indeterminate, " << c.error << " error -> "
            << (r.summary.interrupted ? std::string("interrupted")
                                      : r.summary.Verdict())
            << "\n"
            << "summary: " << (out / "summary.csv").string() << ", "
            << (out / "summary.json").string() << ", "
            << (out / "index.html").string() << "\n";
  if (r.summary.interrupted) {
    std::cerr << "figura inspect: interrupted; the summary lists the "
              << c.total << " parts finished (rerun to continue: finished "
              << "parts are skipped)\n";
  }
}

int Run(const std::vector<std::string>& args) {
  po::options_description desc("inspect options");
  std::string job_path, out = ".", progress = "auto";
  std::vector<std::string> inputs, merge;
  int jobs = 0;
  // clang-format off
  desc.add_options()
      ("input", po::value(&inputs)->multitoken(), "photographs or folders of photographs")
      ("job", po::value(&job_path),
       "job file (INI): analysis, wavelength, media, pixel pitch, test plate, tolerance, lot, "
       "operator, part naming (docs/lots.md)")
      ("out", po::value(&out)->default_value("."), "output folder for reports and the summary")
      ("jobs", po::value<int>(&jobs)->default_value(0),
       "photographs analysed at once (0: one per hardware thread)")
      ("force", "recompute every part and overwrite existing part files")
      ("merge", po::value(&merge)->multitoken(),
       "combine the summaries of shard folders (same job and tool version) into --out")
      ("progress", po::value(&progress)->default_value("auto"),
       "auto (a bar on a terminal, else one line per part), bar, lines or quiet");
  // clang-format on
  po::positional_options_description positional;
  positional.add("input", -1);
  po::variables_map vm;
  if (!ParseCommand("inspect", kUsage, args, desc, positional, &vm, std::cout))
    return kExitOk;
  const bool force = vm.count("force") != 0U;

  if (!merge.empty()) {
    if (!inputs.empty() || !job_path.empty()) {
      throw InputError(
          "--merge takes shard folders only (no --job, no images)");
    }
    MergeOptions m;
    m.shards.assign(merge.begin(), merge.end());
    m.out_dir = out;
    m.force = force;
    const LotResult r = MergeLots(m);
    PrintOutcome(r, out);
    return r.exit_code;
  }
  if (job_path.empty()) {
    throw InputError("--job is required: the job file of the lot");
  }
  LotOptions options;
  options.job = LoadJobFile(job_path);
  options.inputs = inputs;
  options.out_dir = out;
  options.jobs = jobs;
  options.force = force;
  options.progress = ParseProgress(progress);
  options.stop = &g_stop;
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  g_stop.store(false);
  const InterruptGuard guard;
  const LotResult r = RunLot(options);
  PrintOutcome(r, out);
  return r.exit_code;
}

const Registrar kRegistrar(
    {"inspect",
     "a lot: every photo analysed and judged against the job's tolerance; "
     "report per part, lot summary (CSV, JSON, HTML); exit code 0/1/2",
     &Run});

}  // namespace
}  // namespace figura::cli
