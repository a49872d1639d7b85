// Shared parts of the whole-command benchmarks (bench_rings, bench_map,
// bench_lot): wall-clock timing, the minimum and median of repetitions, the
// common command line, running a child process (wall time, peak resident
// memory, exit code), the `figura` command under test and the peer scripts
// of ../shared/peers. Times are compared as the minimum over repetitions:
// the machine is shared and noisy, the minimum is the least disturbed run
// [practice].
#pragma once

#include <sys/resource.h>
#include <sys/time.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <nlohmann/json.hpp>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

extern char** environ;  // NOLINT(readability-redundant-declaration)

namespace figura::bench {

namespace fs = std::filesystem;

// The clock of every wall time.
using Clock = std::chrono::steady_clock;

// Seconds from a to b.
inline double Seconds(Clock::time_point a, Clock::time_point b) {
  return std::chrono::duration<double>(b - a).count();
}

// The smallest value; NaN for none.
inline double Min(const std::vector<double>& v) {
  return v.empty() ? std::nan("") : *std::min_element(v.begin(), v.end());
}

// The median; NaN for none.
inline double Median(std::vector<double> v) {
  if (v.empty()) return std::nan("");
  std::sort(v.begin(), v.end());
  const std::size_t n = v.size();
  return n % 2 == 1 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

// The whole content of a text file ("" if it cannot be read).
inline std::string ReadAll(const fs::path& path) {
  std::ifstream in(path);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

// The command line shared by the photo benchmarks.
struct BenchArgs {
  int reps = 3;      // --reps N: repetitions (at least 1)
  fs::path dir;      // --dir FOLDER: where the photo and outputs go
  bool peer = true;  // --no-peer: skip the peer script
  int width = 4000;  // --size WxH: photo size in pixels
  int height = 3000;
};

// Parses argv into *args: --reps, --dir, --no-peer, --size, and any option
// `extra` accepts (it returns whether it knew the option). Prints `usage` to
// standard error and returns false on anything else.
inline bool ParseBenchArgs(
    int argc, char** argv, const char* usage, BenchArgs* args,
    const std::function<bool(const std::string&)>& extra = {}) {
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--reps" && i + 1 < argc) {
      args->reps = std::max(1, std::atoi(argv[++i]));
    } else if (a == "--dir" && i + 1 < argc) {
      args->dir = argv[++i];
    } else if (a == "--no-peer") {
      args->peer = false;
    } else if (a == "--size" && i + 1 < argc) {
      if (std::sscanf(argv[++i], "%dx%d", &args->width, &args->height) != 2) {
        std::fprintf(stderr, "--size: expected WxH, e.g. 4000x3000\n");
        return false;
      }
    } else if (!extra || !extra(a)) {
      std::fprintf(stderr, "usage: %s\n", usage);
      return false;
    }
  }
  return true;
}

// One spawned process: wall seconds, peak resident set (MB), exit code (-1
// when it did not exit normally or could not start).
struct ChildRun {
  double seconds = 0.0;
  double peak_mb = 0.0;
  int exit_code = -1;
};

// Runs argv (argv[0] a path, not searched on PATH) with standard output to
// `out_path` and standard error to `err_path`; the environment entries named
// in `unset` are removed from the child's environment only. The peak
// resident set is the child's ru_maxrss (wait4).
inline ChildRun Spawn(const std::vector<std::string>& argv,
                      const fs::path& out_path, const fs::path& err_path,
                      const std::vector<std::string>& unset = {}) {
  std::vector<std::string> env;
  for (char** e = environ; *e != nullptr; ++e) {
    const std::string entry(*e);
    const std::string key = entry.substr(0, entry.find('='));
    if (std::find(unset.begin(), unset.end(), key) == unset.end())
      env.push_back(entry);
  }
  std::vector<char*> cargv;
  std::vector<char*> cenv;
  cargv.reserve(argv.size() + 1);
  cenv.reserve(env.size() + 1);
  for (const auto& a : argv) cargv.push_back(const_cast<char*>(a.c_str()));
  cargv.push_back(nullptr);
  for (const auto& e : env) cenv.push_back(const_cast<char*>(e.c_str()));
  cenv.push_back(nullptr);

  ChildRun run;
  std::fflush(nullptr);  // no buffered output duplicated into the child
  const auto t0 = Clock::now();
  const pid_t pid = fork();
  if (pid == 0) {
    if (std::freopen(out_path.c_str(), "w", stdout) == nullptr ||
        std::freopen(err_path.c_str(), "w", stderr) == nullptr)
      _exit(127);
    execve(cargv[0], cargv.data(), cenv.data());
    _exit(127);
  }
  if (pid < 0) return run;
  int status = 0;
  rusage usage{};
  wait4(pid, &status, 0, &usage);
  run.seconds = Seconds(t0, Clock::now());
  run.peak_mb = static_cast<double>(usage.ru_maxrss) / 1024.0;  // KiB on Linux
  run.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return run;
}

// A finished run whose standard output or JSON file was read back.
struct ResultRun {
  ChildRun child;
  nlohmann::json result;
};

// Runs `figura ARGS` (the binary under test) with its output in
// dir/figura.out and dir/figura.err and reads the JSON it wrote to
// `json_path`. On a non-zero exit prints the exit code and the error text
// and returns nothing.
inline std::optional<ResultRun> RunFigura(const std::vector<std::string>& args,
                                          const fs::path& dir,
                                          const fs::path& json_path) {
  std::vector<std::string> argv = {FIGURA_BINARY};
  argv.insert(argv.end(), args.begin(), args.end());
  ResultRun run;
  run.child = Spawn(argv, dir / "figura.out", dir / "figura.err");
  if (run.child.exit_code != 0) {
    std::printf("figura %s exit %d: %s\n", args.empty() ? "" : args[0].c_str(),
                run.child.exit_code, ReadAll(dir / "figura.err").c_str());
    return std::nullopt;
  }
  run.result = nlohmann::json::parse(ReadAll(json_path));
  return run;
}

// The peer script ../shared/peers/NAME beside the source tree, when it and
// Debian's /usr/bin/python3 exist; otherwise prints why it is skipped.
inline std::optional<fs::path> FindPeer(const std::string& name) {
  const fs::path script =
      fs::path(FIGURA_SOURCE_DIR) / ".." / "shared/peers" / name;
  if (fs::exists(script) && fs::exists("/usr/bin/python3")) return script;
  std::printf("peer skipped: %s or /usr/bin/python3 not found\n",
              script.c_str());
  return std::nullopt;
}

// Runs `/usr/bin/python3 SCRIPT ARGS` with its output in dir/peer.out and
// dir/peer.err and parses its standard output as JSON. The peer runs with
// the distribution's numpy and OpenBLAS defaults: the two OpenBLAS tuning
// variables are unset together for it (../shared/libraries.md). On a
// non-zero exit prints the exit code and the error text and returns nothing.
inline std::optional<ResultRun> RunPeer(const fs::path& script,
                                        const std::vector<std::string>& args,
                                        const fs::path& dir) {
  std::vector<std::string> argv = {"/usr/bin/python3", script.string()};
  argv.insert(argv.end(), args.begin(), args.end());
  ResultRun run;
  run.child = Spawn(argv, dir / "peer.out", dir / "peer.err",
                    {"OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE"});
  if (run.child.exit_code != 0) {
    std::printf("peer exit %d: %s\n", run.child.exit_code,
                ReadAll(dir / "peer.err").c_str());
    return std::nullopt;
  }
  run.result = nlohmann::json::parse(ReadAll(dir / "peer.out"));
  return run;
}

// Prints one repetition's times: "rep N: decode D s, analysis A s, command
// C s (P MB)", then ", peer S s" when the peer ran in it.
inline void PrintRep(int rep, double decode_s, double analysis_s,
                     const ChildRun& command, std::optional<double> peer_s) {
  std::printf(
      "rep %d: decode %.3f s, analysis %.3f s, command %.3f s (%.0f MB)",
      rep + 1, decode_s, analysis_s, command.seconds, command.peak_mb);
  if (peer_s) std::printf(", peer %.3f s", *peer_s);
  std::printf("\n");
}

}  // namespace figura::bench
