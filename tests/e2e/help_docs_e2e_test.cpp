// End-to-end: `figura --help` and `figura COMMAND --help` (the program) agree
// with docs/cli.md (the reference page): every command has a section, every
// option the help lists is in that section's option table and the table
// lists no option the help lacks (a removed one), each default the help
// prints is the default the table gives, and each usage line of the help is
// the section's synopsis. The help is Boost.Program_options' layout
// ("  --name arg (=default)   text", "  -h [ --help ]   text").
#include <gtest/gtest.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <map>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "e2e/e2e_util.h"

namespace figura::e2e {
namespace {

// What the help says of one option.
struct HelpOption {
  bool has_default = false;
  std::string default_value;
};

// The options of one `figura CMD --help`, by name ("--sectors", "-h").
using HelpOptions = std::map<std::string, HelpOption>;

std::vector<std::string> Lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

std::string Strip(const std::string& s) {
  const std::size_t b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return {};
  const std::size_t e = s.find_last_not_of(" \t");
  return s.substr(b, e - b + 1);
}

// Parses Boost's option listing: an option line starts with two blanks and
// a dash; description continuation lines start with more blanks.
HelpOptions ParseHelpOptions(const std::string& help) {
  HelpOptions options;
  static const std::regex kLong(
      R"(^  (?:-([A-Za-z]) \[ )?--([a-z0-9-]+)( \])?(?: arg(?: \(=([^)]*)\))?)?)");
  static const std::regex kShortOnly(R"(^  -([A-Za-z])(?: |$))");
  for (const std::string& line : Lines(help)) {
    std::smatch m;
    if (std::regex_search(line, m, kLong)) {
      HelpOption o;
      o.has_default = m[4].matched;
      o.default_value = m[4].str();
      options[std::string("--").append(m[2].str())] = o;
      if (m[1].matched) options[std::string("-").append(m[1].str())] = o;
    } else if (std::regex_search(line, m, kShortOnly)) {
      options[std::string("-").append(m[1].str())] = {};
    }
  }
  return options;
}

// The usage lines of a help text: "usage: figura X ..." and the lines
// indented under it, each from "figura" on, cut before an "   e.g." example.
std::vector<std::string> UsageLines(const std::string& help) {
  std::vector<std::string> usage;
  bool in_usage = false;
  for (const std::string& line : Lines(help)) {
    if (line.rfind("usage: ", 0) == 0) {
      in_usage = true;
    } else if (!in_usage || line.empty() || line[0] != ' ') {
      in_usage = false;
      continue;
    }
    std::string text =
        Strip(line.rfind("usage: ", 0) == 0 ? line.substr(7) : line);
    if (const std::size_t eg = text.find("   e.g."); eg != std::string::npos) {
      text = Strip(text.substr(0, eg));
    }
    usage.push_back(text);
  }
  return usage;
}

// One command's section of docs/cli.md: from "## `figura NAME`" to the next
// "## " heading.
std::map<std::string, std::string> DocSections(const std::string& doc) {
  std::map<std::string, std::string> sections;
  static const std::regex kHeading(R"(^## `figura ([a-z]+)`\s*$)");
  std::string current;
  for (const std::string& line : Lines(doc)) {
    std::smatch m;
    if (std::regex_match(line, m, kHeading)) {
      current = m[1].str();
      sections[current].clear();
      continue;
    }
    if (line.rfind("## ", 0) == 0) current.clear();
    if (!current.empty()) sections[current] += line + "\n";
  }
  return sections;
}

std::vector<std::string> TableCells(const std::string& row) {
  std::vector<std::string> cells;
  std::string cell;
  for (std::size_t i = 1; i < row.size(); ++i) {
    if (row[i] == '|' && row[i - 1] != '\\') {
      cells.push_back(Strip(cell));
      cell.clear();
    } else {
      cell += row[i];
    }
  }
  return cells;
}

// An option row of a section's option table(s) (header "| option | ...").
struct DocOption {
  std::string row;            // the whole row, for messages
  std::string default_value;  // the row's default cell ("" when none)
};

// Option name -> its row, from every table of the section whose header
// starts with "| option |". A row may name several options ("`-h`,
// `--help`", "`--upper-index`, `--gap-index`, `--lower-index`"); its default
// cell then lists one default per option, separated by ", ".
std::map<std::string, DocOption> DocOptions(const std::string& section) {
  std::map<std::string, DocOption> options;
  static const std::regex kName(R"(`(--?[A-Za-z][a-z0-9-]*)\b)");
  int default_col = -1;
  bool in_table = false;
  for (const std::string& line : Lines(section)) {
    if (line.rfind("| option |", 0) == 0) {
      in_table = true;
      const std::vector<std::string> head = TableCells(line);
      default_col = -1;
      for (std::size_t c = 0; c < head.size(); ++c) {
        if (head[c] == "default") default_col = static_cast<int>(c);
      }
      continue;
    }
    if (!in_table) continue;
    if (line.rfind('|', 0) != 0) {
      in_table = false;
      continue;
    }
    if (line.rfind("| ---", 0) == 0) continue;
    const std::vector<std::string> cells = TableCells(line);
    if (cells.empty()) continue;
    std::vector<std::string> names;
    for (std::sregex_iterator it(cells[0].begin(), cells[0].end(), kName), end;
         it != end; ++it) {
      names.push_back((*it)[1].str());
    }
    std::vector<std::string> defaults;
    if (default_col >= 0 &&
        static_cast<std::size_t>(default_col) < cells.size()) {
      const std::string& d = cells[static_cast<std::size_t>(default_col)];
      if (names.size() > 1) {
        std::size_t start = 0;
        for (std::size_t p = d.find(", "); p != std::string::npos;
             p = d.find(", ", start)) {
          defaults.push_back(d.substr(start, p - start));
          start = p + 2;
        }
        defaults.push_back(d.substr(start));
      } else {
        defaults.push_back(d);
      }
    }
    for (std::size_t i = 0; i < names.size(); ++i) {
      DocOption o;
      o.row = line;
      if (i < defaults.size()) o.default_value = defaults[i];
      options[names[i]] = o;
    }
  }
  return options;
}

// A default as written in the docs: backticks removed, a trailing
// explanation in parentheses dropped ("`mercury-e` (546.074 nm)").
std::string DocDefault(const std::string& cell) {
  std::string s;
  for (char c : cell) {
    if (c != '`') s += c;
  }
  if (const std::size_t p = s.find(" ("); p != std::string::npos) s.resize(p);
  return Strip(s);
}

bool ParseDouble(const std::string& s, double* v) {
  const char* end = s.data() + s.size();
  const auto r = std::from_chars(s.data(), end, *v);
  return r.ec == std::errc() && r.ptr == end;
}

// The help's default and the docs' default name the same value: equal
// text (case aside), or equal numbers (the help prints doubles in full
// precision: 1.5167999999999999 is 1.5168).
bool SameDefault(const std::string& help, const std::string& doc) {
  double a = 0.0, b = 0.0;
  if (ParseDouble(help, &a) && ParseDouble(doc, &b)) {
    return std::abs(a - b) <= 1e-12 * std::max(1.0, std::abs(a));
  }
  std::string x = help, y = doc;
  for (char& c : x)
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  for (char& c : y)
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return x == y;
}

std::string CliDoc() {
  return ReadFile(fs::path(FIGURA_SOURCE_DIR) / "docs/cli.md");
}

// The command names listed under "commands:" in `figura --help`.
std::vector<std::string> HelpCommands(const std::string& help) {
  std::vector<std::string> names;
  bool in_list = false;
  static const std::regex kRow(R"(^  ([a-z]+) +\S)");
  for (const std::string& line : Lines(help)) {
    if (line == "commands:") {
      in_list = true;
      continue;
    }
    if (!in_list) continue;
    std::smatch m;
    if (!std::regex_search(line, m, kRow)) break;
    names.push_back(m[1].str());
  }
  return names;
}

TEST(HelpDocs, EveryCommandHasASectionAndNoOther) {
  const CommandOutcome run = RunFigura("--help", std::string("help_docs_top"));
  ASSERT_EQ(run.exit_code, 0) << run.err;
  const std::vector<std::string> commands = HelpCommands(run.out);
  // The six commands of ../shared/design.md; a new one must be documented.
  ASSERT_GE(commands.size(), 6U) << run.out;
  const std::string doc = CliDoc();
  const std::map<std::string, std::string> sections = DocSections(doc);
  for (const std::string& c : commands) {
    EXPECT_EQ(sections.count(c), 1U)
        << "docs/cli.md has no section '## `figura " << c << "`'";
  }
  for (const auto& [name, text] : sections) {
    EXPECT_NE(std::find(commands.begin(), commands.end(), name), commands.end())
        << "docs/cli.md documents `figura " << name
        << "`, which figura --help does not list";
  }
  // The overview sentence names exactly the commands.
  const std::size_t at = doc.find("\nCommands: ");
  ASSERT_NE(at, std::string::npos) << "docs/cli.md lost its 'Commands: ' line";
  const std::string sentence = doc.substr(at, doc.find("\n\n", at + 1) - at);
  std::set<std::string> listed;
  static const std::regex kCode("`([a-z]+)`");
  for (std::sregex_iterator it(sentence.begin(), sentence.end(), kCode), end;
       it != end; ++it) {
    listed.insert((*it)[1].str());
  }
  EXPECT_EQ(listed, std::set<std::string>(commands.begin(), commands.end()))
      << sentence;
  // The top-level options of the help are in "Calling figura".
  const std::size_t calling = doc.find("## Calling figura");
  ASSERT_NE(calling, std::string::npos);
  const std::string calling_text =
      doc.substr(calling, doc.find("\n## ", calling + 1) - calling);
  for (const std::string& usage : UsageLines(run.out)) {
    EXPECT_NE(calling_text.find(usage), std::string::npos)
        << "figura --help usage line not in docs/cli.md 'Calling figura': "
        << usage;
  }
  for (const char* option : {"--help", "-h", "--version", "-V"}) {
    EXPECT_NE(calling_text.find(option), std::string::npos) << option;
  }
}

class CommandHelpDocs : public ::testing::TestWithParam<std::string> {};

TEST_P(CommandHelpDocs, OptionsDefaultsAndUsageMatch) {
  const std::string command = GetParam();
  const CommandOutcome run =
      RunFigura(command + " --help", std::string("help_docs_").append(command));
  ASSERT_EQ(run.exit_code, 0) << run.err;
  const HelpOptions help = ParseHelpOptions(run.out);
  ASSERT_GE(help.size(), 3U) << run.out;  // at least --config, --help, -h
  ASSERT_EQ(help.count("--config"), 1U) << run.out;
  const std::map<std::string, std::string> sections = DocSections(CliDoc());
  ASSERT_EQ(sections.count(command), 1U);
  const std::string& section = sections.at(command);
  const std::map<std::string, DocOption> doc = DocOptions(section);
  for (const auto& [name, option] : help) {
    const auto it = doc.find(name);
    if (it == doc.end()) {
      ADD_FAILURE() << "figura " << command << " --help lists " << name
                    << ", docs/cli.md's option table for " << command
                    << " does not";
      continue;
    }
    if (option.has_default) {
      EXPECT_TRUE(SameDefault(option.default_value,
                              DocDefault(it->second.default_value)))
          << "figura " << command << " " << name << ": help default '"
          << option.default_value << "', docs/cli.md default '"
          << it->second.default_value << "'";
    }
  }
  for (const auto& [name, option] : doc) {
    EXPECT_EQ(help.count(name), 1U)
        << "docs/cli.md documents " << name << " for " << command << ", figura "
        << command << " --help does not list it: " << option.row;
  }
  const std::vector<std::string> usage = UsageLines(run.out);
  ASSERT_FALSE(usage.empty()) << run.out;
  const std::size_t fence = section.find("```\n");
  ASSERT_NE(fence, std::string::npos) << "no synopsis block for " << command;
  const std::string synopsis =
      section.substr(fence, section.find("```", fence + 4) - fence);
  for (const std::string& line : usage) {
    EXPECT_NE(synopsis.find(line + "\n"), std::string::npos)
        << "usage line of figura " << command
        << " --help not in the docs' synopsis: " << line;
  }
}

INSTANTIATE_TEST_SUITE_P(AllCommands, CommandHelpDocs,
                         ::testing::Values("layers", "rings", "map", "inspect",
                                           "simulate", "tolerance"));

// The checker itself: a listing with an option the docs lack, and a default
// that differs, are caught (so the test above can fail).
TEST(HelpDocs, CheckerSeesMissingOptionsAndDefaults) {
  const HelpOptions help = ParseHelpOptions(
      "usage: figura x [OPTIONS]\n\nx options:\n"
      "  --alpha arg (=3)                      text\n"
      "                                        more text\n"
      "  --beta arg                            text\n"
      "  --gamma                               a switch\n"
      "  -h [ --help ]                         show this help\n");
  ASSERT_EQ(help.size(), 5U);
  EXPECT_EQ(help.at("--alpha").default_value, "3");
  EXPECT_FALSE(help.at("--beta").has_default);
  EXPECT_EQ(help.count("-h"), 1U);
  const std::map<std::string, DocOption> doc = DocOptions(
      "| option | meaning | default |\n| --- | --- | --- |\n"
      "| `--alpha N` | a | `4` |\n| `--beta`, `--gamma` | b | none, none |\n"
      "| `-h`, `--help` | help | |\n\n| option | x |\n| --- | --- |\n| "
      "`--delta` | d |\n");
  EXPECT_EQ(doc.size(), 6U);
  EXPECT_FALSE(SameDefault(help.at("--alpha").default_value,
                           DocDefault(doc.at("--alpha").default_value)));
  EXPECT_TRUE(SameDefault("1.5167999999999999", "1.5168"));
  EXPECT_EQ(DocDefault("`mercury-e` (546.074 nm)"), "mercury-e");
  EXPECT_EQ(UsageLines(
                "usage: figura t TEXT [OPTIONS]   e.g. figura t '3/2'\n\nx:\n"),
            std::vector<std::string>{"figura t TEXT [OPTIONS]"});
}

}  // namespace
}  // namespace figura::e2e
