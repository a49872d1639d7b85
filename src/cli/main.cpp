// figura: the command-line entry point. Dispatches to a subcommand and is
// the one place where bad-input errors become a message and an exit code.
#include <boost/program_options/errors.hpp>
#include <cstring>
#include <exception>
#include <iostream>
#include <string>
#include <vector>

#include "cli/command.h"
#include "core/error.h"
#include "core/version.h"

namespace {

void PrintHelp(std::ostream& out) {
  out << "figura " << figura::Version()
      << " - interference fringe analysis for the optical shop\n\n"
         "usage: figura COMMAND [OPTIONS] [FILES]\n"
         "       figura COMMAND --help\n"
         "       figura --version\n\ncommands:\n";
  for (const figura::cli::Command& c : figura::cli::Commands()) {
    out << "  " << c.name
        << std::string(c.name.size() < 12 ? 12 - c.name.size() : 1, ' ')
        << c.summary << "\n";
  }
  out << "\nexit codes: 0 ok (all parts pass), 1 a part fails or is "
         "indeterminate,\n"
         "            2 usage or input error\n";
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<std::string> all(argv + 1, argv + argc);
  if (all.empty()) {
    PrintHelp(std::cerr);
    return figura::cli::kExitInput;
  }
  const std::string& first = all.front();
  if (first == "--help" || first == "-h" || first == "help") {
    PrintHelp(std::cout);
    return figura::cli::kExitOk;
  }
  if (first == "--version" || first == "-V") {
    std::cout << figura::kToolName << " " << figura::Version() << "\n";
    return figura::cli::kExitOk;
  }
  const std::vector<figura::cli::Command> commands = figura::cli::Commands();
  for (const figura::cli::Command& c : commands) {
    if (c.name != first) continue;
    const std::vector<std::string> rest(all.begin() + 1, all.end());
    try {
      return c.run(rest);
    } catch (const figura::InputError& e) {
      std::cerr << "figura " << c.name << ": error: " << e.what() << "\n";
    } catch (const figura::OutputError& e) {
      std::cerr << "figura " << c.name << ": cannot write: " << e.what()
                << "\n";
    } catch (const boost::program_options::error& e) {
      std::cerr << "figura " << c.name << ": " << e.what() << " (see figura "
                << c.name << " --help)\n";
    } catch (const std::bad_alloc&) {
      std::cerr << "figura " << c.name << ": error: out of memory\n";
    } catch (const std::exception& e) {
      std::cerr << "figura " << c.name << ": internal error: " << e.what()
                << "\n";
    }
    return figura::cli::kExitInput;
  }
  std::cerr << "figura: unknown command '" << first << "'; commands:";
  for (const figura::cli::Command& c : commands) std::cerr << " " << c.name;
  std::cerr << " (see figura --help)\n";
  return figura::cli::kExitInput;
}
