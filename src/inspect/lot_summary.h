// The lot summary of `figura inspect`: one row per input photograph (errors
// included), written as summary.csv and summary.json in the output folder,
// read back for resuming a run and for merging shards.
//
// summary.json layout (format "figura-lot-summary", format_version 1):
//   {
//     "format": "figura-lot-summary", "format_version": 1,
//     "tool": {"name", "version"},
//     "lot": "L-0001", "operator": "AB", "analysis": "rings" | "map",
//     "job": {"path", "settings": {...every analysis and tolerance setting},
//             "settings_sha256": "..."},   // equal settings <=> equal hash
//     "tolerance": FormToleranceJson(...), "decision_rule": "iso14253-1",
//     "decision_rule_text": DecisionRuleDescription(...),
//     "started_utc": "2026-12-02T07:30:00Z", "finished_utc": "...",
//     "interrupted": false,        // true: stopped early (SIGINT)
//     "inputs_total": 12,          // inputs given (rows may be fewer only
//                                  // when interrupted)
//     "counts": {"total", "pass", "fail", "indeterminate", "error"},
//     "verdict": "pass" | "fail" | "indeterminate" | "error",  // the lot's
//     "exit_code": 0 | 1 | 2 | 130,
//     "columns": [{"key": "radius_of_curvature_mm", "label": "radius of
//                  curvature", "unit": "mm"}, ...],  // the numeric columns
//     "parts": [{
//        "file": "photos/p01.tif",       // as given on the command line
//        "part": "P-001", "serial": "", "notes": "",
//        "status": "ok" | "warning" | "error",
//        "verdict": "pass" | "fail" | "indeterminate" | "" (error rows),
//        "message": "one line: the first warning or the error",
//        "input_sha256": "..." | "",
//        "result_json": "P-001.json" | "",  // relative to the summary
//        "pdf": "P-001.pdf" | "",
//        "thumbnail": "P-001.png" | "",     // overlay / surface picture
//        "skipped": false,     // true: unchanged since the last run, reused
//        "radius_of_curvature_mm": 100.02 | null, ...  // one per column
//     }, ...],                 // in input order
//     "shards": [{"folder", "started_utc", "finished_utc", "parts"}]  // merge
//   }
// summary.csv: the same rows, header
//   file,part,serial,status,verdict,message,<column keys...>
// (RFC 4180 quoting; numbers with up to 10 significant digits; empty cell
// for a missing number).
#pragma once

#include <filesystem>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace figura {

// Identifies the summary.json format.
inline constexpr const char* kLotSummaryFormat = "figura-lot-summary";
inline constexpr int kLotSummaryFormatVersion = 1;

// One numeric column of the summary: JSON/CSV key (unit suffix as in
// ../shared/design.md), a label for reports, and the unit.
struct LotColumn {
  std::string key;
  std::string label;
  std::string unit;
};

// The numeric columns for an analysis ("rings" or "map"), in order.
const std::vector<LotColumn>& LotColumns(const std::string& analysis);

// One row: one input photograph.
struct LotRow {
  std::string file;  // the input path as given
  std::string part;
  std::string serial;
  std::string notes;
  std::string status = "error";  // "ok", "warning", "error"
  std::string verdict;  // "pass", "fail", "indeterminate"; empty on error
  std::string message;  // first warning or the error; empty when clean
  std::string input_sha256;
  std::string result_json;  // file names relative to the summary's folder
  std::string pdf;
  std::string thumbnail;  // overlay / surface picture (PNG)
  bool skipped = false;   // reused from an earlier run
  // Numbers by column key; NaN when not available.
  std::map<std::string, double> values;

  // The value for `key`, NaN when absent.
  [[nodiscard]] double Value(const std::string& key) const;
};

// Totals over rows.
struct LotCounts {
  int total = 0;
  int pass = 0;
  int fail = 0;
  int indeterminate = 0;
  int error = 0;
};

// A whole lot summary.
struct LotSummary {
  std::string lot;
  std::string operator_name;
  std::string analysis = "rings";
  std::string tool_version;
  nlohmann::json job = nlohmann::json::object();  // {path, settings, ...}
  std::string settings_sha256;
  nlohmann::json tolerance = nlohmann::json::object();
  std::string decision_rule;
  std::string decision_rule_text;
  std::string started_utc;
  std::string finished_utc;
  bool interrupted = false;
  int inputs_total = 0;
  std::vector<LotRow> rows;
  nlohmann::json shards = nlohmann::json::array();  // merge only

  // Counts of the rows.
  [[nodiscard]] LotCounts Counts() const;
  // The lot's verdict: "error" if any row is an error, else "fail" if any
  // fails, else "indeterminate" if any is, else "pass" ("indeterminate" for
  // an empty lot).
  [[nodiscard]] std::string Verdict() const;
  // Exit code of `figura inspect` (docs/lots.md): 130 when interrupted,
  // else 2 for any error row, else 1 for any fail or indeterminate, else 0.
  [[nodiscard]] int ExitCode() const;
};

// Exit code when a run was interrupted (128 + SIGINT, shell convention).
inline constexpr int kExitInterrupted = 130;

// summary.json as laid out at the top of this file.
nlohmann::json LotSummaryJson(const LotSummary& summary);

// summary.csv text (header line, one line per row).
std::string LotSummaryCsv(const LotSummary& summary);

// Reads a summary.json back (resume, merge). Throws InputError naming the
// file on unreadable JSON, another format or a newer format version.
LotSummary ReadLotSummary(const std::filesystem::path& path);

// The same from parsed JSON; `origin` names it in messages.
LotSummary LotSummaryFromJson(const nlohmann::json& j,
                              const std::string& origin);

// One CSV field quoted per RFC 4180 when it holds a comma, quote or line
// break.
std::string CsvField(const std::string& text);

// The current time as ISO 8601 UTC, "2026-12-02T07:30:00Z".
std::string UtcNow();

}  // namespace figura
