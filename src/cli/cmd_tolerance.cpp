// `figura tolerance TEXT`: parses an ISO 10110-5 surface form tolerance
// (3/A(B/C), RMS forms, test wavelength) and explains it in plain words, or
// writes it as JSON. Parses options, calls ExplainTolerance
// (tolerance/tolerance_explain.h) and prints. A malformed text is an input
// error (exit 2) whose message shows the text with a caret under the column.
#include <iostream>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli/command.h"
#include "cli/options.h"
#include "core/error.h"
#include "io/result_json.h"
#include "tolerance/tolerance_explain.h"

namespace figura::cli {
namespace {

nlohmann::json ResultJson(const ToleranceOptions& o, const ToleranceResult& r,
                          const std::string& config) {
  nlohmann::json settings = ToleranceSettingsJson(o);
  settings["config"] =
      config.empty() ? nlohmann::json(nullptr) : nlohmann::json(config);
  nlohmann::json j = {{"tool", ToolJson()},
                      {"status", StatusJson(r.status, r.messages)},
                      {"settings", settings}};
  // text, wavelength_nm, wavelength_origin, nm_per_fringe, limits.
  j.update(FormToleranceJson(r.tolerance));
  j["explanation"] = r.explanation;
  return j;
}

int Run(const std::vector<std::string>& args) {
  ToleranceOptions options;
  std::string json_path;
  std::string rule = DecisionRuleName(options.rule);
  po::options_description desc("options");
  desc.add_options()(
      "text", po::value<std::string>(&options.text),
      "the tolerance (positional; quote it, the shell has its own use for "
      "( ) ; <)")(
      "wavelength", po::value<Wavelength>(),
      "test wavelength where the text states none: a length with its unit "
      "(632.8nm) or a "
      "source name from config/sources.ini; default 546.07 nm")(
      "decision-rule", po::value<std::string>(&rule)->default_value(rule),
      "how verdicts are reached, named in the explanation: iso14253-1 (guarded "
      "by the "
      "expanded uncertainty) or simple")(
      "json", po::value<std::string>(&json_path),
      "write the result as JSON to PATH ('-' for standard output)");
  po::positional_options_description positional;
  positional.add("text", 1);
  po::variables_map vm;
  try {
    if (!ParseCommand("tolerance",
                      "TEXT [OPTIONS]   e.g. figura tolerance '3/2(0.5/0.2); λ "
                      "= 632.8 nm'",
                      args, desc, positional, &vm, std::cout)) {
      return kExitOk;
    }
  } catch (const po::too_many_positional_options_error&) {
    throw InputError(
        "the tolerance text came as several words; put it in quotes, e.g. "
        "figura tolerance "
        "'3/2(1) RMSi < 0.1; λ = 632.8 nm'");
  }
  if (vm.count("text") == 0U) {
    throw InputError(
        "no tolerance text given; e.g. figura tolerance '3/2(0.5)'");
  }
  if (vm.count("wavelength") != 0U)
    options.wavelength = vm["wavelength"].as<Wavelength>();
  options.rule = ParseDecisionRule(rule, "--decision-rule");
  const std::string problem = options.Check();
  if (!problem.empty()) throw InputError(problem);
  const ToleranceResult result = ExplainTolerance(options);
  const std::string config =
      vm.count("config") != 0U ? vm["config"].as<std::string>() : "";
  if (json_path != "-") std::cout << result.explanation;
  if (!json_path.empty())
    WriteJson(json_path, ResultJson(options, result, config));
  return kExitOk;
}

const Registrar kRegistrar(
    {"tolerance",
     "parse and explain an ISO 10110-5 form tolerance such as "
     "3/2(0.5/0.2)",
     &Run});

}  // namespace
}  // namespace figura::cli
