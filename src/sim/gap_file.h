// Gap files: the simulator's INI description of a gap, its light and its
// camera. Every length carries a unit (nm, um, mm, cm, m); a bare number
// where a length is expected is an error. Keys (defaults in brackets):
//
// [gap]
//   part-radius     part radius, signed as seen from the gap (+ convex), or
//                   "flat"  [100mm]
//   plate-radius    test plate / reference radius, signed as seen from the
//                   gap (a plate fitting a +100mm part is -100mm), or "flat"
//                   [flat]
//   contact         centre | edge: where the spheres touch  [centre]
//   contact-offset  uniform extra gap (dust, spacer), >= 0  [0nm]
//   contact-x       contact point from the aperture centre, x right  [0mm]
//   contact-y       same, y up  [0mm]
//   tilt-x          wedge: gap change from the centre to the +x edge, a
//                   length, or a slope with rad/mrad/urad  [0nm]
//   tilt-y          same towards the +y edge  [0nm]
// [zernike]
//   zJ              coefficient of ISO 24157 term j = J in gap, a length,
//                   e.g. "z5 = 120nm" (RMS-normalised; surface/zernike.h);
//                   J <= 90 (radial order <= 12)
// [media]
//   upper-index     index of the medium light comes from  [1.5168]
//   gap-index       index in the gap  [1.0]
//   lower-index     index below the gap  [1.5168]
//   view            reflected | transmitted  [reflected]
// [light]
//   wavelength      a length, or a source name from config/sources.ini (a
//                   source with several lines renders them all)  [mercury-e]
//   bandwidth       Gaussian FWHM of every line  [0nm]
// [aperture]
//   diameter        clear aperture, a length or pixels ("640px")  [20mm]
//   centre-x-px     aperture centre, pixels (x right, pixel centres at
//                   integers)  [image centre]
//   centre-y-px     same, y down  [image centre]
// [camera]
//   width-px, height-px  image size  [1024, 768]
//   pixel-pitch     object-side pixel size, a length  [25um]
//   blur-sigma-px   Gaussian blur sigma, pixels  [0]
//   falloff         relative illumination drop at the aperture edge  [0]
//   background      stray light, fraction of full scale  [0]
//   surround        level outside the aperture, fraction of full scale
//                   [0.03]
//   exposure        level of the brightest fringe  [0.8]
//   full-well       electrons at full scale; 0 = no noise  [20000]
//   read-noise      electrons RMS  [5]
//   gamma           stored = level^gamma  [1]
//   bit-depth       8, 16 or 32 (float TIFF)  [16]
//   jpeg-quality    1..100 for .jpg output  [95]
//   seed            noise seed (recorded in the truth file)  [1]
#pragma once

#include <filesystem>
#include <string>

#include "core/ini.h"
#include "sim/simulation.h"

namespace figura {

// Parses a gap description and validates it (SimulationOptions::Check).
// Throws InputError with one line "file:line: [section] key: problem" for an
// unknown section or key, a bad value, a missing unit, or a value out of
// range.
SimulationOptions ParseGapFile(const IniFile& ini);

// Reads and parses a gap file. Throws InputError naming the file.
SimulationOptions LoadGapFile(const std::filesystem::path& path);

}  // namespace figura
