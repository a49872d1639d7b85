// `figura layers`: the phase-shift analysis of a media stack (Fresnel
// coefficients, phase change at each reflection, contact dark or bright,
// visibility and minimum gaps in reflected and transmitted light). Parses,
// validates, calls AnalyseLayers (optics/layers.h) and prints.
#include <iomanip>
#include <iostream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "cli/command.h"
#include "cli/options.h"
#include "core/error.h"
#include "io/result_json.h"
#include "optics/layers.h"

namespace figura::cli {
namespace {

const char* PhaseWord(double phase_rad) {
  return phase_rad > 1.0 ? "pi (half wave)" : "0";
}

std::string Signed(double v, int digits) {
  std::ostringstream out;
  out << std::showpos << std::fixed << std::setprecision(digits) << v;
  return out.str();
}

// Standard uncertainty of a minimum gap from the wavelength's alone (the
// indices are taken as exact: they are inputs without uncertainty).
double GapUncertainty(double gap_m, const Wavelength& w) {
  return gap_m * w.uncertainty.metres / w.value.metres;
}

nlohmann::json ReflectionJson(const Reflection& r) {
  return {{"where", r.where},
          {"n_from", r.n_from},
          {"n_to", r.n_to},
          {"amplitude_r", r.amplitude},
          {"phase_rad", r.phase_rad}};
}

nlohmann::json ViewJson(const ViewAnalysis& a, const Wavelength& w) {
  std::vector<double> gaps_nm;
  std::vector<double> gaps_u_nm;
  for (double g : a.minimum_gaps_m) {
    gaps_nm.push_back(g * 1e9);
    gaps_u_nm.push_back(GapUncertainty(g, w) * 1e9);
  }
  return {{"reflections", {ReflectionJson(a.first), ReflectionJson(a.second)}},
          {"phase_difference_rad", a.phase_difference_rad},
          {"contact", FringeStateName(a.rule.contact)},
          {"visibility", a.rule.visibility},
          {"minimum_offset", a.rule.minimum_offset},
          {"contact_intensity", a.rule.contact_intensity},
          {"max_intensity", a.rule.max_intensity},
          {"min_intensity", a.rule.min_intensity},
          {"minimum_gaps_nm", gaps_nm},
          {"minimum_gaps_u_nm", gaps_u_nm}};
}

nlohmann::json ResultJson(const LayersOptions& o, const LayersResult& r,
                          const std::string& config) {
  nlohmann::json settings = {
      {"upper_index", o.stack.upper_index},
      {"gap_index", o.stack.gap_index},
      {"lower_index", o.stack.lower_index},
      {"wavelength_nm", o.wavelength.value.nm()},
      {"wavelength_u_nm", o.wavelength.uncertainty.nm()},
      {"wavelength_source", o.wavelength.source_name},
      {"wavelength_citation", o.wavelength.citation},
      {"minima", o.minimum_count},
      {"incidence", "normal"},
      {"config",
       config.empty() ? nlohmann::json(nullptr) : nlohmann::json(config)}};
  const nlohmann::json interfaces =
      nlohmann::json::array({{{"where", "upper -> gap"},
                              {"amplitude_r", r.r_upper},
                              {"amplitude_t", r.t_upper},
                              {"reflectance", r.reflectance_upper}},
                             {{"where", "gap -> lower"},
                              {"amplitude_r", r.r_lower},
                              {"amplitude_t", r.t_lower},
                              {"reflectance", r.reflectance_lower}}});
  return {{"tool", ToolJson()},
          {"status", StatusJson(r.status, r.messages)},
          {"settings", settings},
          {"interfaces", interfaces},
          {"contact_reflected", FringeStateName(r.reflected.rule.contact)},
          {"contact_transmitted", FringeStateName(r.transmitted.rule.contact)},
          {"visibility_reflected", r.reflected.rule.visibility},
          {"visibility_transmitted", r.transmitted.rule.visibility},
          {"reflected", ViewJson(r.reflected, o.wavelength)},
          {"transmitted", ViewJson(r.transmitted, o.wavelength)}};
}

void PrintView(std::ostream& out, const ViewAnalysis& a,
               const LayersOptions& o) {
  out << ViewName(a.view) << " light\n";
  out << "  interfering reflections: " << a.first.where << " (r "
      << Signed(a.first.amplitude, 5) << ", phase "
      << PhaseWord(a.first.phase_rad) << "), " << a.second.where << " (r "
      << Signed(a.second.amplitude, 5) << ", phase "
      << PhaseWord(a.second.phase_rad) << ")\n";
  out << "  phase difference at contact: " << PhaseWord(a.phase_difference_rad)
      << "  ->  contact " << FringeStateName(a.rule.contact) << "\n";
  out << std::fixed << std::setprecision(4);
  out << "  visibility " << a.rule.visibility << "  (intensity max "
      << a.rule.max_intensity << ", min " << a.rule.min_intensity
      << ", at contact " << a.rule.contact_intensity << ")\n";
  out << "  minima at gap t_k = (k + " << std::setprecision(1)
      << a.rule.minimum_offset << ") lambda / (2 n_gap):";
  out << std::setprecision(2);
  for (double g : a.minimum_gaps_m) out << " " << g * 1e9;
  out << " nm (u from the wavelength: " << std::setprecision(4)
      << GapUncertainty(a.minimum_gaps_m.back(), o.wavelength) * 1e9
      << " nm at the last)\n";
  out.unsetf(std::ios::floatfield);
}

void PrintSummary(std::ostream& out, const LayersOptions& o,
                  const LayersResult& r) {
  out << "media (normal incidence): upper " << o.stack.upper_index << " | gap "
      << o.stack.gap_index << " | lower " << o.stack.lower_index << "\n";
  out << "wavelength " << o.wavelength.value.nm() << " nm";
  if (!o.wavelength.source_name.empty())
    out << " (" << o.wavelength.source_name << ")";
  out << ", u " << o.wavelength.uncertainty.nm()
      << " nm; indices taken as exact\n\n";
  out << "surface         r (amplitude)  t (amplitude)  R (intensity)\n"
      << std::fixed;
  out << "upper -> gap    " << std::setw(13) << Signed(r.r_upper, 5) << "  "
      << std::setw(13) << std::setprecision(5) << r.t_upper << "  "
      << std::setprecision(4) << 100.0 * r.reflectance_upper << " %\n";
  out << "gap -> lower    " << std::setw(13) << Signed(r.r_lower, 5) << "  "
      << std::setw(13) << std::setprecision(5) << r.t_lower << "  "
      << std::setprecision(4) << 100.0 * r.reflectance_lower << " %\n\n";
  out.unsetf(std::ios::floatfield);
  out << std::setprecision(6);
  PrintView(out, r.reflected, o);
  PrintView(out, r.transmitted, o);
  for (const std::string& m : r.messages) out << "warning: " << m << "\n";
}

int Run(const std::vector<std::string>& args) {
  LayersOptions options;
  std::string json_path;
  po::options_description desc("options");
  AddMediaOptions(desc, &options.stack);
  desc.add_options()(
      "wavelength",
      po::value<Wavelength>(&options.wavelength)
          ->default_value(options.wavelength, "mercury-e"),
      "test wavelength in air: a length with its unit (546.07nm) or a source "
      "name from config/sources.ini")(
      "minima",
      po::value<int>(&options.minimum_count)
          ->default_value(options.minimum_count),
      "how many intensity minima to list per view")(
      "json", po::value<std::string>(&json_path),
      "write the result as JSON to PATH ('-' for standard output)");
  po::variables_map vm;
  if (!ParseCommand("layers", "[OPTIONS]", args, desc, {}, &vm, std::cout))
    return kExitOk;
  const std::string problem = options.Check();
  if (!problem.empty()) throw InputError(problem);
  const LayersResult result = AnalyseLayers(options);
  const std::string config =
      vm.count("config") != 0U ? vm["config"].as<std::string>() : "";
  if (json_path != "-") PrintSummary(std::cout, options, result);
  if (!json_path.empty())
    WriteJson(json_path, ResultJson(options, result, config));
  return kExitOk;
}

const Registrar kRegistrar(
    {"layers",
     "phase-shift analysis of a media stack: reflectance, contact dark or "
     "bright, fringe visibility",
     &Run});

}  // namespace
}  // namespace figura::cli
