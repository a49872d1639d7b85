// libFuzzer target: the text inputs a user writes by hand.
//   first byte 'G': the rest is a simulator gap file (core/ini.h +
//                   sim/gap_file.h ParseGapFile);
//   first byte 'D': the rest is a ring-diameter CSV
//                   (fringe/ring_diameters.h), fitted as `figura rings
//                   --diameters` does (AnalyseRingDiameters);
//   anything else:  the whole input is a job file of `figura inspect`
//                   (core/ini.h + inspect/job_file.h ParseJob), and its top
//                   level also goes through RingsOptionsFromSettings and
//                   MapOptionsFromSettings on their own.
// Properties: only InputError refuses input; an accepted job passes its own
// Check() and its settings hash (what shards are compared by) can be
// computed; an accepted gap file passes SimulationOptions::Check(); a
// diameter fit that is not an error has finite numbers (rings_check.h).
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "core/ini.h"
#include "core/light_source.h"
#include "fringe/ring_analysis.h"
#include "fringe/ring_diameters.h"
#include "fuzz_util.h"
#include "inspect/job_file.h"
#include "rings_check.h"
#include "sim/gap_file.h"

namespace {

using figura::fuzz::Require;

void FuzzJob(std::string_view text) {
  figura::fuzz::RefuseOnlyWithInputError([&] {
    const figura::IniFile ini = figura::IniFile::Parse(text, "job.ini");
    figura::fuzz::RefuseOnlyWithInputError([&] {
      const figura::JobOptions job =
          figura::ParseJob(ini, "/nonexistent/figura-fuzz");
      Require(job.Check().empty(), "ParseJob accepted a job failing Check()");
      Require(figura::JobSettingsSha256(job).size() == 64,
              "settings hash is not 64 hex digits");
      (void)job.AnalysisSettingsJson().dump(
          2, ' ', false, nlohmann::json::error_handler_t::replace);
    });
    figura::fuzz::RefuseOnlyWithInputError([&] {
      figura::SettingMap settings = figura::SettingMap::FromIni(ini);
      const figura::RingsOptions rings =
          figura::RingsOptionsFromSettings(settings);
      Require(rings.Check().empty(), "rings options failing Check()");
    });
    figura::fuzz::RefuseOnlyWithInputError([&] {
      figura::SettingMap settings = figura::SettingMap::FromIni(ini);
      const figura::MapOptions map = figura::MapOptionsFromSettings(settings);
      Require(map.Check().empty(), "map options failing Check()");
    });
  });
}

void FuzzGapFile(std::string_view text) {
  figura::fuzz::RefuseOnlyWithInputError([&] {
    const figura::IniFile ini = figura::IniFile::Parse(text, "gap.ini");
    const figura::SimulationOptions options = figura::ParseGapFile(ini);
    Require(options.Check().empty(), "ParseGapFile accepted failing Check()");
  });
}

void FuzzDiameters(std::string_view text) {
  figura::fuzz::RefuseOnlyWithInputError([&] {
    const std::vector<figura::RingDiameter> rings =
        figura::ParseRingDiameters(text, "rings.csv");
    Require(!rings.empty(), "no rows accepted");
    // As cmd_rings.cpp sets up the diameter mode.
    figura::RingsOptions options;
    options.fit.wavelength =
        figura::ResolveWavelength("mercury-e", figura::SourceTable::Default());
    options.fit.pixel_pitch = figura::Length::Micrometres(1.0);
    const figura::RingsResult result =
        figura::AnalyseRingDiameters(rings, options.fit);
    figura::fuzz::CheckRingsResult(result, options);
  });
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data,
                                      std::size_t size) {
  const std::string_view text = figura::fuzz::AsText(data, size);
  if (!text.empty() && text.front() == 'G') {
    FuzzGapFile(text.substr(1));
  } else if (!text.empty() && text.front() == 'D') {
    FuzzDiameters(text.substr(1));
  } else {
    FuzzJob(text);
  }
  return 0;
}
