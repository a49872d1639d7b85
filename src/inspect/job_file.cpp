#include "inspect/job_file.h"

#include <algorithm>

#include "core/error.h"
#include "core/light_source.h"
#include "core/quantity.h"
#include "core/sha256.h"
#include "core/version.h"
#include "optics/media.h"
#include "optics/sphere.h"

namespace figura {
namespace {

cv::Point2d ToPoint(const std::array<double, 2>& p) { return {p[0], p[1]}; }

// The job-level keys (besides the ring-analysis keys).
const std::vector<std::string>& JobKeys() {
  static const std::vector<std::string> keys = {
      "analysis", "tolerance", "decision-rule", "test-diameter",
      "lot",      "operator",  "part-pattern",  "manifest"};
  return keys;
}

}  // namespace

void SettingMap::Add(const std::string& key, const std::string& value,
                     const std::string& where) {
  for (const Entry& e : entries_) {
    if (e.key == key) {
      throw InputError(where + ": " + key + " given twice (first at " +
                       e.where + ")");
    }
  }
  entries_.push_back({key, value, where, false});
}

SettingMap SettingMap::FromIni(const IniFile& ini) {
  SettingMap map;
  for (const IniEntry& e : ini.entries()) {
    std::string where = ini.Where(e);
    where.resize(where.size() - 2);  // drop ": "
    if (!e.section.empty()) {
      throw InputError(where + ": key '" + e.key + "' is under section [" +
                       e.section +
                       "]; a job file has no sections (write keys at the top)");
    }
    map.Add(e.key, e.value, where);
  }
  return map;
}

std::optional<std::string> SettingMap::Take(std::string_view key) {
  for (Entry& e : entries_) {
    if (e.key == key) {
      e.used = true;
      return e.value;
    }
  }
  return std::nullopt;
}

std::string SettingMap::What(std::string_view key) const {
  for (const Entry& e : entries_) {
    if (e.key == key) return e.where + ": " + e.key;
  }
  return std::string(key);
}

namespace {

// The media stack keys shared by the rings and map settings.
void TakeStack(SettingMap* s, MediaStack* stack) {
  if (auto v = s->Take("upper-index")) {
    stack->upper_index = ParseNumber(*v, s->What("upper-index"));
  }
  if (auto v = s->Take("gap-index")) {
    stack->gap_index = ParseNumber(*v, s->What("gap-index"));
  }
  if (auto v = s->Take("lower-index")) {
    stack->lower_index = ParseNumber(*v, s->What("lower-index"));
  }
}

}  // namespace

void SettingMap::RefuseUnused(const std::vector<std::string>& known) const {
  for (const Entry& e : entries_) {
    if (e.used) continue;
    std::string list;
    for (const std::string& k : known) list += (list.empty() ? "" : ", ") + k;
    throw InputError(e.where + ": unknown key '" + e.key + "' (known: " + list +
                     ")");
  }
}

const std::vector<std::string>& RingsSettingKeys() {
  static const std::vector<std::string> keys = {
      "wavelength", "pixel-pitch",       "pixel-pitch-u",
      "view",       "reference-radius",  "reference-radius-u",
      "contact",    "aperture-centre",   "aperture-diameter",
      "sectors",    "outlier-threshold", "upper-index",
      "gap-index",  "lower-index"};
  return keys;
}

RingsOptions RingsOptionsFromSettings(SettingMap& s) {
  RingsOptions options;
  RingFitOptions& fit = options.fit;
  auto what = [&](const char* key) { return s.What(key); };

  const auto wavelength = s.Take("wavelength");
  if (!wavelength) {
    throw InputError(
        "wavelength is required: a length (546.07nm) or a source name (" +
        SourceTable::Default().Names() + ")");
  }
  fit.wavelength = ResolveWavelength(*wavelength, SourceTable::Default(),
                                     what("wavelength"));
  const auto pitch = s.Take("pixel-pitch");
  if (!pitch) {
    throw InputError(
        "pixel-pitch is required (object-side size of one pixel, e.g. 32um)");
  }
  fit.pixel_pitch = ParseLength(*pitch, what("pixel-pitch"));
  if (auto v = s.Take("pixel-pitch-u")) {
    fit.pixel_pitch_u = ParseLength(*v, what("pixel-pitch-u"));
  }
  if (auto v = s.Take("view")) fit.view = ParseView(*v, what("view"));
  if (auto v = s.Take("reference-radius")) {
    fit.reference_radius = ParseLength(*v, what("reference-radius"));
  }
  if (auto v = s.Take("reference-radius-u")) {
    fit.reference_radius_u = ParseLength(*v, what("reference-radius-u"));
  }
  if (auto v = s.Take("contact")) {
    fit.contact = ParseContact(*v, what("contact"));
  }
  TakeStack(&s, &fit.stack);
  if (auto v = s.Take("sectors")) {
    options.detection.sectors = ParseWholeNumber(*v, what("sectors"));
  }
  if (auto v = s.Take("outlier-threshold")) {
    fit.outlier_threshold = ParseNumber(*v, what("outlier-threshold"));
  }
  if (auto v = s.Take("aperture-centre")) {
    options.detection.aperture_centre_px =
        ToPoint(ParsePixelPoint(*v, what("aperture-centre")));
  }
  if (auto v = s.Take("aperture-diameter")) {
    // Pixels as a bare number, or a length (as `figura rings`).
    const PixelsOrLength d = ParsePixelsOrLength(*v, what("aperture-diameter"));
    fit.aperture_diameter = d.ToLength(fit.pixel_pitch.metres);
    options.detection.aperture_diameter_px = d.Pixels(
        fit.pixel_pitch.metres, what("aperture-diameter"), what("pixel-pitch"));
  }
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  return options;
}

const std::vector<std::string>& MapSettingKeys() {
  static const std::vector<std::string> keys = {"wavelength",
                                                "view",
                                                "contact",
                                                "thin-side",
                                                "terms",
                                                "mode",
                                                "pixel-pitch",
                                                "aperture-centre",
                                                "aperture-diameter",
                                                "aperture-fraction",
                                                "upper-index",
                                                "gap-index",
                                                "lower-index"};
  return keys;
}

MapOptions MapOptionsFromSettings(SettingMap& s) {
  MapOptions options;
  auto what = [&](const char* key) { return s.What(key); };
  const auto wavelength = s.Take("wavelength");
  if (!wavelength) {
    throw InputError(
        "wavelength is required: a length (546.07nm) or a source name (" +
        SourceTable::Default().Names() + ")");
  }
  options.wavelength = ResolveWavelength(*wavelength, SourceTable::Default(),
                                         what("wavelength"));
  if (auto v = s.Take("view")) options.view = ParseView(*v, what("view"));
  if (auto v = s.Take("contact")) {
    options.contact = ParseContact(*v, what("contact"));
    options.contact_given = true;
  }
  if (auto v = s.Take("thin-side")) {
    options.thin_side = ParseThinSide(*v, what("thin-side"));
    options.thin_side_given = true;
  }
  if (auto v = s.Take("terms"))
    options.max_order = ParseWholeNumber(*v, what("terms"));
  if (auto v = s.Take("mode")) options.mode = ParseMapMode(*v, what("mode"));
  if (auto v = s.Take("pixel-pitch")) {
    options.pixel_pitch_m = ParseLength(*v, what("pixel-pitch")).metres;
  }
  TakeStack(&s, &options.stack);
  if (auto v = s.Take("aperture-fraction")) {
    options.aperture_fraction = ParseNumber(*v, what("aperture-fraction"));
  }
  if (auto v = s.Take("aperture-centre")) {
    options.aperture_centre_px =
        ToPoint(ParsePixelPoint(*v, what("aperture-centre")));
  }
  if (auto v = s.Take("aperture-diameter")) {
    options.aperture_diameter_px =
        ParsePixelsOrLength(*v, what("aperture-diameter"))
            .Pixels(options.pixel_pitch_m, what("aperture-diameter"),
                    what("pixel-pitch"));
  }
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  return options;
}

nlohmann::json JobOptions::AnalysisSettingsJson() const {
  return analysis == Analysis::kMap ? MapSettingsJson(map)
                                    : RingsSettingsJson(rings, false);
}

const char* AnalysisName(Analysis analysis) {
  return analysis == Analysis::kMap ? "map" : "rings";
}

std::string JobOptions::Check() const {
  if (std::string why =
          analysis == Analysis::kMap ? map.Check() : rings.Check();
      !why.empty()) {
    return why;
  }
  if (test_diameter && !(test_diameter->metres > 0.0)) {
    return "test-diameter: must be positive";
  }
  if (tolerance_text.empty()) return "tolerance: required, e.g. 3/4(2)";
  return {};
}

JobOptions ParseJob(const IniFile& ini, const std::filesystem::path& base_dir) {
  SettingMap s = SettingMap::FromIni(ini);
  JobOptions job;
  job.path = ini.origin();
  const std::string& file = ini.origin();
  if (auto v = s.Take("analysis")) {
    const std::string a(Trim(*v));
    if (a == "rings") {
      job.analysis = Analysis::kRings;
    } else if (a == "map") {
      job.analysis = Analysis::kMap;
    } else {
      throw InputError(s.What("analysis") + ": '" + *v +
                       "' is not an analysis; accepted: rings, map");
    }
  }
  try {
    if (job.analysis == Analysis::kMap) {
      job.map = MapOptionsFromSettings(s);
    } else {
      job.rings = RingsOptionsFromSettings(s);
    }
  } catch (const InputError& e) {
    const std::string m = e.what();
    // Required-key and Check() messages carry no place: name the file.
    throw InputError(m.rfind(file, 0) == 0 ? m : file + ": " + m);
  }
  if (job.analysis == Analysis::kMap && s.Take("test-diameter")) {
    throw InputError(s.What("test-diameter") +
                     ": not used by analysis = map; set the evaluated area "
                     "with aperture-diameter and aperture-fraction");
  }
  if (auto v = s.Take("test-diameter")) {
    job.test_diameter = ParseLength(*v, s.What("test-diameter"));
    if (!(job.test_diameter->metres > 0.0)) {
      throw InputError(s.What("test-diameter") + ": must be positive");
    }
    job.rings.fit.aperture_diameter = job.test_diameter;
  }
  if (auto v = s.Take("decision-rule")) {
    job.decision_rule = ParseDecisionRule(*v, s.What("decision-rule"));
  }
  if (auto v = s.Take("tolerance")) {
    job.tolerance_text = std::string(Trim(*v));
    try {
      job.tolerance =
          ParseFormTolerance(job.tolerance_text, job.TestWavelength());
    } catch (const InputError& e) {
      throw InputError(s.What("tolerance") + ": " + e.what());
    }
  } else {
    throw InputError(file +
                     ": tolerance is required (ISO 10110-5 form tolerance, "
                     "e.g. tolerance = 3/4(2))");
  }
  if (auto v = s.Take("lot")) job.lot = std::string(Trim(*v));
  if (auto v = s.Take("operator")) job.operator_name = std::string(Trim(*v));
  if (auto v = s.Take("part-pattern")) job.part_pattern = std::string(Trim(*v));
  if (auto v = s.Take("manifest")) {
    const std::filesystem::path m(std::string(Trim(*v)));
    job.manifest = m.is_absolute() ? m : base_dir / m;
  }
  if (!job.part_pattern.empty() && !job.manifest.empty()) {
    throw InputError(s.What("manifest") +
                     ": give either part-pattern or manifest, not both");
  }
  std::vector<std::string> known = JobKeys();
  const std::vector<std::string>& analysis_keys =
      job.analysis == Analysis::kMap ? MapSettingKeys() : RingsSettingKeys();
  known.insert(known.end(), analysis_keys.begin(), analysis_keys.end());
  s.RefuseUnused(known);
  if (std::string why = job.Check(); !why.empty()) {
    throw InputError(file + ": " + why);
  }
  return job;
}

JobOptions LoadJobFile(const std::filesystem::path& path) {
  const IniFile ini = IniFile::Load(path);
  return ParseJob(ini, path.parent_path());
}

nlohmann::json JobSettingsJson(const JobOptions& job) {
  nlohmann::json j;
  j["analysis"] = AnalysisName(job.analysis);
  j["analysis_settings"] = job.AnalysisSettingsJson();
  j["test_diameter_mm"] = job.test_diameter
                              ? nlohmann::json(job.test_diameter->mm())
                              : nlohmann::json(nullptr);
  j["tolerance"] = FormToleranceJson(job.tolerance);
  j["decision_rule"] = DecisionRuleName(job.decision_rule);
  j["tool"] = {{"name", kToolName}, {"version", Version()}};
  return j;
}

std::string JobSettingsSha256(const JobOptions& job) {
  return Sha256Hex(JobSettingsJson(job).dump());
}

}  // namespace figura
