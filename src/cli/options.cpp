#include "cli/options.h"

#include <iostream>
#include <sstream>

#include "core/error.h"
#include "core/text_file.h"

namespace figura {
namespace po = boost::program_options;

namespace {

template <typename T, typename F>
void Convert(boost::any& v, const std::vector<std::string>& values, F parse) {
  po::validators::check_first_occurrence(v);
  const std::string& s = po::validators::get_single_string(values);
  try {
    v = boost::any(T(parse(s)));
  } catch (const InputError& e) {
    // Boost fills in the option name when it adds the error's context.
    std::string message = e.what();
    for (std::size_t p = message.find('%'); p != std::string::npos;
         p = message.find('%', p)) {
      message.erase(p, 1);
    }
    throw po::error_with_option_name("%canonical_option%: " + message);
  }
}

}  // namespace

void validate(boost::any& v, const std::vector<std::string>& values,
              Length* /*unused*/, int /*unused*/) {
  Convert<Length>(v, values,
                  [](const std::string& s) { return ParseLength(s); });
}

void validate(boost::any& v, const std::vector<std::string>& values,
              Wavelength* /*unused*/, int /*unused*/) {
  Convert<Wavelength>(v, values, [](const std::string& s) {
    return ResolveWavelength(s, SourceTable::Default(), "");
  });
}

void validate(boost::any& v, const std::vector<std::string>& values,
              View* /*unused*/, int /*unused*/) {
  Convert<View>(v, values,
                [](const std::string& s) { return ParseView(s, ""); });
}

}  // namespace figura

namespace figura::cli {

void AddMediaOptions(po::options_description& desc, MediaStack* stack) {
  desc.add_options()(
      "upper-index",
      po::value<double>(&stack->upper_index)->default_value(stack->upper_index),
      "refractive index of the medium the light comes from (the upper part or "
      "plate)")(
      "gap-index",
      po::value<double>(&stack->gap_index)->default_value(stack->gap_index),
      "refractive index of the gap (1.0 for air, higher for a contact fluid)")(
      "lower-index",
      po::value<double>(&stack->lower_index)->default_value(stack->lower_index),
      "refractive index of the lower part or plate");
}

bool ParseCommand(const std::string& command, const std::string& usage,
                  const std::vector<std::string>& args,
                  po::options_description& desc,
                  const po::positional_options_description& positional,
                  po::variables_map* vm, std::ostream& out) {
  std::string config_path;
  desc.add_options()(
      "config", po::value<std::string>(&config_path),
      "read options from an INI file (same names as the long options; the "
      "command line wins)")("help,h", "show this help");
  po::store(
      po::command_line_parser(args).options(desc).positional(positional).run(),
      *vm);
  if (vm->count("help") != 0U) {
    out << "usage: figura " << command << " " << usage << "\n\n"
        << desc << "\n";
    return false;
  }
  if (vm->count("config") != 0U) {
    const std::string path = (*vm)["config"].as<std::string>();
    // INI comments may start with ';' (as in our other INI files); Boost's
    // config parser only knows '#'.
    std::istringstream raw(ReadTextFile(path));
    std::string contents;
    for (std::string line; std::getline(raw, line);) {
      const std::size_t first = line.find_first_not_of(" \t");
      if (first != std::string::npos && line[first] == ';') line[first] = '#';
      contents += line;
      contents += '\n';
    }
    std::istringstream text(contents);
    try {
      po::store(po::parse_config_file(text, desc, false), *vm);
    } catch (const po::error& e) {
      throw InputError(path + ": " + e.what());
    }
  }
  po::notify(*vm);
  return true;
}

std::filesystem::path PerInputPath(const std::string& path,
                                   const std::string& input, int n) {
  if (n <= 1) return path;
  const std::filesystem::path p(path);
  return p.parent_path() / (p.stem().string() + "-" +
                            std::filesystem::path(input).stem().string() +
                            p.extension().string());
}

}  // namespace figura::cli
