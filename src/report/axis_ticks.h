// Axis helpers shared by the plots (ring plot, surface picture): round tick
// values and their labels.
#pragma once

#include <string>
#include <vector>

namespace figura {

// Round tick values (1, 2 or 5 times a power of ten apart, about five of
// them) within [lo, hi]; empty for an empty or non-finite range
// [practice: the 1-2-5 tick rule of plotting programs].
std::vector<double> NiceTicks(double lo, double hi);

// A tick label: %.4g.
std::string TickLabel(double v);

}  // namespace figura
