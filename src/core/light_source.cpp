#include "core/light_source.h"

#include <algorithm>
#include <cctype>
#include <charconv>

#include "core/error.h"
#include "core/ini.h"
#include "core/text_file.h"
#include "figura/sources_ini.h"

namespace figura {
namespace {

bool EqualNoCase(std::string_view a, std::string_view b) {
  return a.size() == b.size() &&
         std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) ==
                  std::tolower(static_cast<unsigned char>(y));
         });
}

constexpr double kMinWavelength = 200e-9;
constexpr double kMaxWavelength = 2000e-9;

void CheckRange(Length w, const std::string& where) {
  if (w.metres < kMinWavelength || w.metres > kMaxWavelength) {
    throw InputError(where + FormatLength(w) +
                     " is outside 200 nm .. 2000 nm, the range of tabulated "
                     "air wavelengths");
  }
}

std::vector<SpectralLine> ParseLines(const std::string& text,
                                     const std::string& where) {
  std::vector<SpectralLine> lines;
  std::size_t pos = 0;
  while (pos < text.size()) {
    const std::size_t comma = std::min(text.find(',', pos), text.size());
    const std::string_view item =
        Trim(std::string_view(text).substr(pos, comma - pos));
    pos = comma + 1;
    if (item.empty()) continue;
    const std::size_t colon = item.find(':');
    SpectralLine line;
    line.wavelength = ParseLength(item.substr(0, colon), where + "lines");
    if (colon != std::string_view::npos) {
      line.weight = ParseNumber(item.substr(colon + 1), where + "line weight");
    }
    if (line.weight <= 0.0)
      throw InputError(where + "line weights must be positive");
    CheckRange(line.wavelength, where);
    lines.push_back(line);
  }
  return lines;
}

}  // namespace

const SourceTable& SourceTable::Default() {
  static const SourceTable table = Parse(kSourcesIniText, "config/sources.ini");
  return table;
}

SourceTable SourceTable::Parse(std::string_view text,
                               const std::string& origin) {
  const IniFile ini = IniFile::Parse(text, origin);
  SourceTable table;
  for (const std::string& name : ini.Sections()) {
    if (name.empty()) {
      throw InputError(origin + ": keys before the first [source] header");
    }
    const IniEntry* w = ini.FindEntry(name, "wavelength");
    if (w == nullptr)
      throw InputError(origin + ": [" + name + "] has no wavelength");
    LightSource s;
    s.name = name;
    s.wavelength = ParseLength(w->value, ini.Where(*w) + "wavelength");
    CheckRange(s.wavelength, ini.Where(*w));
    if (const IniEntry* u = ini.FindEntry(name, "uncertainty")) {
      s.uncertainty = ParseLength(u->value, ini.Where(*u) + "uncertainty");
      if (s.uncertainty.metres < 0.0) {
        throw InputError(ini.Where(*u) + "uncertainty must not be negative");
      }
    }
    if (const IniEntry* l = ini.FindEntry(name, "lines")) {
      s.lines = ParseLines(l->value, ini.Where(*l));
    }
    s.source = ini.Find(name, "source").value_or("");
    s.basis = ini.Find(name, "basis").value_or("");
    if (s.source.empty()) {
      throw InputError(ini.Where(*w) + "[" + name +
                       "] must name the source of its value");
    }
    table.sources_.push_back(std::move(s));
  }
  return table;
}

SourceTable SourceTable::Load(const std::filesystem::path& path) {
  return Parse(ReadTextFile(path), path.string());
}

const LightSource* SourceTable::Find(std::string_view name) const {
  for (const LightSource& s : sources_) {
    if (EqualNoCase(s.name, name)) return &s;
  }
  return nullptr;
}

std::string SourceTable::Names() const {
  std::string out;
  for (const LightSource& s : sources_) {
    if (!out.empty()) out += ", ";
    out += s.name;
  }
  return out;
}

Wavelength ResolveWavelength(std::string_view text, const SourceTable& table,
                             std::string_view what) {
  const std::string_view t = Trim(text);
  const std::string prefix =
      what.empty() ? std::string() : std::string(what) + ": ";
  if (t.empty()) {
    throw InputError(
        prefix + "missing; give a length (e.g. 546.07nm) or a source name (" +
        table.Names() + ")");
  }
  if (const LightSource* s = table.Find(t)) {
    return Wavelength{s->wavelength, s->uncertainty, s->name, s->source,
                      s->lines};
  }
  if (std::isalpha(static_cast<unsigned char>(t.front())) != 0) {
    throw InputError(prefix + "unknown light source '" + std::string(t) +
                     "'; known: " + table.Names() + "; or give a length (" +
                     kLengthUnits + ")");
  }
  double bare = 0.0;
  const char* end = t.data() + t.size();
  if (std::from_chars(t.data(), end, bare).ptr == end) {
    throw InputError(prefix + "'" + std::string(t) +
                     "' has no unit; give a length (" + kLengthUnits +
                     "), e.g. " + std::string(t) + "nm, or a source name (" +
                     table.Names() + ")");
  }
  Wavelength w;
  w.value = ParseLength(t, what);
  CheckRange(w.value, prefix);
  return w;
}

}  // namespace figura
