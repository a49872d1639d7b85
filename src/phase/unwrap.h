// Two-dimensional phase unwrapping by reliability-sorted edge merging
// (M. A. Herraez, D. R. Burton, M. J. Lalor, M. A. Gdeisat, "Fast
// two-dimensional phase-unwrapping algorithm based on sorting by
// reliability following a noncontinuous path", Appl. Opt. 41(35),
// 7437-7444, 2002).
#pragma once

#include <opencv2/core.hpp>

namespace figura {

// Unwrapped phase and where it may be wrong.
struct UnwrapResult {
  // CV_32FC1, radians, NaN outside the mask. Each region is unwrapped
  // independently; its constant is chosen so that its valid-pixel mean lies
  // in [-pi, pi) (the mean of a wrapped input region is not preserved).
  cv::Mat phase;
  // CV_8UC1, 255 where the reliability is low: a wrapped second difference
  // (horizontal, vertical or diagonal) larger than pi/2 in magnitude, or a
  // residue (non-zero wrapped circulation around a 2x2 loop) touching the
  // pixel. 0 elsewhere and outside the mask.
  cv::Mat unreliable;
  // Fraction of the mask's pixels marked unreliable.
  double unreliable_fraction = 0.0;
  // Number of separately unwrapped pieces: the 4-connected components of
  // the valid pixels (only horizontal and vertical neighbours are joined).
  // 0 for an empty mask.
  int regions = 0;
};

// Unwraps `wrapped` (CV_32FC1 radians, any range; NaN is treated as
// outside) over `mask` (CV_8UC1, non-zero = valid; an empty Mat means the
// whole image). Reliability of a pixel is 1 / D with D the root sum of
// squares of its four wrapped second differences (Herraez 2002, eq. 1-3);
// pixels on the mask border (a neighbour outside) have reliability 0 and are
// joined last. Edges (horizontal and vertical neighbour pairs) are
// processed in order of decreasing summed reliability (a bucket sort on the
// quantised reliability, stable within a bucket) and groups are merged with
// a union-find carrying 2 pi multiples. Linear in the pixel count apart
// from the near-constant union-find.
// Throws InputError on type or size mismatch.
UnwrapResult UnwrapPhase(const cv::Mat& wrapped, const cv::Mat& mask);

// Wraps a phase into [-pi, pi).
double WrapPhase(double phase);

}  // namespace figura
