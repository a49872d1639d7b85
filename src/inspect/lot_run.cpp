#include "inspect/lot_run.h"

#include <algorithm>
#include <cctype>
#include <map>
#include <mutex>
#include <opencv2/core.hpp>
#include <opencv2/imgproc.hpp>
#include <optional>
#include <set>
#include <system_error>
#include <thread>
#include <vector>

#include "core/error.h"
#include "core/sha256.h"
#include "core/text_file.h"
#include "core/version.h"
#include "inspect/part_id.h"
#include "inspect/part_run.h"
#include "io/atomic_file.h"
#include "io/image.h"
#include "io/image_writer.h"
#include "io/result_json.h"
#include "report/lot_index.h"
#include "report/part_report.h"
#include "report/ring_plot.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

constexpr const char* kSummaryJson = "summary.json";
constexpr const char* kSummaryCsv = "summary.csv";
constexpr const char* kIndexHtml = "index.html";

// One input after naming.
struct Task {
  std::string file;
  std::optional<PartIdentity> id;
  std::string naming_error;
};

// Reads a JSON file; nullopt when it cannot be read or parsed.
std::optional<nlohmann::json> TryReadJson(const fs::path& path) {
  try {
    return nlohmann::json::parse(ReadTextFile(path));
  } catch (const std::exception&) {
    return std::nullopt;
  }
}

// Sets the row's file names (relative to the output folder) that exist.
void LinkFiles(const fs::path& out_dir, const std::string& part, LotRow* row) {
  auto link = [&](const std::string& name) {
    return fs::exists(out_dir / name) ? name : std::string();
  };
  row->result_json = link(part + ".json");
  row->pdf = link(part + ".pdf");
  row->thumbnail = link(part + ".png");
}

// Runs and writes one part; returns its row. An existing part file is kept
// when its photo and its settings (PartJob: the job with the part's own
// contact) are unchanged.
LotRow ProcessTask(const Task& task, const LotOptions& options) {
  if (!task.id) {
    LotRow row;
    row.file = task.file;
    row.status = "error";
    row.message = task.naming_error;
    return row;
  }
  const fs::path& out = options.out_dir;
  const std::string& part = task.id->part;
  const fs::path json_path = out / (part + ".json");
  const bool exists = fs::exists(json_path);
  if (exists && !options.force) {
    std::string sha;
    try {
      sha = Sha256File(task.file);
    } catch (const InputError& e) {
      // Unreadable now: an error row; the earlier part files stay.
      LotRow row;
      row.file = task.file;
      row.part = part;
      row.status = "error";
      row.message = e.what();
      return row;
    }
    const std::optional<nlohmann::json> old = TryReadJson(json_path);
    if (old && old->is_object() &&
        StringOr(*old, "job_settings_sha256") ==
            JobSettingsSha256(PartJob(options.job, *task.id)) &&
        StringOr(old->value("input", nlohmann::json::object()), "sha256") ==
            sha &&
        (!options.write_reports || fs::exists(out / (part + ".pdf")))) {
      LotRow row = RowFromPartResult(*old, task.file);
      row.skipped = true;
      LinkFiles(out, part, &row);
      return row;
    }
    LotRow row;
    row.file = task.file;
    row.part = part;
    row.serial = task.id->serial;
    row.notes = task.id->notes;
    row.status = "error";
    row.message = json_path.string() +
                  " exists from another photograph or other settings; not "
                  "overwritten (use --force)";
    return row;
  }
  PartOutcome outcome = InspectPart(task.file, *task.id, options.job, UtcNow());
  LotRow row = outcome.row;
  const Overwrite mode = options.force ? Overwrite::kAllow : Overwrite::kRefuse;
  try {
    if (!outcome.picture.empty()) {
      ImageWriteOptions w;
      w.overwrite = true;  // the JSON decides whether a part may be rewritten
      WriteImage(out / (part + ".png"), outcome.picture, w);
    }
    cv::Mat plot;
    if (outcome.rings.status != Status::kError &&
        !outcome.rings.fit_points.empty()) {
      const fs::path plot_path = out / (part + ".plot.png");
      WriteRingPlot(plot_path, outcome.rings, options.job.rings.fit);
      // Read back for the PDF as 8-bit grey shown in BGR (the plot's
      // colours are kept in the PNG itself).
      const Image picture = LoadImage(plot_path);
      cv::Mat grey;
      picture.pixels.convertTo(grey, CV_8U, 255.0 / picture.info.full_scale);
      cv::cvtColor(grey, plot, cv::COLOR_GRAY2BGR);
    }
    if (options.write_reports) {
      WritePartReport(out / (part + ".pdf"), outcome.result, outcome.picture,
                      plot);
    }
    // The result JSON last: its presence marks a complete part for resume.
    WriteJson(json_path.string(), outcome.result, mode);
  } catch (const std::exception& e) {
    row.status = "error";
    row.verdict.clear();
    row.message = std::string("cannot write: ") + e.what();
  }
  LinkFiles(out, part, &row);
  return row;
}

// Writes summary.csv, index.html and summary.json as one set: all are
// rendered first, and a failure leaves the previous set (or none) in place.
// summary.json goes last: resume relies on it.
void WriteSummaryFiles(const fs::path& out_dir, const LotSummary& summary,
                       bool write_index) {
  const nlohmann::json j = LotSummaryJson(summary);
  std::vector<FileContent> files;
  files.push_back({out_dir / kSummaryCsv, LotSummaryCsv(summary)});
  if (write_index) {
    files.push_back({out_dir / kIndexHtml, RenderLotIndex(j, {}, out_dir)});
  }
  files.push_back({out_dir / kSummaryJson, JsonText(j)});
  WriteFilesTogether(files);
}

void EnsureFolder(const fs::path& dir) {
  std::error_code ec;
  fs::create_directories(dir, ec);
  if (ec || !fs::is_directory(dir)) {
    throw OutputError(dir.string() + ": cannot create the output folder" +
                      (ec ? " (" + ec.message() + ")" : std::string()));
  }
}

}  // namespace

std::string LotOptions::Check() const {
  if (jobs < 0) return "--jobs: must be 0 (automatic) or a positive count";
  if (inputs.empty()) return "no input: give image files or folders";
  if (out_dir.empty()) return "--out: empty folder name";
  return job.Check();
}

std::string MergeOptions::Check() const {
  if (shards.empty()) return "--merge: give one or more shard folders";
  if (out_dir.empty()) return "--out: empty folder name";
  return {};
}

bool IsImageExtension(const fs::path& path) {
  std::string ext = path.extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) {
    return static_cast<char>(std::tolower(c));
  });
  static const std::set<std::string> kExt = {".tif", ".tiff", ".png",
                                             ".jpg", ".jpeg", ".bmp"};
  return kExt.count(ext) != 0U;
}

std::vector<std::string> ExpandInputs(const std::vector<std::string>& inputs) {
  std::vector<std::string> files;
  for (const std::string& in : inputs) {
    std::error_code ec;
    if (!fs::is_directory(in, ec)) {
      files.push_back(in);
      continue;
    }
    std::vector<std::string> found;
    // Every entry named like an image is an input, also a folder, a
    // dangling or looping link or a FIFO: loading refuses it with a reason,
    // so it becomes an error row instead of vanishing from the lot.
    for (fs::directory_iterator it(in, ec), end; !ec && it != end;
         it.increment(ec)) {
      if (IsImageExtension(it->path())) found.push_back(it->path().string());
    }
    if (ec)
      throw InputError(in + ": cannot read the folder (" + ec.message() + ")");
    std::sort(found.begin(), found.end());
    files.insert(files.end(), found.begin(), found.end());
  }
  return files;
}

LotResult RunLot(const LotOptions& options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  const std::vector<std::string> files = ExpandInputs(options.inputs);
  if (files.empty()) throw InputError("no image files in the inputs given");
  PartIdOptions naming;
  naming.pattern = options.job.part_pattern;
  naming.manifest = options.job.manifest;
  const PartNamer namer(naming);

  // Name every input first: a part id given twice is an error row.
  std::vector<Task> tasks;
  tasks.reserve(files.size());
  std::map<std::string, std::string> first_file;
  for (const std::string& f : files) {
    Task t;
    t.file = f;
    try {
      t.id = namer.Identify(f);
      const auto [it, fresh] = first_file.emplace(t.id->part, f);
      if (!fresh) {
        t.naming_error = "part id '" + t.id->part + "' is also given by " +
                         it->second + "; each part needs its own photo";
        t.id.reset();
      }
    } catch (const InputError& e) {
      t.naming_error = e.what();
    }
    tasks.push_back(std::move(t));
  }

  EnsureFolder(options.out_dir);
  const std::string settings_sha = JobSettingsSha256(options.job);
  const fs::path summary_path = options.out_dir / kSummaryJson;
  if (fs::exists(summary_path) && !options.force) {
    const LotSummary old = ReadLotSummary(summary_path);
    if (old.settings_sha256 != settings_sha || old.lot != options.job.lot) {
      throw OutputError(options.out_dir.string() +
                        ": holds a lot made with other settings or another "
                        "lot id; not overwritten (use another --out or "
                        "--force)");
    }
  }

  LotSummary summary;
  summary.lot = options.job.lot;
  summary.operator_name = options.job.operator_name;
  summary.analysis = AnalysisName(options.job.analysis);
  summary.tool_version = Version();
  summary.job = {{"path", options.job.path},
                 {"settings", JobSettingsJson(options.job)}};
  summary.settings_sha256 = settings_sha;
  summary.tolerance = FormToleranceJson(options.job.tolerance);
  summary.decision_rule = DecisionRuleName(options.job.decision_rule);
  summary.decision_rule_text =
      DecisionRuleDescription(options.job.decision_rule);
  summary.started_utc = UtcNow();
  summary.inputs_total = static_cast<int>(tasks.size());

  unsigned workers = options.jobs > 0
                         ? static_cast<unsigned>(options.jobs)
                         : std::max(1U, std::thread::hardware_concurrency());
  workers = std::min<unsigned>(workers, static_cast<unsigned>(tasks.size()));
  // One photo per worker and one thread per photo: OpenCV's own pool would
  // fight ours (Debian's OpenCV runs one parallel region at a time,
  // ../shared/libraries.md), and --jobs N means N cores (a cluster task
  // given one core runs --jobs 1).
  const int cv_threads = cv::getNumThreads();
  cv::setNumThreads(1);

  Progress progress(static_cast<int>(tasks.size()), options.progress);
  std::vector<std::optional<LotRow>> rows(tasks.size());
  std::atomic<std::size_t> next{0};
  auto stopped = [&] {
    return options.stop != nullptr && options.stop->load();
  };
  auto work = [&] {
    for (;;) {
      if (stopped()) return;
      const std::size_t i = next.fetch_add(1);
      if (i >= tasks.size()) return;
      LotRow row;
      try {
        row = ProcessTask(tasks[i], options);
      } catch (const std::exception& e) {
        row.file = tasks[i].file;
        row.status = "error";
        row.message = std::string("internal error: ") + e.what();
      }
      progress.Done(row);
      rows[i] = std::move(row);
    }
  };
  if (workers <= 1) {
    work();
  } else {
    std::vector<std::thread> pool;
    pool.reserve(workers);
    for (unsigned w = 0; w < workers; ++w) pool.emplace_back(work);
    for (std::thread& t : pool) t.join();
  }
  progress.Finish();
  cv::setNumThreads(cv_threads);

  for (std::optional<LotRow>& r : rows) {
    if (r) summary.rows.push_back(std::move(*r));
  }
  summary.interrupted = summary.rows.size() < tasks.size();
  summary.finished_utc = UtcNow();
  WriteSummaryFiles(options.out_dir, summary, options.write_reports);
  LotResult result;
  result.exit_code = summary.ExitCode();
  result.summary = std::move(summary);
  return result;
}

LotResult MergeLots(const MergeOptions& options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  LotSummary merged;
  std::map<std::string, std::string> part_shard;
  bool first = true;
  for (const fs::path& shard : options.shards) {
    const fs::path path = shard / kSummaryJson;
    const LotSummary s = ReadLotSummary(path);
    if (first) {
      merged = s;
      merged.rows.clear();
      merged.shards = nlohmann::json::array();
      merged.inputs_total = 0;
      merged.interrupted = false;
      first = false;
    } else {
      if (s.tool_version != merged.tool_version) {
        throw InputError(path.string() + ": made by figura " + s.tool_version +
                         ", the first shard by " + merged.tool_version +
                         "; shards must come from one tool version");
      }
      if (s.settings_sha256 != merged.settings_sha256) {
        throw InputError(path.string() +
                         ": made with other settings than the first shard "
                         "(settings_sha256 differs); shards must share one "
                         "job file");
      }
      if (s.lot != merged.lot) {
        throw InputError(path.string() + ": lot '" + s.lot +
                         "', the first shard's is '" + merged.lot + "'");
      }
      merged.started_utc = std::min(merged.started_utc, s.started_utc);
      merged.finished_utc = std::max(merged.finished_utc, s.finished_utc);
    }
    if (s.interrupted && !options.force) {
      throw InputError(path.string() +
                       ": this shard was interrupted; rerun it to complete "
                       "it, or use --force to merge the parts it has");
    }
    merged.inputs_total += s.inputs_total;
    // Links relative to the merged summary's folder.
    std::error_code ec;
    fs::path rel = fs::relative(shard, options.out_dir, ec);
    if (ec || rel.empty()) rel = fs::absolute(shard);
    for (LotRow row : s.rows) {
      if (!row.part.empty()) {
        const auto [it, fresh] = part_shard.emplace(row.part, shard.string());
        if (!fresh) {
          throw InputError(path.string() + ": part '" + row.part +
                           "' is also in shard " + it->second);
        }
      }
      for (std::string* f : {&row.result_json, &row.pdf, &row.thumbnail}) {
        if (!f->empty()) *f = (rel / *f).lexically_normal().string();
      }
      merged.rows.push_back(std::move(row));
    }
    merged.shards.push_back({{"folder", shard.string()},
                             {"started_utc", s.started_utc},
                             {"finished_utc", s.finished_utc},
                             {"parts", s.rows.size()},
                             {"interrupted", s.interrupted}});
  }
  EnsureFolder(options.out_dir);
  const fs::path out_summary = options.out_dir / kSummaryJson;
  if (fs::exists(out_summary) && !options.force) {
    const LotSummary old = ReadLotSummary(out_summary);
    if (old.shards.empty() || old.settings_sha256 != merged.settings_sha256) {
      throw OutputError(out_summary.string() +
                        ": exists and is not a merge of these shards; not "
                        "overwritten (use another --out or --force)");
    }
  }
  WriteSummaryFiles(options.out_dir, merged, options.write_reports);
  LotResult result;
  result.exit_code = merged.ExitCode();
  result.summary = std::move(merged);
  return result;
}

}  // namespace figura
