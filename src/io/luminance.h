// Reducing colour to one grey channel with the Rec. 601 luma weights
// (ITU-R BT.601-7, section 2.5.1: E'Y = 0.299 E'R + 0.587 E'G + 0.114 E'B),
// applied to the stored sample values without any gamma change.
#pragma once

#include <opencv2/core.hpp>

namespace figura {

// Rec. 601 luma weights (ITU-R BT.601-7, 2.5.1).
inline constexpr double kRec601Red = 0.299;
inline constexpr double kRec601Green = 0.587;
inline constexpr double kRec601Blue = 0.114;

// One grey CV_32FC1 channel from a CV_8U, CV_16U or CV_32F image with 1
// (copied), 2 (grey + alpha: alpha dropped), 3 (BGR, OpenCV order) or 4
// (BGRA: alpha dropped) channels, in the input's own scale.
cv::Mat LuminanceFromBgr(const cv::Mat& image);

}  // namespace figura
