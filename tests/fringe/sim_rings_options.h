// The ring-analysis settings a user would type for a photo made by the
// simulator: its wavelength (taken exact), pixel pitch (exact), media stack
// and view. Shared by the accuracy and robustness tests of the ring
// analysis.
#pragma once

#include "fringe/ring_analysis.h"
#include "sim/simulation.h"

namespace figura::test {

// Mercury e line in air (../shared/references.md).
inline constexpr double kMercuryEMetres = 546.074e-9;

// Options for AnalyseRings matching `sim`, lit at `wavelength_m`.
inline RingsOptions RingsOptionsFor(const SimulationOptions& sim,
                                    double wavelength_m = kMercuryEMetres) {
  RingsOptions options;
  options.fit.wavelength =
      Wavelength{Length::Metres(wavelength_m), Length::Metres(0.0), {}, {}, {}};
  options.fit.pixel_pitch = Length::Metres(sim.camera.pixel_pitch_m);
  options.fit.pixel_pitch_u = Length::Metres(0.0);
  options.fit.stack = sim.stack;
  options.fit.view = sim.view;
  return options;
}

}  // namespace figura::test
