// The phase-shift analysis of a media stack (`figura layers`): Fresnel
// coefficients at both gap surfaces, the phase change at each reflection,
// and the fringe picture (contact dark or bright, visibility, minimum gaps)
// in reflected and transmitted light.
#pragma once

#include <string>
#include <vector>

#include "core/error.h"
#include "core/light_source.h"
#include "optics/media.h"

namespace figura {

// Inputs of AnalyseLayers.
struct LayersOptions {
  MediaStack stack;
  // Test wavelength in air; defaults to the mercury e line
  // (config/sources.ini).
  Wavelength wavelength =
      ResolveWavelength("mercury-e", SourceTable::Default());
  // How many intensity minima (k = 0 .. count-1) to list per view.
  int minimum_count = 5;

  // Empty when usable, otherwise a readable reason naming the option.
  [[nodiscard]] std::string Check() const;
};

// One reflection of the two-beam picture: where it happens, its Fresnel
// amplitude coefficient and its phase change (Hecht, Optics, sec. 4.6).
struct Reflection {
  std::string where;  // e.g. "upper -> gap"
  double n_from = 1.0;
  double n_to = 1.0;
  double amplitude = 0.0;  // r = (n_from - n_to)/(n_from + n_to)
  double phase_rad = 0.0;  // pi or 0
};

// The fringe picture in one view.
struct ViewAnalysis {
  View view = View::kReflected;
  // The two reflections whose beams interfere: in reflected light, upper ->
  // gap and gap -> lower; in transmitted light the beam that crossed the gap
  // twice more, reflected at gap -> lower and gap -> upper.
  Reflection first;
  Reflection second;
  // Phase difference (rad, 0 or pi) between the interfering beams from the
  // reflections alone, i.e. at zero gap.
  double phase_difference_rad = 0.0;
  FringeRule rule;
  std::vector<double> minimum_gaps_m;  // t_k, k = 0 .. minimum_count-1
};

// Result of AnalyseLayers.
struct LayersResult {
  Status status = Status::kOk;
  std::vector<std::string> messages;
  // Fresnel amplitude coefficients at the two gap surfaces, light going
  // down: r12, t12 (upper -> gap) and r23, t23 (gap -> lower).
  double r_upper = 0.0;
  double t_upper = 0.0;
  double r_lower = 0.0;
  double t_lower = 0.0;
  // Intensity reflectances of the two surfaces alone.
  double reflectance_upper = 0.0;
  double reflectance_lower = 0.0;
  ViewAnalysis reflected;
  ViewAnalysis transmitted;
};

// Runs the analysis. Throws InputError with options.Check()'s message when
// the options are not usable.
LayersResult AnalyseLayers(const LayersOptions& options);

}  // namespace figura
