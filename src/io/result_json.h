// JSON helpers shared by every command's result: the `input`, `tool` and
// `status` blocks of ../shared/design.md, and writing a result to a file
// (atomically) or to standard output ("-").
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "core/error.h"
#include "io/atomic_file.h"
#include "io/image.h"

namespace figura {

// {"path", "sha256", "width", "height", "bit_depth", "channels", "format",
// "sample_format": "uint"|"float"}.
nlohmann::json InputJson(const ImageInfo& info);

// {"name": "figura", "version": "..."}.
nlohmann::json ToolJson();

// {"state": "ok"|"warning"|"error", "messages": [...]}.
nlohmann::json StatusJson(Status status,
                          const std::vector<std::string>& messages);

// The result object of an input that could not be analysed at all (e.g. an
// unreadable file): {"input", "settings", "tool", "status": error with
// `message`}.
nlohmann::json InputErrorJson(const nlohmann::json& input,
                              const nlohmann::json& settings,
                              const std::string& message);

// A finite number, or null for NaN/Inf (a non-finite value never reaches a
// report as a number).
nlohmann::json FiniteOrNull(double value);

// The string at `key` of a JSON object; empty when `j` is not an object or
// the key is missing, null or not a string (results read back from disk
// may hold null, e.g. the hash of an unreadable input).
std::string StringOr(const nlohmann::json& j, const char* key);

// `value` pretty-printed as the result files hold it: 2 spaces, a trailing
// newline, invalid UTF-8 (e.g. from a file name) replaced.
std::string JsonText(const nlohmann::json& value);

// Writes JsonText(value) to `path`
// atomically, or to standard output when path is "-". Throws OutputError.
void WriteJson(const std::string& path, const nlohmann::json& value,
               Overwrite overwrite = Overwrite::kAllow);

}  // namespace figura
