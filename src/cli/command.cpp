#include "cli/command.h"

#include <algorithm>

namespace figura::cli {
namespace {

std::vector<Command>& Registry() {
  static std::vector<Command> registry;
  return registry;
}

}  // namespace

Registrar::Registrar(Command command) {
  Registry().push_back(std::move(command));
}

std::vector<Command> Commands() {
  std::vector<Command> out = Registry();
  std::sort(out.begin(), out.end(),
            [](const Command& a, const Command& b) { return a.name < b.name; });
  return out;
}

}  // namespace figura::cli
