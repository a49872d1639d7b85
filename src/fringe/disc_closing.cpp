#include "fringe/disc_closing.h"

#include <algorithm>
#include <cassert>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <vector>

namespace figura {
namespace {

// Half-width of the structuring element's row dy + radius (its nonzero
// pixels form one span centred on the anchor in every row).
std::vector<int> RowHalfWidths(int radius) {
  const cv::Mat disc = cv::getStructuringElement(
      cv::MORPH_ELLIPSE, cv::Size(2 * radius + 1, 2 * radius + 1));
  std::vector<int> half(static_cast<std::size_t>(2 * radius + 1), -1);
  for (int r = 0; r < disc.rows; ++r) {
    const auto* row = disc.ptr<std::uint8_t>(r);
    int first = -1;
    int last = -1;
    for (int c = 0; c < disc.cols; ++c) {
      if (row[c] == 0) continue;
      if (first < 0) first = c;
      last = c;
    }
    // One centred span per row (a row may be empty: -1).
    assert(first < 0 || first + last == 2 * radius);
    half[static_cast<std::size_t>(r)] = first < 0 ? -1 : (last - first) / 2;
  }
  return half;
}

// Dilation (Max) or erosion (Min) of `src` by the element with the given
// row half-widths; pixels outside the image are ignored.
template <bool Max>
cv::Mat Morph(const cv::Mat& src, const std::vector<int>& half, int radius) {
  const int rows = src.rows;
  const int cols = src.cols;
  const int widest = *std::max_element(half.begin(), half.end());
  const auto pick = [](float a, float b) {
    return Max ? std::max(a, b) : std::min(a, b);
  };
  cv::Mat out(rows, cols, CV_32FC1);
  // Few stripes: each recomputes the 2 radius source rows around it.
  const int stripes = std::clamp(cv::getNumThreads(), 1, 8);
  cv::parallel_for_(
      cv::Range(0, rows),
      [&](const cv::Range& range) {
        // Source rows [lo, hi) feed output rows [range.start, range.end).
        const int lo = std::max(0, range.start - radius);
        const int hi = std::min(rows, range.end + radius);
        const auto n = static_cast<std::size_t>(hi - lo);
        const auto width = static_cast<std::size_t>(cols);
        // lines + (w n + y - lo) cols: the running extreme of row y over
        // [x - w, x + w] (clipped to the image), w = 0..widest.
        const std::size_t plane = n * width;
        std::vector<float> lines((static_cast<std::size_t>(widest) + 1) *
                                 plane);
        for (int y = lo; y < hi; ++y) {
          const float* s = src.ptr<float>(y);
          std::copy(s, s + cols,
                    lines.data() + static_cast<std::size_t>(y - lo) * width);
        }
        for (int w = 1; w <= widest; ++w) {
          for (std::size_t r = 0; r < n; ++r) {
            const float* p = lines.data() +
                             (static_cast<std::size_t>(w) - 1) * plane +
                             r * width;
            float* q =
                lines.data() + static_cast<std::size_t>(w) * plane + r * width;
            // [x - w, x + w] is the union of the windows of half-width w - 1
            // about x - 1, x and x + 1 (clipped at the image ends).
            if (cols == 1) {
              q[0] = p[0];
              continue;
            }
            q[0] = pick(p[0], p[1]);
            for (int x = 1; x + 1 < cols; ++x) {
              q[x] = pick(pick(p[x - 1], p[x + 1]), p[x]);
            }
            q[cols - 1] = pick(p[cols - 2], p[cols - 1]);
          }
        }
        for (int y = range.start; y < range.end; ++y) {
          float* o = out.ptr<float>(y);
          bool first = true;
          for (int k = 0; k <= 2 * radius; ++k) {
            const int w = half[static_cast<std::size_t>(k)];
            const int sy = y + k - radius;
            if (w < 0 || sy < 0 || sy >= rows) continue;
            const float* l = lines.data() +
                             static_cast<std::size_t>(w) * plane +
                             static_cast<std::size_t>(sy - lo) * width;
            if (first) {
              std::copy(l, l + cols, o);
              first = false;
            } else {
              for (int x = 0; x < cols; ++x) o[x] = pick(o[x], l[x]);
            }
          }
        }
      },
      stripes);
  return out;
}

}  // namespace

cv::Mat CloseWithDisc(const cv::Mat& image, int radius) {
  assert(image.type() == CV_32FC1 && radius >= 1 && !image.empty());
  const std::vector<int> half = RowHalfWidths(radius);
  return Morph<false>(Morph<true>(image, half, radius), half, radius);
}

}  // namespace figura
