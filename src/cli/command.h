// The subcommand registry of the figura executable. Each cmd_*.cpp file
// registers one command with a static Registrar; main() dispatches.
#pragma once

#include <string>
#include <vector>

namespace figura::cli {

// Exit codes, documented in docs/cli.md.
inline constexpr int kExitOk = 0;
inline constexpr int kExitFail =
    1;  // a verdict: a part failed or is indeterminate
inline constexpr int kExitInput = 2;  // usage or input error

// One subcommand: its name, a one-line summary for `figura --help`, and its
// entry point, which receives the arguments after the command name and
// returns the exit code. It may throw InputError, OutputError or a
// boost::program_options error; main() reports them.
struct Command {
  std::string name;
  std::string summary;
  int (*run)(const std::vector<std::string>& args) = nullptr;
};

// All registered commands, sorted by name.
std::vector<Command> Commands();

// Registers a command at static-initialisation time.
struct Registrar {
  explicit Registrar(Command command);
};

}  // namespace figura::cli
