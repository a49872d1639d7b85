#include "phase/unwrap.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <string>
#include <vector>

#include "core/error.h"

namespace figura {

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr float kPiF = std::numbers::pi_v<float>;
constexpr float kTwoPiF = 2.0F * std::numbers::pi_v<float>;

// Wraps a float difference into [-pi, pi).
inline float Wrap(float d) {
  return d - kTwoPiF * std::floor((d + kPiF) / kTwoPiF);
}

// Number of reliability buckets (the sort key is quantised on a log scale).
constexpr int kBuckets = 1 << 14;
// Key range covered by the log-scale buckets: summed squared second
// differences from kKeyMin (and below: bucket 0) to kKeyMax (and above: the
// last finite bucket). Border edges go to an extra bucket after them.
constexpr double kKeyMin = 1e-10;
constexpr double kKeyMax = 1e3;

// Union-find over pixels with integer 2 pi offsets to the parent.
class OffsetForest {
 public:
  explicit OffsetForest(std::size_t n)
      : parent_(n), offset_(n, 0), size_(n, 1) {
    for (std::size_t i = 0; i < n; ++i) parent_[i] = static_cast<int32_t>(i);
  }

  // Root of p; `total` receives the 2 pi multiple of p relative to the root.
  int32_t Find(int32_t p, int32_t& total) {
    // First pass: find the root and the total offset.
    int32_t root = p;
    int32_t sum = 0;
    while (parent_[Idx(root)] != root) {
      sum += offset_[Idx(root)];
      root = parent_[Idx(root)];
    }
    total = sum;
    // Second pass: point every node on the path at the root.
    int32_t q = p;
    int32_t remaining = sum;
    while (parent_[Idx(q)] != root && q != root) {
      const int32_t next = parent_[Idx(q)];
      const int32_t own = offset_[Idx(q)];
      parent_[Idx(q)] = root;
      offset_[Idx(q)] = remaining;
      remaining -= own;
      q = next;
    }
    return root;
  }

  // Joins the groups of roots ra and rb so that group b moves by `delta`
  // (2 pi multiples) relative to group a.
  void Join(int32_t ra, int32_t rb, int32_t delta) {
    if (size_[Idx(ra)] >= size_[Idx(rb)]) {
      parent_[Idx(rb)] = ra;
      offset_[Idx(rb)] = delta;
      size_[Idx(ra)] += size_[Idx(rb)];
    } else {
      parent_[Idx(ra)] = rb;
      offset_[Idx(ra)] = -delta;
      size_[Idx(rb)] += size_[Idx(ra)];
    }
  }

 private:
  static std::size_t Idx(int32_t i) { return static_cast<std::size_t>(i); }
  std::vector<int32_t> parent_;
  std::vector<int32_t> offset_;
  std::vector<int32_t> size_;
};

}  // namespace

double WrapPhase(double phase) {
  return phase - kTwoPi * std::floor((phase + std::numbers::pi) / kTwoPi);
}

UnwrapResult UnwrapPhase(const cv::Mat& wrapped, const cv::Mat& mask) {
  if (wrapped.empty() || wrapped.type() != CV_32FC1) {
    throw InputError(
        "phase unwrapping: the wrapped phase must be a non-empty "
        "32-bit float image");
  }
  if (!mask.empty() &&
      (mask.type() != CV_8UC1 || mask.size() != wrapped.size())) {
    throw InputError(
        "phase unwrapping: the mask must be 8-bit and the size "
        "of the phase image");
  }
  const int rows = wrapped.rows;
  const int cols = wrapped.cols;
  const std::size_t n =
      static_cast<std::size_t>(rows) * static_cast<std::size_t>(cols);

  // Valid pixels: inside the mask and finite; the wrapped values in
  // [-pi, pi).
  cv::Mat in(rows, cols, CV_8UC1);
  cv::Mat w(rows, cols, CV_32FC1);
  cv::parallel_for_(cv::Range(0, rows), [&](const cv::Range& range) {
    for (int y = range.start; y < range.end; ++y) {
      const float* src = wrapped.ptr<float>(y);
      const uint8_t* m = mask.empty() ? nullptr : mask.ptr<uint8_t>(y);
      uint8_t* v = in.ptr<uint8_t>(y);
      float* dst = w.ptr<float>(y);
      for (int x = 0; x < cols; ++x) {
        const bool ok = std::isfinite(src[x]) && (m == nullptr || m[x] != 0);
        v[x] = ok ? 255 : 0;
        dst[x] = ok ? Wrap(src[x]) : 0.0F;
      }
    }
  });

  // Per-pixel summed squared second differences (Herraez 2002, eq. 1-3;
  // the square root and the inverse do not change the order), infinity
  // where a neighbour of the 3x3 block is missing. Unreliable flags from
  // large second differences and residues.
  cv::Mat key(rows, cols, CV_32FC1,
              cv::Scalar(std::numeric_limits<double>::infinity()));
  cv::Mat unreliable = cv::Mat::zeros(rows, cols, CV_8UC1);
  constexpr float kLargeSecond = 0.5F * kPiF;
  cv::parallel_for_(
      cv::Range(1, std::max(1, rows - 1)), [&](const cv::Range& range) {
        for (int y = range.start; y < range.end; ++y) {
          const float* up = w.ptr<float>(y - 1);
          const float* mid = w.ptr<float>(y);
          const float* dn = w.ptr<float>(y + 1);
          const uint8_t* vu = in.ptr<uint8_t>(y - 1);
          const uint8_t* vm = in.ptr<uint8_t>(y);
          const uint8_t* vd = in.ptr<uint8_t>(y + 1);
          float* k = key.ptr<float>(y);
          uint8_t* bad = unreliable.ptr<uint8_t>(y);
          for (int x = 1; x < cols - 1; ++x) {
            if ((vu[x - 1] & vu[x] & vu[x + 1] & vm[x - 1] & vm[x] & vm[x + 1] &
                 vd[x - 1] & vd[x] & vd[x + 1]) == 0) {
              continue;
            }
            const float c = mid[x];
            const float h = Wrap(mid[x - 1] - c) - Wrap(c - mid[x + 1]);
            const float v = Wrap(up[x] - c) - Wrap(c - dn[x]);
            const float d1 = Wrap(up[x - 1] - c) - Wrap(c - dn[x + 1]);
            const float d2 = Wrap(up[x + 1] - c) - Wrap(c - dn[x - 1]);
            k[x] = h * h + v * v + d1 * d1 + d2 * d2;
            if (std::fabs(h) > kLargeSecond || std::fabs(v) > kLargeSecond ||
                std::fabs(d1) > kLargeSecond || std::fabs(d2) > kLargeSecond) {
              bad[x] = 255;
            }
          }
        }
      });
  // Residues: non-zero wrapped circulation around a 2x2 loop of valid
  // pixels marks its four pixels.
  for (int y = 0; y + 1 < rows; ++y) {
    const float* a = w.ptr<float>(y);
    const float* b = w.ptr<float>(y + 1);
    const uint8_t* va = in.ptr<uint8_t>(y);
    const uint8_t* vb = in.ptr<uint8_t>(y + 1);
    uint8_t* ba = unreliable.ptr<uint8_t>(y);
    uint8_t* bb = unreliable.ptr<uint8_t>(y + 1);
    for (int x = 0; x + 1 < cols; ++x) {
      if ((va[x] & va[x + 1] & vb[x] & vb[x + 1]) == 0) continue;
      const float s = Wrap(a[x + 1] - a[x]) + Wrap(b[x + 1] - a[x + 1]) +
                      Wrap(b[x] - b[x + 1]) + Wrap(a[x] - b[x]);
      if (std::fabs(s) > kPiF) {
        ba[x] = ba[x + 1] = bb[x] = bb[x + 1] = 255;
      }
    }
  }

  // Edges: index 2 p (p to its right neighbour) and 2 p + 1 (p to the one
  // below), both pixels valid. Bucket key from the summed pixel keys.
  const double log_min = std::log(kKeyMin);
  const double bucket_scale = (kBuckets - 2) / (std::log(kKeyMax) - log_min);
  auto bucket_of = [&](float ka, float kb) -> int {
    const float s = ka + kb;
    if (!std::isfinite(s)) return kBuckets - 1;
    if (static_cast<double>(s) <= kKeyMin) return 0;
    const double b =
        1.0 + (std::log(static_cast<double>(s)) - log_min) * bucket_scale;
    return std::min(kBuckets - 2, static_cast<int>(b));
  };
  constexpr uint16_t kNoEdge = 0xFFFF;
  std::vector<uint16_t> edge_bucket(2 * n, kNoEdge);
  cv::parallel_for_(cv::Range(0, rows), [&](const cv::Range& range) {
    for (int y = range.start; y < range.end; ++y) {
      const uint8_t* v = in.ptr<uint8_t>(y);
      const uint8_t* vd = y + 1 < rows ? in.ptr<uint8_t>(y + 1) : nullptr;
      const float* k = key.ptr<float>(y);
      const float* kd = y + 1 < rows ? key.ptr<float>(y + 1) : nullptr;
      const std::size_t base =
          static_cast<std::size_t>(y) * static_cast<std::size_t>(cols);
      for (int x = 0; x < cols; ++x) {
        if (v[x] == 0) continue;
        const std::size_t e = 2 * (base + static_cast<std::size_t>(x));
        if (x + 1 < cols && v[x + 1] != 0) {
          edge_bucket[e] = static_cast<uint16_t>(bucket_of(k[x], k[x + 1]));
        }
        if (vd != nullptr && vd[x] != 0) {
          edge_bucket[e + 1] = static_cast<uint16_t>(bucket_of(k[x], kd[x]));
        }
      }
    }
  });
  // Counting sort (stable).
  std::vector<std::size_t> start(kBuckets + 1, 0);
  for (std::size_t e = 0; e < 2 * n; ++e) {
    if (edge_bucket[e] != kNoEdge) ++start[edge_bucket[e] + 1U];
  }
  for (int b = 0; b < kBuckets; ++b)
    start[static_cast<std::size_t>(b) + 1] +=
        start[static_cast<std::size_t>(b)];
  const std::size_t edge_count = start[kBuckets];
  std::vector<uint32_t> order(edge_count);
  {
    std::vector<std::size_t> next(start.begin(), start.end() - 1);
    for (std::size_t e = 0; e < 2 * n; ++e) {
      if (edge_bucket[e] != kNoEdge)
        order[next[edge_bucket[e]]++] = static_cast<uint32_t>(e);
    }
  }
  edge_bucket = {};

  // Merge groups along the sorted edges.
  OffsetForest forest(n);
  const float* wp = w.ptr<float>(0);
  assert(w.isContinuous());
  for (const uint32_t e : order) {
    const auto a = static_cast<int32_t>(e >> 1U);
    const int32_t b = (e & 1U) != 0 ? a + cols : a + 1;
    int32_t oa = 0;
    int32_t ob = 0;
    const int32_t ra = forest.Find(a, oa);
    const int32_t rb = forest.Find(b, ob);
    if (ra == rb) continue;
    const float d = wp[b] - wp[a];
    const auto turns =
        static_cast<int32_t>(std::lround(static_cast<double>(d) / kTwoPi));
    // unwrapped(b) - unwrapped(a) = d - 2 pi turns.
    const int32_t ob_new = oa - turns;
    forest.Join(ra, rb, ob_new - ob);
  }

  // Final phases, per-region constant, region count.
  UnwrapResult result;
  result.phase.create(rows, cols, CV_32FC1);
  // Pass 1: compact region ids by root, region means.
  std::vector<int32_t> region_of(n, -1);  // by root
  std::vector<double> region_sum;
  std::vector<long> region_n;
  const uint8_t* vp = in.ptr<uint8_t>(0);
  long valid_count = 0;
  for (std::size_t p = 0; p < n; ++p) {
    if (vp[p] == 0) continue;
    int32_t t = 0;
    const auto r =
        static_cast<std::size_t>(forest.Find(static_cast<int32_t>(p), t));
    if (region_of[r] < 0) {
      region_of[r] = static_cast<int32_t>(region_sum.size());
      region_sum.push_back(0.0);
      region_n.push_back(0);
    }
    const auto id = static_cast<std::size_t>(region_of[r]);
    region_sum[id] += static_cast<double>(wp[p]) + kTwoPi * t;
    ++region_n[id];
    ++valid_count;
  }
  result.regions = static_cast<int>(region_sum.size());
  // Each region's constant puts its mean in [-pi, pi).
  std::vector<int32_t> region_shift(region_sum.size(), 0);
  for (std::size_t r = 0; r < region_sum.size(); ++r) {
    const double mean = region_sum[r] / static_cast<double>(region_n[r]);
    region_shift[r] =
        -static_cast<int32_t>(std::floor((mean + std::numbers::pi) / kTwoPi));
  }
  auto* out = result.phase.ptr<float>(0);
  long bad_count = 0;
  const uint8_t* bp = unreliable.ptr<uint8_t>(0);
  for (std::size_t p = 0; p < n; ++p) {
    if (vp[p] == 0) {
      out[p] = std::numeric_limits<float>::quiet_NaN();
      continue;
    }
    int32_t t = 0;
    const auto r =
        static_cast<std::size_t>(forest.Find(static_cast<int32_t>(p), t));
    const int32_t total =
        t + region_shift[static_cast<std::size_t>(region_of[r])];
    out[p] = static_cast<float>(static_cast<double>(wp[p]) + kTwoPi * total);
    if (bp[p] != 0) ++bad_count;
  }
  result.unreliable = unreliable;
  result.unreliable_fraction =
      valid_count > 0
          ? static_cast<double>(bad_count) / static_cast<double>(valid_count)
          : 0.0;
  return result;
}

}  // namespace figura
