#include "core/ini.h"

#include <algorithm>

#include "core/error.h"
#include "core/quantity.h"
#include "core/text_file.h"

namespace figura {

IniFile IniFile::Parse(std::string_view text, std::string origin) {
  IniFile ini;
  ini.origin_ = std::move(origin);
  std::string section;
  int line_no = 0;
  std::size_t pos = 0;
  while (pos <= text.size()) {
    const std::size_t eol = std::min(text.find('\n', pos), text.size());
    const std::string_view raw = text.substr(pos, eol - pos);
    pos = eol + 1;
    ++line_no;
    const std::string_view line = Trim(raw);
    if (line.empty() || line.front() == ';' || line.front() == '#') {
      if (eol == text.size()) break;
      continue;
    }
    const std::string where =
        ini.origin_ + ":" + std::to_string(line_no) + ": ";
    if (line.front() == '[') {
      if (line.back() != ']' || line.size() < 3) {
        throw InputError(where + "malformed section header '" +
                         std::string(line) + "'");
      }
      section = std::string(Trim(line.substr(1, line.size() - 2)));
    } else {
      const std::size_t eq = line.find('=');
      if (eq == std::string_view::npos) {
        throw InputError(where + "expected 'key = value', got '" +
                         std::string(line) + "'");
      }
      IniEntry entry{section, std::string(Trim(line.substr(0, eq))),
                     std::string(Trim(line.substr(eq + 1))), line_no};
      if (entry.key.empty()) throw InputError(where + "empty key");
      if (ini.FindEntry(entry.section, entry.key) != nullptr) {
        throw InputError(where + "key '" + entry.key + "' given twice" +
                         (section.empty() ? "" : " in [" + section + "]"));
      }
      ini.entries_.push_back(std::move(entry));
    }
    if (eol == text.size()) break;
  }
  return ini;
}

IniFile IniFile::Load(const std::filesystem::path& path) {
  return Parse(ReadTextFile(path), path.string());
}

const IniEntry* IniFile::FindEntry(std::string_view section,
                                   std::string_view key) const {
  for (const IniEntry& e : entries_) {
    if (e.section == section && e.key == key) return &e;
  }
  return nullptr;
}

std::optional<std::string> IniFile::Find(std::string_view section,
                                         std::string_view key) const {
  const IniEntry* e = FindEntry(section, key);
  if (e == nullptr) return std::nullopt;
  return e->value;
}

std::vector<std::string> IniFile::Sections() const {
  std::vector<std::string> out;
  for (const IniEntry& e : entries_) {
    if (std::find(out.begin(), out.end(), e.section) == out.end())
      out.push_back(e.section);
  }
  return out;
}

std::string IniFile::Where(const IniEntry& entry) const {
  return origin_ + ":" + std::to_string(entry.line) + ": ";
}

}  // namespace figura
