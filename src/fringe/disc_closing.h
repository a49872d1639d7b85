// Grey-level morphological closing with a disc, computed from the disc's
// row spans (exactly what cv::morphologyEx gives with the same element).
#pragma once

#include <opencv2/core.hpp>

namespace figura {

// The closing (dilation, then erosion) of a CV_32FC1 image with the
// elliptic structuring element cv::getStructuringElement(MORPH_ELLIPSE,
// (2 radius + 1) x (2 radius + 1)), pixels outside the image ignored (as
// cv::morphologyEx with its default border). Equal to cv::morphologyEx
// (MORPH_CLOSE) value for value; faster for large discs because the disc is
// taken row by row: a horizontal running max (min) of each half-width the
// disc's rows need, widened one pixel at a time, then the max (min) over the
// disc's rows [practice: decomposition of a structuring element into line
// segments, as in Soille, Morphological Image Analysis, 2nd ed., ch. 3 —
// from memory]. radius >= 1 (pixels).
cv::Mat CloseWithDisc(const cv::Mat& image, int radius);

}  // namespace figura
