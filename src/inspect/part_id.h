// Which part a photograph shows: a part id (also used as the file name of
// the part's result and report), a serial number and notes, taken from the
// file name by a pattern or looked up in a manifest CSV.
//
// Pattern: matched against the file name (no folder), `{part}` and
// `{serial}` capture text (at least one character, no '/'), `*` matches
// any text, `?` one character, everything else literally; e.g.
// "L0001-{part}.tif" or "{part}_{serial}_*.png". Without a pattern the part
// id is the file name without its extension.
// Manifest: a CSV file (RFC 4180 quoting) whose header names the columns
// file, part and optionally serial, notes and contact, in any order; `file`
// is the path as given on the command line or just the file name; `contact`
// (centre, center or edge; empty: the job's) overrides the job's contact for
// that part (the press test of that part, docs/lots.md).
// A part id must be 1..64 characters of A-Z a-z 0-9 . _ - not starting
// with '.', so that it is a safe file name.
#pragma once

#include <filesystem>
#include <map>
#include <optional>
#include <regex>
#include <string>
#include <vector>

#include "optics/sphere.h"

namespace figura {

// The identity of one part.
struct PartIdentity {
  std::string part;
  std::string serial;
  std::string notes;
  // Where this part touched its reference (manifest column contact);
  // nullopt: the job's contact applies.
  std::optional<Contact> contact;
};

// How part ids are found.
struct PartIdOptions {
  std::string pattern;             // empty: the file stem (or the manifest)
  std::filesystem::path manifest;  // empty: none

  // Empty when usable, else a readable reason.
  [[nodiscard]] std::string Check() const;
};

// Empty when `id` is a usable part id, else the reason.
std::string CheckPartId(const std::string& id);

// Splits one CSV line (RFC 4180 quoting; no line breaks inside fields).
// Throws InputError naming `where` on an unterminated quote.
std::vector<std::string> SplitCsvLine(const std::string& line,
                                      const std::string& where);

// Finds part identities for files.
class PartNamer {
 public:
  // Compiles the pattern or reads the manifest. Throws InputError naming
  // the pattern (and the column of the problem) or the manifest file and
  // line (missing columns, a file listed twice, a bad part id, a contact
  // other than centre or edge).
  explicit PartNamer(const PartIdOptions& options);

  // The identity of `file` (as given on the command line). Throws
  // InputError with a one-line reason (the name does not match the pattern,
  // the file is not in the manifest, the id is not a safe file name).
  [[nodiscard]] PartIdentity Identify(const std::string& file) const;

 private:
  PartIdOptions options_;
  std::regex regex_;
  int part_group_ = 0;
  int serial_group_ = 0;
  std::map<std::string, PartIdentity> by_path_;  // manifest rows
  std::map<std::string, PartIdentity> by_name_;  // unique file names only
};

}  // namespace figura
