#include "optics/layers.h"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

namespace figura {

namespace {

// Below this visibility in both views, fringes are hard to see on a camera
// image [practice].
constexpr double kLowVisibility = 0.05;
// Upper bound on the number of minima listed.
constexpr int kMaxMinimumCount = 1000;

Reflection MakeReflection(const char* where, double n_from, double n_to) {
  Reflection r;
  r.where = where;
  r.n_from = n_from;
  r.n_to = n_to;
  r.amplitude = FresnelR(n_from, n_to);
  r.phase_rad = ReflectionPhase(n_from, n_to);
  return r;
}

ViewAnalysis AnalyseView(const LayersOptions& options, View view) {
  const MediaStack& s = options.stack;
  ViewAnalysis a;
  a.view = view;
  if (view == View::kReflected) {
    a.first = MakeReflection("upper -> gap", s.upper_index, s.gap_index);
    a.second = MakeReflection("gap -> lower", s.gap_index, s.lower_index);
  } else {
    a.first = MakeReflection("gap -> lower", s.gap_index, s.lower_index);
    a.second = MakeReflection("gap -> upper", s.gap_index, s.upper_index);
  }
  // In reflection the beams differ by the two phases' difference; in
  // transmission the twice-reflected beam picks up both phases against the
  // direct beam. Either way the result is 0 or pi modulo 2 pi.
  const double raw = view == View::kReflected
                         ? a.first.phase_rad - a.second.phase_rad
                         : a.first.phase_rad + a.second.phase_rad;
  a.phase_difference_rad =
      std::abs(std::remainder(raw, 2.0 * std::numbers::pi));
  a.rule = RuleFor(s, view);
  const double lambda = options.wavelength.value.metres;
  for (int k = 0; k < options.minimum_count; ++k) {
    a.minimum_gaps_m.push_back(MinimumGap(s, view, k, lambda));
  }
  return a;
}

}  // namespace

std::string LayersOptions::Check() const {
  std::string message = stack.Check();
  if (!message.empty()) return message;
  const double lambda = wavelength.value.metres;
  if (!std::isfinite(lambda) || lambda <= 0.0) {
    return "--wavelength: must be a positive length";
  }
  if (minimum_count < 1 || minimum_count > kMaxMinimumCount) {
    std::ostringstream out;
    out << "--minima: " << minimum_count << " is outside 1 .. "
        << kMaxMinimumCount;
    return out.str();
  }
  return {};
}

LayersResult AnalyseLayers(const LayersOptions& options) {
  const std::string problem = options.Check();
  if (!problem.empty()) throw InputError(problem);
  const MediaStack& s = options.stack;
  LayersResult result;
  result.r_upper = FresnelR(s.upper_index, s.gap_index);
  result.t_upper = FresnelT(s.upper_index, s.gap_index);
  result.r_lower = FresnelR(s.gap_index, s.lower_index);
  result.t_lower = FresnelT(s.gap_index, s.lower_index);
  result.reflectance_upper = FresnelReflectance(s.upper_index, s.gap_index);
  result.reflectance_lower = FresnelReflectance(s.gap_index, s.lower_index);
  result.reflected = AnalyseView(options, View::kReflected);
  result.transmitted = AnalyseView(options, View::kTransmitted);
  const double best = std::max(result.reflected.rule.visibility,
                               result.transmitted.rule.visibility);
  if (best < kLowVisibility) {
    std::ostringstream out;
    out << "fringe visibility is " << best << " at best (below "
        << kLowVisibility
        << "): the gap nearly matches its neighbours and fringes will be hard "
           "to see";
    result.status = Status::kWarning;
    result.messages.push_back(out.str());
  }
  return result;
}

}  // namespace figura
