// Loading the photographs that `figura rings` and `figura map` analyse, with
// the one-line error report and the error result of an input that cannot be
// analysed.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "io/image.h"

namespace figura::cli {

// Loads `path` and checks that it is a photograph to analyse
// (io/photo_check.h). On bad input (InputError) prints "figura COMMAND:
// error: MESSAGE" on standard error, appends the error result
// (InputErrorJson with `settings`) to the array `results`, sets *exit_code
// to kExitInput and returns nothing.
std::optional<Image> LoadPhoto(const std::string& command,
                               const std::string& path,
                               const nlohmann::json& settings,
                               nlohmann::json* results, int* exit_code);

}  // namespace figura::cli
