// A simulated lot for the inspect tests: convex parts in a concave -100 mm
// test plate (radii signed as seen from the gap), each photographed at
// 640 x 480 px with a known power in fringes over a 12 mm test diameter,
// rendered by the project's simulator (exact Airy response and sphere sags,
// sim/simulation.h) with a fixed seed per part.
#pragma once

#include <cmath>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>

#include "sim/simulation.h"

namespace figura::test {

// The job text shared by the lot tests. Tolerance 3/8(3): power within
// +-8 fringes, irregularity at most 3 fringes (ISO 10110-5; fringes at the
// test wavelength, one fringe = lambda/2 of surface).
inline std::string LotJobText(const std::string& extra = {}) {
  return "; invented lot for tests\n"
         "analysis = rings\n"
         "wavelength = 546.07nm\n"
         "pixel-pitch = 32um\n"
         "upper-index = 1.5168\n"
         "gap-index = 1.0\n"
         "lower-index = 1.5168\n"
         "reference-radius = -100mm\n"
         "contact = centre\n"
         "test-diameter = 12mm\n"
         "tolerance = 3/8(3)\n"
         "lot = T-0042\n"
         "operator = ZQ\n" +
         extra;
}

inline constexpr double kPlateRadiusM = -0.1;
inline constexpr double kTestRadiusM = 6e-3;
inline constexpr double kWavelengthM = 546.07e-9;

// The convex part radius whose gap against the -100 mm plate opens by
// `fringes` half-waves from the centre to the 12 mm diameter: from the
// exact sags s = R - sqrt(R^2 - a^2) (references.md, test plates),
// s(R_part) = s(100 mm) + N lambda / 2, R = (a^2 + s^2) / (2 s).
inline double PartRadiusFor(double fringes) {
  const double a = kTestRadiusM;
  const double r = -kPlateRadiusM;
  const double s_plate = r - std::sqrt(r * r - a * a);
  const double s = s_plate + fringes * kWavelengthM / 2.0;
  return (a * a + s * s) / (2.0 * s);
}

// Renders and writes one part photo (16-bit TIFF) and its truth file;
// returns the truth's power in fringes. A part flatter than the plate's
// match (fringes < 0) touches at the edge: pass Contact::kEdge for it.
inline double WriteLotPhoto(const std::filesystem::path& path, double fringes,
                            std::uint64_t seed,
                            Contact contact = Contact::kCentre) {
  SimulationOptions o;
  o.gap.part_radius_m = PartRadiusFor(fringes);
  o.gap.plate_radius_m = kPlateRadiusM;
  o.gap.contact = contact;
  o.wavelength = Wavelength{Length::Metres(kWavelengthM), {}, {}, {}, {}};
  o.aperture_diameter_m = 2.0 * kTestRadiusM;
  o.camera.width_px = 640;
  o.camera.height_px = 480;
  o.camera.pixel_pitch_m = 32e-6;
  o.camera.blur_sigma_px = 0.6;
  o.camera.falloff = 0.15;
  o.camera.background = 0.02;
  o.camera.bit_depth = 16;
  o.seed = seed;
  const SimulationResult r = Simulate(o);
  WriteSimulation(r, path, o.camera);
  return r.truth["truth"]["power_fringes"].get<double>();
}

// A file that is not an image (an unreadable photo in a lot).
inline void WriteJunkPhoto(const std::filesystem::path& path) {
  std::ofstream(path) << "this is not a photograph\n";
}

}  // namespace figura::test
