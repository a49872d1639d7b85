// `figura inspect`: a lot of photographs analysed on a pool of worker
// threads (one photograph per task, so memory is bounded by the photos in
// flight), one result JSON, overlay picture and one-page PDF per part, and
// the lot summary (summary.csv, summary.json, index.html). Reruns skip
// parts whose photo and settings are unchanged; an existing file made from
// another photo or other settings is never overwritten without --force.
// Merging combines the summaries of shard folders made with the same
// settings and tool version (docs/lots.md).
#pragma once

#include <atomic>
#include <filesystem>
#include <string>
#include <vector>

#include "inspect/job_file.h"
#include "inspect/lot_summary.h"
#include "inspect/progress.h"

namespace figura {

// Settings of one lot run.
struct LotOptions {
  JobOptions job;
  std::vector<std::string> inputs;  // image files and folders, as given
  std::filesystem::path out_dir = ".";
  int jobs = 0;               // worker threads; 0 = one per hardware thread
  bool force = false;         // recompute and overwrite existing part files
  bool write_reports = true;  // per-part PDF and index.html
  ProgressStyle progress = ProgressStyle::kAuto;
  // When set (e.g. by a SIGINT handler), no further part is started; parts
  // in flight finish and the summary lists the parts done.
  const std::atomic<bool>* stop = nullptr;

  // Empty when usable, else a readable reason naming the option.
  [[nodiscard]] std::string Check() const;
};

// The outcome of a run or a merge.
struct LotResult {
  LotSummary summary;
  int exit_code = 2;  // LotSummary::ExitCode()
};

// Image file extensions taken from a folder (case-insensitive).
bool IsImageExtension(const std::filesystem::path& path);

// Files and folders as given -> files: a folder contributes every entry
// named like an image (IsImageExtension, not recursive; also a sub-folder,
// a broken or looping link, which then become error rows) sorted by name;
// anything else is kept as given (a missing file becomes an error row, not
// a stop). Throws
// InputError for a folder that cannot be read.
std::vector<std::string> ExpandInputs(const std::vector<std::string>& inputs);

// Runs a lot. Throws InputError for invalid options or a part-naming
// problem of the whole job (bad manifest), OutputError when the output
// folder cannot be used or holds a lot made with other settings (without
// --force). Per-photo problems become error rows.
LotResult RunLot(const LotOptions& options);

// Settings of a merge.
struct MergeOptions {
  std::vector<std::filesystem::path> shards;  // folders with summary.json
  std::filesystem::path out_dir = ".";
  bool force = false;         // replace a summary that is not a merge; accept
                              // interrupted shards
  bool write_reports = true;  // index.html

  // Empty when usable, else a readable reason.
  [[nodiscard]] std::string Check() const;
};

// Combines shard summaries into one lot summary in out_dir (file links
// rewritten relative to it). Throws InputError for a shard that is
// unreadable, made with other settings, another tool version or another
// lot id, or that repeats a part id of an earlier shard.
LotResult MergeLots(const MergeOptions& options);

}  // namespace figura
