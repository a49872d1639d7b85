// The job file of `figura inspect`: an INI file that sets everything a lot
// needs, with the same key names as the long options of the commands
// (`wavelength = 546.07nm` is `--wavelength 546.07nm`). Keys go before any
// section header; unknown keys are refused with their line.
//
// Keys (docs/lots.md lists them with examples):
//   analysis         rings | map
//   (map: wavelength, view, contact, thin-side, terms, mode, pixel-pitch,
//   aperture-centre, aperture-diameter, aperture-fraction and the indices,
//   as for `figura map`)
//   wavelength, pixel-pitch, pixel-pitch-u, view, upper-index, gap-index,
//   lower-index, reference-radius, reference-radius-u, contact,
//   aperture-centre, aperture-diameter, sectors, outlier-threshold
//                    as for `figura rings`
//   test-diameter    diameter over which the tolerance applies (a length);
//                    the ring fit evaluates power over it
//   tolerance        ISO 10110-5 form tolerance text, e.g. 3/4(2)
//   decision-rule    iso14253-1 (default) | simple
//   lot, operator    free text for the reports
//   part-pattern     how a part id is read from a file name (part_id.h)
//   manifest         CSV of file -> part, serial, notes (part_id.h), a path
//                    relative to the job file
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/ini.h"
#include "fringe/ring_analysis.h"
#include "surface/surface_map.h"
#include "tolerance/decision_rule.h"
#include "tolerance/form_tolerance.h"

namespace figura {

// Text settings by option name, each with where it came from, so that one
// piece of code builds an options struct from a job file or from command
// line values. Reading a key marks it used; keys never read are unknown.
class SettingMap {
 public:
  // One setting.
  struct Entry {
    std::string key;
    std::string value;
    std::string where;  // "job.ini:12" or "--pixel-pitch"
    bool used = false;
  };

  // Adds a setting. Throws InputError when `key` is already present.
  void Add(const std::string& key, const std::string& value,
           const std::string& where);
  // The settings of an INI file's top level (keys before any section);
  // a section header is refused naming its first key's line.
  static SettingMap FromIni(const IniFile& ini);

  // The value of `key` (marking it used), or nullopt when absent.
  std::optional<std::string> Take(std::string_view key);
  // "where: key" for messages (just the key when absent).
  [[nodiscard]] std::string What(std::string_view key) const;
  // Throws InputError naming the first key never taken and its place, with
  // the list of known keys `known`.
  void RefuseUnused(const std::vector<std::string>& known) const;

 private:
  std::vector<Entry> entries_;
};

// Builds the ring-analysis options from settings named as the options of
// `figura rings` (wavelength, pixel-pitch, pixel-pitch-u, view,
// reference-radius, reference-radius-u, contact, aperture-centre,
// aperture-diameter, sectors, outlier-threshold, upper-index, gap-index,
// lower-index). wavelength and pixel-pitch are required. Throws InputError
// naming the key (and its place) on a bad value, or when the result fails
// RingsOptions::Check().
RingsOptions RingsOptionsFromSettings(SettingMap& settings);

// The keys RingsOptionsFromSettings reads.
const std::vector<std::string>& RingsSettingKeys();

// Builds the surface-map options from settings named as the options of
// `figura map` (wavelength, view, contact, thin-side, terms, mode,
// pixel-pitch, aperture-centre, aperture-diameter, aperture-fraction,
// upper-index, gap-index, lower-index). wavelength is required. Throws
// InputError naming the key (and its place) on a bad value, or when the
// result fails MapOptions::Check().
MapOptions MapOptionsFromSettings(SettingMap& settings);

// The keys MapOptionsFromSettings reads.
const std::vector<std::string>& MapSettingKeys();

// What a job analyses.
enum class Analysis { kRings, kMap };

// "rings" / "map".
const char* AnalysisName(Analysis analysis);

// Everything a lot run needs from its job file.
struct JobOptions {
  std::string path;  // the job file, for messages and the summary
  Analysis analysis = Analysis::kRings;
  RingsOptions rings;  // analysis = rings
  MapOptions map;      // analysis = map
  std::string tolerance_text;
  FormTolerance tolerance;  // parsed, test wavelength as fallback
  DecisionRule decision_rule = DecisionRule::kIso14253;
  std::optional<Length> test_diameter;
  std::string lot;
  std::string operator_name;
  std::string part_pattern;        // empty: the file stem
  std::filesystem::path manifest;  // empty: none

  // Empty when usable, else a readable reason naming the key.
  [[nodiscard]] std::string Check() const;
  // The test wavelength of the analysis.
  [[nodiscard]] const Wavelength& TestWavelength() const {
    return analysis == Analysis::kMap ? map.wavelength : rings.fit.wavelength;
  }
  // The analysis settings block (RingsSettingsJson or MapSettingsJson).
  [[nodiscard]] nlohmann::json AnalysisSettingsJson() const;
};

// Reads a job file: the keys at the top of this file. Throws InputError
// "job.ini:LINE: key: problem" on a bad or unknown key, and naming the file
// for a missing required key (wavelength, pixel-pitch, tolerance).
JobOptions LoadJobFile(const std::filesystem::path& path);

// The same from a parsed INI (relative manifest paths against `base_dir`).
JobOptions ParseJob(const IniFile& ini, const std::filesystem::path& base_dir);

// Every setting that changes a part's numbers or verdict (the analysis
// settings, tolerance and decision rule, the tool version): shards and
// reruns are compared by its hash. Lot, operator and part naming are not
// included.
nlohmann::json JobSettingsJson(const JobOptions& job);

// SHA-256 (hex) of JobSettingsJson(job) as compact JSON.
std::string JobSettingsSha256(const JobOptions& job);

}  // namespace figura
