// Shared option handling for subcommands: Boost.Program_options with value
// types for lengths, wavelengths and views, `--help`, and `--config FILE`
// (INI, the same names as the long options; the command line wins).
#pragma once

#include <array>
#include <filesystem>
#include <iosfwd>
#include <opencv2/core.hpp>
#include <string>
#include <vector>

// GCC 12 at -O3 reports a false "potential null pointer dereference" inside
// Boost's typed_value::notify; silence it for Boost's own code only.
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wnull-dereference"
#include <boost/program_options.hpp>
#pragma GCC diagnostic pop

#include "core/light_source.h"
#include "core/quantity.h"
#include "optics/media.h"

namespace figura {

// Program_options validators so that options bind straight to fields of the
// library's options structs. Each throws po::invalid_option_value carrying
// our readable message.
void validate(boost::any& v, const std::vector<std::string>& values,
              Length* /*unused*/, int);
void validate(boost::any& v, const std::vector<std::string>& values,
              Wavelength* /*unused*/, int);
void validate(boost::any& v, const std::vector<std::string>& values,
              View* /*unused*/, int);

}  // namespace figura

namespace figura::cli {

namespace po = boost::program_options;

// Adds --upper-index, --gap-index, --lower-index bound to `stack`.
void AddMediaOptions(po::options_description& desc, MediaStack* stack);

// Parses `args` for `command` with `desc` (which gets --help and --config
// added) and positional arguments `positional` (may be empty). Returns false
// when --help was asked for and printed to `out`; throws po::error or
// InputError on bad input. `usage` is the synopsis line printed with help.
bool ParseCommand(const std::string& command, const std::string& usage,
                  const std::vector<std::string>& args,
                  po::options_description& desc,
                  const po::positional_options_description& positional,
                  po::variables_map* vm, std::ostream& out);

// Output path for input `input` when `n` inputs are analysed: the path
// itself for one input, "<stem>-<input stem><ext>" beside it for several.
std::filesystem::path PerInputPath(const std::string& path,
                                   const std::string& input, int n);

// A pixel position from ParsePixelPoint (core/quantity.h).
inline cv::Point2d ToPoint(const std::array<double, 2>& p) {
  return {p[0], p[1]};
}

}  // namespace figura::cli
