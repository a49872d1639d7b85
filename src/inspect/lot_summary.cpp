#include "inspect/lot_summary.h"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <ctime>

#include "core/error.h"
#include "core/text_file.h"
#include "core/version.h"
#include "io/result_json.h"

namespace figura {
namespace {

double NumberOrNan(const nlohmann::json& j) {
  return j.is_number() ? j.get<double>()
                       : std::numeric_limits<double>::quiet_NaN();
}

std::string FormatNumber(double v) {
  if (!std::isfinite(v)) return {};
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.10g", v);
  return buffer;
}

}  // namespace

const std::vector<LotColumn>& LotColumns(const std::string& analysis) {
  static const std::vector<LotColumn> rings = {
      {"radius_of_curvature_mm", "radius of curvature", "mm"},
      {"radius_of_curvature_u95_mm", "radius of curvature U95", "mm"},
      {"part_radius_mm", "part radius", "mm"},
      {"part_radius_u95_mm", "part radius U95", "mm"},
      {"sag_um", "sag", "um"},
      {"power_fringes", "power", "fringes"},
      {"power_u95_fringes", "power U95", "fringes"},
      {"astigmatism_fringes", "astigmatism", "fringes"},
      {"astigmatism_u95_fringes", "astigmatism U95", "fringes"},
      {"ring_count", "rings", ""},
      {"power_margin_fringes", "power margin", "fringes"},
      {"irregularity_margin_fringes", "irregularity margin", "fringes"},
  };
  static const std::vector<LotColumn> map = {
      {"pv_nm", "PV", "nm"},
      {"rms_nm", "RMS", "nm"},
      {"power_fringes", "power", "fringes"},
      {"irregularity_fringes", "irregularity", "fringes"},
      {"rsi_fringes", "rotationally symmetric irregularity", "fringes"},
      {"power_margin_fringes", "power margin", "fringes"},
      {"irregularity_margin_fringes", "irregularity margin", "fringes"},
  };
  return analysis == "map" ? map : rings;
}

double LotRow::Value(const std::string& key) const {
  const auto it = values.find(key);
  return it == values.end() ? std::numeric_limits<double>::quiet_NaN()
                            : it->second;
}

LotCounts LotSummary::Counts() const {
  LotCounts c;
  for (const LotRow& r : rows) {
    ++c.total;
    if (r.status == "error") {
      ++c.error;
    } else if (r.verdict == "pass") {
      ++c.pass;
    } else if (r.verdict == "fail") {
      ++c.fail;
    } else {
      ++c.indeterminate;
    }
  }
  return c;
}

std::string LotSummary::Verdict() const {
  const LotCounts c = Counts();
  if (c.error > 0) return "error";
  if (c.fail > 0) return "fail";
  if (c.indeterminate > 0 || c.total == 0) return "indeterminate";
  return "pass";
}

int LotSummary::ExitCode() const {
  if (interrupted) return kExitInterrupted;
  const std::string v = Verdict();
  if (v == "error") return 2;
  if (v == "pass") return 0;
  return 1;
}

nlohmann::json LotSummaryJson(const LotSummary& s) {
  nlohmann::json j;
  j["format"] = kLotSummaryFormat;
  j["format_version"] = kLotSummaryFormatVersion;
  j["tool"] = {{"name", kToolName},
               {"version", s.tool_version.empty() ? std::string(Version())
                                                  : s.tool_version}};
  j["lot"] = s.lot;
  j["operator"] = s.operator_name;
  j["analysis"] = s.analysis;
  j["job"] = s.job;
  j["job"]["settings_sha256"] = s.settings_sha256;
  j["tolerance"] = s.tolerance;
  j["decision_rule"] = s.decision_rule;
  j["decision_rule_text"] = s.decision_rule_text;
  j["started_utc"] = s.started_utc;
  j["finished_utc"] = s.finished_utc;
  j["interrupted"] = s.interrupted;
  j["inputs_total"] = s.inputs_total;
  const LotCounts c = s.Counts();
  j["counts"] = {{"total", c.total},
                 {"pass", c.pass},
                 {"fail", c.fail},
                 {"indeterminate", c.indeterminate},
                 {"error", c.error}};
  j["verdict"] = s.Verdict();
  j["exit_code"] = s.ExitCode();
  nlohmann::json columns = nlohmann::json::array();
  for (const LotColumn& col : LotColumns(s.analysis)) {
    columns.push_back(
        {{"key", col.key}, {"label", col.label}, {"unit", col.unit}});
  }
  j["columns"] = columns;
  nlohmann::json parts = nlohmann::json::array();
  for (const LotRow& r : s.rows) {
    nlohmann::json p = {{"file", r.file},
                        {"part", r.part},
                        {"serial", r.serial},
                        {"notes", r.notes},
                        {"status", r.status},
                        {"verdict", r.verdict},
                        {"message", r.message},
                        {"input_sha256", r.input_sha256},
                        {"result_json", r.result_json},
                        {"pdf", r.pdf},
                        {"thumbnail", r.thumbnail},
                        {"skipped", r.skipped}};
    for (const LotColumn& col : LotColumns(s.analysis)) {
      p[col.key] = FiniteOrNull(r.Value(col.key));
    }
    parts.push_back(p);
  }
  j["parts"] = parts;
  if (!s.shards.empty()) j["shards"] = s.shards;
  return j;
}

std::string CsvField(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = "\"";
  for (const char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  out += '"';
  return out;
}

std::string LotSummaryCsv(const LotSummary& s) {
  const std::vector<LotColumn>& columns = LotColumns(s.analysis);
  std::string out = "file,part,serial,status,verdict,message";
  for (const LotColumn& col : columns) {
    out += ',';
    out += col.key;
  }
  out += '\n';
  for (const LotRow& r : s.rows) {
    for (const std::string* field :
         {&r.file, &r.part, &r.serial, &r.status, &r.verdict, &r.message}) {
      if (field != &r.file) out += ',';
      out += CsvField(*field);
    }
    for (const LotColumn& col : columns) {
      out += ',';
      out += FormatNumber(r.Value(col.key));
    }
    out += '\n';
  }
  return out;
}

LotSummary LotSummaryFromJson(const nlohmann::json& j,
                              const std::string& origin) {
  if (!j.is_object() || StringOr(j, "format") != kLotSummaryFormat) {
    throw InputError(origin + ": not a figura lot summary (format '" +
                     std::string(kLotSummaryFormat) + "' expected)");
  }
  const auto version = j.value("format_version", 0);
  if (version < 1 || version > kLotSummaryFormatVersion) {
    throw InputError(origin + ": summary format version " +
                     std::to_string(version) + " is not supported (this " +
                     "build reads " + std::to_string(kLotSummaryFormatVersion) +
                     ")");
  }
  LotSummary s;
  s.lot = StringOr(j, "lot");
  s.operator_name = StringOr(j, "operator");
  s.analysis = StringOr(j, "analysis");
  s.tool_version = StringOr(j.value("tool", nlohmann::json()), "version");
  s.job = j.value("job", nlohmann::json::object());
  s.settings_sha256 = StringOr(s.job, "settings_sha256");
  s.job.erase("settings_sha256");
  s.tolerance = j.value("tolerance", nlohmann::json::object());
  s.decision_rule = StringOr(j, "decision_rule");
  s.decision_rule_text = StringOr(j, "decision_rule_text");
  s.started_utc = StringOr(j, "started_utc");
  s.finished_utc = StringOr(j, "finished_utc");
  s.interrupted = j.value("interrupted", false);
  s.inputs_total = j.value("inputs_total", 0);
  s.shards = j.value("shards", nlohmann::json::array());
  const auto parts = j.find("parts");
  if (parts == j.end() || !parts->is_array()) {
    throw InputError(origin + ": no 'parts' list");
  }
  for (const nlohmann::json& p : *parts) {
    LotRow r;
    r.file = StringOr(p, "file");
    r.part = StringOr(p, "part");
    r.serial = StringOr(p, "serial");
    r.notes = StringOr(p, "notes");
    r.status = StringOr(p, "status");
    r.verdict = StringOr(p, "verdict");
    r.message = StringOr(p, "message");
    r.input_sha256 = StringOr(p, "input_sha256");
    r.result_json = StringOr(p, "result_json");
    r.pdf = StringOr(p, "pdf");
    r.thumbnail = StringOr(p, "thumbnail");
    r.skipped = p.value("skipped", false);
    for (const LotColumn& col : LotColumns(s.analysis)) {
      if (p.contains(col.key)) r.values[col.key] = NumberOrNan(p[col.key]);
    }
    s.rows.push_back(r);
  }
  return s;
}

LotSummary ReadLotSummary(const std::filesystem::path& path) {
  const std::string text = ReadTextFile(path);
  nlohmann::json j;
  try {
    j = nlohmann::json::parse(text);
  } catch (const nlohmann::json::exception& e) {
    throw InputError(path.string() + ": not valid JSON (" + e.what() + ")");
  }
  return LotSummaryFromJson(j, path.string());
}

std::string UtcNow() {
  const std::time_t now =
      std::chrono::system_clock::to_time_t(std::chrono::system_clock::now());
  std::tm tm{};
  gmtime_r(&now, &tm);
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buffer;
}

}  // namespace figura
