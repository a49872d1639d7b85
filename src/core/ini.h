// A small INI reader shared by light-source tables, simulator gap files and
// job files: "[section]" headers, "key = value" lines, ';' or '#' comments on
// their own lines. Keys keep their order and line numbers so that errors can
// point at the line.
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace figura {

// One "key = value" line of an INI text.
struct IniEntry {
  std::string section;  // "" before the first header
  std::string key;
  std::string value;
  int line = 0;  // 1-based line number
};

// A parsed INI text.
class IniFile {
 public:
  // Parses text; `origin` names the file in messages. Throws InputError on a
  // malformed line or a key repeated within one section.
  static IniFile Parse(std::string_view text, std::string origin);
  // Reads and parses a file. Throws InputError naming the file if it cannot
  // be read.
  static IniFile Load(const std::filesystem::path& path);

  // The value of section.key, if present.
  [[nodiscard]] std::optional<std::string> Find(std::string_view section,
                                                std::string_view key) const;
  // The entry of section.key, if present.
  [[nodiscard]] const IniEntry* FindEntry(std::string_view section,
                                          std::string_view key) const;
  // Section names in order of first appearance ("" for keys before any).
  [[nodiscard]] std::vector<std::string> Sections() const;
  // All entries in file order.
  [[nodiscard]] const std::vector<IniEntry>& entries() const {
    return entries_;
  }
  // The name used in messages (usually the path).
  [[nodiscard]] const std::string& origin() const { return origin_; }
  // "origin:line: " for messages about one entry.
  [[nodiscard]] std::string Where(const IniEntry& entry) const;

 private:
  std::string origin_;
  std::vector<IniEntry> entries_;
};

}  // namespace figura
