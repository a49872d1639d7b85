// The ring-fit plot: r^2 (mm^2) of every fringe point against its order,
// with the fitted line, and a residual panel (radial residual in px, or um
// for measured diameters) below. SVG or PNG by the file extension (cairo).
#pragma once

#include <filesystem>

#include "fringe/ring_analysis.h"

namespace figura {

// Writes the plot atomically to `path` (.svg or .png, 800 x 600 units).
// Throws InputError for another extension, OutputError when writing fails.
// Needs a result with a fit (status not kError): throws InputError otherwise.
void WriteRingPlot(const std::filesystem::path& path, const RingsResult& result,
                   const RingFitOptions& options);

}  // namespace figura
