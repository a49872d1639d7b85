// A loaded image that cannot be a fringe photograph at all: too small, no
// finite pixel, every pixel saturated, or one value everywhere. Checked by
// the commands right after loading, so that these give the same one-line
// reason from `rings`, `map` and `inspect` instead of a later stage's guess.
#pragma once

#include <string>

#include "io/image.h"

namespace figura {

// Smallest width and height (pixels) of an image worth analysing.
inline constexpr int kMinPhotoSide = 16;

// An empty string for an image that may hold fringes, otherwise the reason
// (without the file name): "image too small to analyse (W x H pixels; at
// least 16 x 16)", "no finite pixel values (every pixel is not-a-number or
// infinite)", "every pixel is saturated (at full scale S): reduce the
// exposure", "the image is uniform (every pixel V): no fringes". Saturation
// means the integer full scale (255 or 65535); float images are never called
// saturated.
std::string PhotoProblem(const Image& image);

// Throws InputError "<path>: <PhotoProblem>" when PhotoProblem is not empty.
void CheckPhoto(const Image& image);

}  // namespace figura
