// Named light sources (test wavelengths in standard air) from
// config/sources.ini, and the resolution of a --wavelength value that is
// either a length with a unit or a source name.
#pragma once

#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "core/quantity.h"

namespace figura {

// One spectral line of a source with its relative weight (simulation only).
struct SpectralLine {
  Length wavelength;
  double weight = 1.0;
};

// A named source: its test wavelength in air, the standard uncertainty of
// that wavelength as used at the bench, and where the value comes from.
struct LightSource {
  std::string name;
  Length wavelength;
  Length uncertainty;
  std::vector<SpectralLine> lines;  // empty: a single line at `wavelength`
  std::string source;               // citation of the value
  std::string basis;                // how the uncertainty was set
};

// A wavelength as resolved from an option: either typed as a length
// (source name empty, uncertainty zero unless given) or taken from a source.
struct Wavelength {
  Length value;
  Length uncertainty;
  std::string source_name;  // e.g. "mercury-e"; empty for a typed length
  std::string citation;     // source of the value; empty for a typed length
  std::vector<SpectralLine> lines;
};

// The table of named sources.
class SourceTable {
 public:
  // The table compiled in from config/sources.ini.
  static const SourceTable& Default();
  // Parses an INI text in the format of config/sources.ini. Throws
  // InputError naming `origin` and the line on a bad entry.
  static SourceTable Parse(std::string_view text, const std::string& origin);
  // Reads a table from a file. Throws InputError naming the file.
  static SourceTable Load(const std::filesystem::path& path);

  // The source called `name` (case-insensitive), or nullptr.
  [[nodiscard]] const LightSource* Find(std::string_view name) const;
  // All sources in file order.
  [[nodiscard]] const std::vector<LightSource>& sources() const {
    return sources_;
  }
  // Comma-separated names, for messages and help.
  [[nodiscard]] std::string Names() const;

 private:
  std::vector<LightSource> sources_;
};

// Resolves a --wavelength value: a length with a unit ("546.07nm") or a
// source name ("mercury-e"). Throws InputError listing the accepted forms and
// names; rejects wavelengths outside 200 nm .. 2000 nm (the range over which
// air wavelengths are tabulated, NIST ASD).
Wavelength ResolveWavelength(std::string_view text, const SourceTable& table,
                             std::string_view what = "--wavelength");

}  // namespace figura
