#include "io/result_json.h"

#include <cmath>
#include <iostream>

#include "core/version.h"

namespace figura {

nlohmann::json InputJson(const ImageInfo& info) {
  return {{"path", info.path},
          {"sha256", info.sha256},
          {"width", info.width},
          {"height", info.height},
          {"bit_depth", info.bit_depth},
          {"channels", info.channels},
          {"format", info.format},
          {"sample_format", info.is_float ? "float" : "uint"}};
}

nlohmann::json ToolJson() {
  return {{"name", kToolName}, {"version", Version()}};
}

nlohmann::json StatusJson(Status status,
                          const std::vector<std::string>& messages) {
  return {{"state", StatusName(status)}, {"messages", messages}};
}

nlohmann::json FiniteOrNull(double value) {
  if (!std::isfinite(value)) return nullptr;
  return value;
}

std::string StringOr(const nlohmann::json& j, const char* key) {
  if (!j.is_object()) return {};
  const auto it = j.find(key);
  return it != j.end() && it->is_string() ? it->get<std::string>()
                                          : std::string();
}

std::string JsonText(const nlohmann::json& value) {
  // Invalid UTF-8 (e.g. from a file name) is replaced rather than thrown on.
  return value.dump(2, ' ', false, nlohmann::json::error_handler_t::replace) +
         "\n";
}

void WriteJson(const std::string& path, const nlohmann::json& value,
               Overwrite overwrite) {
  const std::string text = JsonText(value);
  if (path == "-") {
    std::cout.write(text.data(), static_cast<std::streamsize>(text.size()));
    std::cout.flush();
    if (!std::cout) throw OutputError("standard output: write failed");
    return;
  }
  WriteFileAtomic(path, text, overwrite);
}

nlohmann::json InputErrorJson(const nlohmann::json& input,
                              const nlohmann::json& settings,
                              const std::string& message) {
  return {{"input", input},
          {"settings", settings},
          {"tool", ToolJson()},
          {"status", StatusJson(Status::kError, {message})}};
}

}  // namespace figura
