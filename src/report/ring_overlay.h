// The ring-analysis overlay: the photograph with the evaluated aperture,
// the fitted fringe centre, every located fringe point coloured by its
// order (rejected points marked), and the fitted fringe ellipses.
#pragma once

#include <filesystem>
#include <opencv2/core.hpp>

#include "fringe/ring_analysis.h"
#include "io/image.h"

namespace figura {

// Draws the overlay into an 8-bit BGR copy of the photograph (its grey
// levels stretched between the 0.5 % and 99.5 % points).
cv::Mat RenderRingOverlay(const Image& image, const RingsResult& result);

// The colour (BGR) of a fringe order in the overlay: a ramp of our own from
// deep teal through green-yellow to orange-red over one cycle of 8 orders,
// so that neighbouring rings differ and any ring is easy to follow.
cv::Scalar OrderColour(double order);

// Renders and writes the overlay (PNG, or any format io/image_writer.h
// takes) atomically. Throws OutputError naming the file.
void WriteRingOverlay(const std::filesystem::path& path, const Image& image,
                      const RingsResult& result);

}  // namespace figura
