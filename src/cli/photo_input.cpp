#include "cli/photo_input.h"

#include <iostream>

#include "cli/command.h"
#include "core/error.h"
#include "io/photo_check.h"
#include "io/result_json.h"

namespace figura::cli {

std::optional<Image> LoadPhoto(const std::string& command,
                               const std::string& path,
                               const nlohmann::json& settings,
                               nlohmann::json* results, int* exit_code) {
  try {
    Image image = LoadImage(path);
    CheckPhoto(image);
    return image;
  } catch (const InputError& e) {
    std::cerr << "figura " << command << ": error: " << e.what() << "\n";
    *exit_code = kExitInput;
    results->push_back(InputErrorJson({{"path", path}}, settings, e.what()));
    return std::nullopt;
  }
}

}  // namespace figura::cli
