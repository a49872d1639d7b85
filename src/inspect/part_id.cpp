#include "inspect/part_id.h"

#include <cctype>
#include <set>
#include <sstream>
#include <string_view>

#include "core/error.h"
#include "core/quantity.h"
#include "core/text_file.h"

namespace figura {
namespace {

constexpr std::size_t kMaxPartIdLength = 64;

std::string PatternError(const std::string& pattern, std::size_t at,
                         const std::string& problem) {
  return "part-pattern '" + pattern + "': " + problem + " (column " +
         std::to_string(at + 1) + ")";
}

}  // namespace

std::string CheckPartId(const std::string& id) {
  if (id.empty()) return "empty part id";
  if (id.size() > kMaxPartIdLength) {
    return "part id '" + id + "' is longer than 64 characters";
  }
  if (id.front() == '.') return "part id '" + id + "' starts with '.'";
  for (const char c : id) {
    const bool ok = (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') ||
                    (c >= '0' && c <= '9') || c == '.' || c == '_' || c == '-';
    if (!ok) {
      return "part id '" + id +
             "' may hold only letters, digits, '.', '_' and '-' (it names "
             "the part's files)";
    }
  }
  return {};
}

std::string PartIdOptions::Check() const {
  if (!pattern.empty() && !manifest.empty()) {
    return "give either part-pattern or manifest, not both";
  }
  if (!pattern.empty() && pattern.find("{part}") == std::string::npos) {
    return "part-pattern '" + pattern + "' has no {part}";
  }
  return {};
}

std::vector<std::string> SplitCsvLine(const std::string& line,
                                      const std::string& where) {
  std::vector<std::string> fields;
  std::string field;
  bool quoted = false;
  bool was_quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"') {
        if (i + 1 < line.size() && line[i + 1] == '"') {
          field += '"';
          ++i;
        } else {
          quoted = false;
        }
      } else {
        field += c;
      }
    } else if (c == '"' && field.empty() && !was_quoted) {
      quoted = true;
      was_quoted = true;
    } else if (c == ',') {
      fields.push_back(was_quoted ? field : std::string(Trim(field)));
      field.clear();
      was_quoted = false;
    } else {
      field += c;
    }
  }
  if (quoted) throw InputError(where + ": unterminated quote");
  fields.push_back(was_quoted ? field : std::string(Trim(field)));
  return fields;
}

PartNamer::PartNamer(const PartIdOptions& options) : options_(options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  if (!options.pattern.empty()) {
    const std::string& p = options.pattern;
    std::string re = "^";
    int group = 0;
    for (std::size_t i = 0; i < p.size(); ++i) {
      const char c = p[i];
      if (c == '{') {
        const std::size_t close = p.find('}', i);
        if (close == std::string::npos) {
          throw InputError(PatternError(p, i, "'{' without '}'"));
        }
        const std::string name = p.substr(i + 1, close - i - 1);
        if (name == "part" && part_group_ == 0) {
          part_group_ = ++group;
        } else if (name == "serial" && serial_group_ == 0) {
          serial_group_ = ++group;
        } else {
          throw InputError(
              PatternError(p, i,
                           "unknown or repeated placeholder {" + name +
                               "}; accepted: {part}, {serial} (once each)"));
        }
        re += "([^/]+?)";
        i = close;
      } else if (c == '*') {
        re += "[^/]*";
      } else if (c == '?') {
        re += "[^/]";
      } else if (std::string_view(R"(.^$|()[]{}+\)").find(c) !=
                 std::string_view::npos) {
        re += '\\';  // a regex metacharacter, taken literally
        re += c;
      } else {
        re += c;
      }
    }
    re += "$";
    regex_ = std::regex(re);
  }
  if (!options.manifest.empty()) {
    const std::string origin = options.manifest.string();
    std::istringstream text(ReadTextFile(options.manifest));
    std::string line;
    int line_no = 0;
    int file_col = -1, part_col = -1, serial_col = -1, notes_col = -1;
    int contact_col = -1;
    std::map<std::string, int> names;  // file name -> count
    std::map<std::string, PartIdentity> rows_by_name;
    std::set<std::string> parts;
    while (std::getline(text, line)) {
      ++line_no;
      if (!line.empty() && line.back() == '\r') line.pop_back();
      const std::string where = origin + ":" + std::to_string(line_no);
      if (Trim(line).empty()) continue;
      const std::vector<std::string> f = SplitCsvLine(line, where);
      if (file_col < 0) {
        for (std::size_t c = 0; c < f.size(); ++c) {
          const int ci = static_cast<int>(c);
          if (f[c] == "file") file_col = ci;
          if (f[c] == "part") part_col = ci;
          if (f[c] == "serial") serial_col = ci;
          if (f[c] == "notes") notes_col = ci;
          if (f[c] == "contact") contact_col = ci;
        }
        if (file_col < 0 || part_col < 0) {
          throw InputError(where +
                           ": the header must name the columns file and "
                           "part (optionally serial, notes, contact)");
        }
        continue;
      }
      auto cell = [&](int c) {
        return c >= 0 && static_cast<std::size_t>(c) < f.size()
                   ? f[static_cast<std::size_t>(c)]
                   : std::string();
      };
      PartIdentity id{cell(part_col), cell(serial_col), cell(notes_col), {}};
      if (const std::string contact = cell(contact_col); !contact.empty()) {
        id.contact = ParseContact(contact, where + ": contact");
      }
      const std::string file = cell(file_col);
      if (file.empty()) throw InputError(where + ": empty file name");
      if (std::string why = CheckPartId(id.part); !why.empty()) {
        throw InputError(where + ": " + why);
      }
      if (!parts.insert(id.part).second) {
        throw InputError(where + ": part '" + id.part + "' listed twice");
      }
      if (!by_path_.emplace(file, id).second) {
        throw InputError(where + ": file '" + file + "' listed twice");
      }
      const std::string name = std::filesystem::path(file).filename().string();
      ++names[name];
      rows_by_name[name] = id;
    }
    if (file_col < 0) throw InputError(origin + ": empty manifest");
    for (const auto& [name, count] : names) {
      if (count == 1) by_name_[name] = rows_by_name[name];
    }
  }
}

PartIdentity PartNamer::Identify(const std::string& file) const {
  const std::string name = std::filesystem::path(file).filename().string();
  PartIdentity id;
  if (!options_.manifest.empty()) {
    auto it = by_path_.find(file);
    if (it == by_path_.end()) it = by_path_.find(name);
    if (it == by_path_.end()) {
      const auto jt = by_name_.find(name);
      if (jt == by_name_.end()) {
        throw InputError("not listed in the manifest " +
                         options_.manifest.string());
      }
      id = jt->second;
    } else {
      id = it->second;
    }
  } else if (!options_.pattern.empty()) {
    std::smatch m;
    if (!std::regex_match(name, m, regex_)) {
      throw InputError("file name '" + name +
                       "' does not match part-pattern '" + options_.pattern +
                       "'");
    }
    id.part = m[part_group_].str();
    if (serial_group_ > 0) id.serial = m[serial_group_].str();
  } else {
    id.part = std::filesystem::path(file).stem().string();
  }
  if (std::string why = CheckPartId(id.part); !why.empty()) {
    throw InputError(why);
  }
  return id;
}

}  // namespace figura
