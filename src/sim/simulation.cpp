#include "sim/simulation.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <numbers>
#include <opencv2/core/utility.hpp>
#include <opencv2/imgproc.hpp>
#include <random>
#include <sstream>
#include <utility>

#include "io/result_json.h"
#include "optics/sphere.h"

namespace figura {

namespace {

constexpr double kPi = std::numbers::pi;

// The Airy response over one period of the round-trip phase
// phi = 4 pi n_gap t / lambda, tabulated from optics' LayerIntensity (the
// one implementation of the physics) and divided by its maximum. For real
// indices the response depends on phi alone, so one table serves every
// wavelength. Linear interpolation on 2^16 intervals: error below
// (2 pi / 2^16)^2 / 8 * max|I''| < 1e-8 of the maximum.
class AiryTable {
 public:
  static constexpr int kSize = 1 << 16;

  AiryTable(const MediaStack& stack, View view) : values_(kSize + 1) {
    constexpr double kLambda = 1e-6;  // any wavelength: I depends on phi
    const double max = RuleFor(stack, view).max_intensity;
    for (int i = 0; i <= kSize; ++i) {
      const double t =
          (static_cast<double>(i) / kSize) * kLambda / (2.0 * stack.gap_index);
      values_[static_cast<std::size_t>(i)] =
          LayerIntensity(stack, view, t, kLambda) / max;
    }
  }

  // I(phi)/I_max for cycles = phi / (2 pi) (any real value).
  [[nodiscard]] double AtCycles(double cycles) const {
    const double f = cycles * kSize;
    const double fl = std::floor(f);
    const double frac = f - fl;
    const auto i =
        static_cast<std::size_t>(static_cast<std::int64_t>(fl) & (kSize - 1));
    return values_[i] + frac * (values_[i + 1] - values_[i]);
  }

 private:
  std::vector<double> values_;
};

// One wavelength sample of the source spectrum: cycles of phase per metre
// of gap (2 n_gap / lambda) and its weight (weights sum to 1).
struct SpectralSample {
  double wavelength_m = 0.0;
  double cycles_per_m = 0.0;
  double weight = 0.0;
};

std::vector<SpectralSample> SampleSpectrum(const SimulationOptions& options,
                                           double max_gap_m,
                                           std::vector<std::string>* messages) {
  std::vector<SpectralLine> lines = options.wavelength.lines;
  if (lines.empty()) lines.push_back({options.wavelength.value, 1.0});
  double total = 0.0;
  for (const SpectralLine& l : lines) total += l.weight;
  const double n = options.stack.gap_index;
  std::vector<SpectralSample> out;
  // Gaussian line shape: sigma = FWHM / (2 sqrt(2 ln 2)); samples over
  // +-4 sigma, spaced so that the phase at the largest gap moves by at most
  // 0.5 rad between samples [practice].
  const double sigma =
      options.bandwidth_m / (2.0 * std::sqrt(2.0 * std::log(2.0)));
  constexpr int kMaxSamples = 101;
  for (const SpectralLine& l : lines) {
    const double lambda = l.wavelength.metres;
    int count = 1;
    if (sigma > 0.0) {
      const double step =
          0.5 * lambda * lambda / (4.0 * kPi * n * std::max(max_gap_m, 1e-9));
      count = static_cast<int>(std::ceil(8.0 * sigma / step)) + 1;
      count = std::max(count, 7);
      if (count % 2 == 0) ++count;
      if (count > kMaxSamples) {
        count = kMaxSamples;
        messages->push_back(
            "bandwidth sampling capped at " + std::to_string(kMaxSamples) +
            " wavelengths per line: the fringe contrast at the largest gaps "
            "is approximate");
      }
    }
    std::vector<SpectralSample> line_samples;
    double line_total = 0.0;
    for (int k = 0; k < count; ++k) {
      const double offset =
          count == 1 ? 0.0 : sigma * (-4.0 + 8.0 * k / (count - 1));
      const double w =
          count == 1 ? 1.0 : std::exp(-0.5 * offset * offset / (sigma * sigma));
      const double lam = lambda + offset;
      line_samples.push_back({lam, 2.0 * n / lam, w});
      line_total += w;
    }
    for (SpectralSample& s : line_samples) {
      s.weight *= l.weight / (total * line_total);
      out.push_back(s);
    }
  }
  return out;
}

// Supersampling factors per pixel side, by local fringe period [practice]:
// the midpoint rule's amplitude error for a fringe of period P is about
// (pi/(s P))^2 / 6, at most 0.16 % with these thresholds; pixels cut by the
// aperture edge get the finest (8).
int FactorFor(double period_px) {
  if (period_px >= 16.0) return 2;
  if (period_px >= 8.0) return 4;
  return 8;
}

// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014): decorrelates per-row seeds.
std::uint64_t SplitMix64(std::uint64_t x) {
  x += 0x9E3779B97F4A7C15ULL;
  x = (x ^ (x >> 30U)) * 0xBF58476D1CE4E5B9ULL;
  x = (x ^ (x >> 27U)) * 0x94D049BB133111EBULL;
  return x ^ (x >> 31U);
}

std::string Lower(std::string text) {
  for (char& c : text) {
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  }
  return text;
}

nlohmann::json RadiusMm(double radius_m) {
  if (std::isinf(radius_m)) return "flat";
  return radius_m * 1e3;
}

// Per-row statistics of the first pass.
struct RowStats {
  double min_gap = std::numeric_limits<double>::infinity();
  double max_gap = -std::numeric_limits<double>::infinity();
  double min_period = std::numeric_limits<double>::infinity();
  int min_period_x = -1;
  int min_gap_x = -1;
};

}  // namespace

double SimulationOptions::CentreX() const {
  return centre_x_px.value_or(0.5 * (camera.width_px - 1));
}

double SimulationOptions::CentreY() const {
  return centre_y_px.value_or(0.5 * (camera.height_px - 1));
}

std::string SimulationOptions::Check() const {
  std::ostringstream out;
  const CameraOptions& c = camera;
  if (c.width_px < 8 || c.height_px < 8 || c.width_px > 30000 ||
      c.height_px > 30000) {
    return "camera.width: image size must be 8 .. 30000 pixels a side";
  }
  if (static_cast<double>(c.width_px) * c.height_px > 200e6) {
    return "camera.width: more than 200 megapixels";
  }
  if (!std::isfinite(c.pixel_pitch_m) || c.pixel_pitch_m <= 0.0) {
    return "camera.pixel-pitch: must be a positive length";
  }
  if (!(c.blur_sigma_px >= 0.0 && c.blur_sigma_px <= 50.0)) {
    return "camera.blur-sigma-px: must be 0 .. 50";
  }
  if (!(c.falloff >= 0.0 && c.falloff < 1.0)) {
    return "camera.falloff: must be 0 .. <1 (relative drop at the edge)";
  }
  if (!(c.background >= 0.0 && c.background <= 1.0)) {
    return "camera.background: must be 0 .. 1 of full scale";
  }
  if (!(c.surround >= 0.0 && c.surround <= 1.0)) {
    return "camera.surround: must be 0 .. 1 of full scale";
  }
  if (!(c.exposure > 0.0 && c.exposure <= 10.0)) {
    return "camera.exposure: must be > 0 (1 = brightest fringe at full "
           "scale) and <= 10";
  }
  if (!(c.full_well_e >= 0.0 && c.full_well_e <= 1e8)) {
    return "camera.full-well: must be 0 (no shot noise) .. 1e8 electrons";
  }
  if (!(c.read_noise_e >= 0.0 && c.read_noise_e <= 1e6)) {
    return "camera.read-noise: must be >= 0 electrons";
  }
  if (c.read_noise_e > 0.0 && c.full_well_e == 0.0) {
    return "camera.read-noise: needs camera.full-well > 0 (electrons per "
           "full scale)";
  }
  if (!(c.gamma > 0.0 && c.gamma <= 5.0)) {
    return "camera.gamma: must be > 0 and <= 5";
  }
  if (c.bit_depth != 8 && c.bit_depth != 16 && c.bit_depth != 32) {
    return "camera.bit-depth: must be 8, 16 or 32 (float TIFF)";
  }
  if (c.jpeg_quality < 1 || c.jpeg_quality > 100) {
    return "camera.jpeg-quality: must be 1 .. 100";
  }
  if (std::string m = stack.Check(); !m.empty()) return "media: " + m;
  const double lambda = wavelength.value.metres;
  if (!(lambda >= 200e-9 && lambda <= 2000e-9)) {
    return "light.wavelength: must be within 200 nm .. 2000 nm";
  }
  for (const SpectralLine& l : wavelength.lines) {
    if (!(l.wavelength.metres >= 200e-9 && l.wavelength.metres <= 2000e-9) ||
        !(l.weight > 0.0)) {
      return "light.wavelength: a spectral line is outside 200 .. 2000 nm or "
             "has a weight <= 0";
    }
  }
  if (!(bandwidth_m >= 0.0 && bandwidth_m <= 0.1 * lambda)) {
    return "light.bandwidth: must be 0 .. a tenth of the wavelength";
  }
  if (!std::isfinite(aperture_diameter_m) || aperture_diameter_m <= 0.0) {
    return "aperture.diameter: must be a positive length";
  }
  if ((centre_x_px && !std::isfinite(*centre_x_px)) ||
      (centre_y_px && !std::isfinite(*centre_y_px))) {
    return "aperture.centre-x: must be finite";
  }
  return gap.Check(0.5 * aperture_diameter_m);
}

SimulationResult Simulate(const SimulationOptions& options) {
  if (std::string m = options.Check(); !m.empty()) {
    throw InputError((options.origin.empty() ? "" : options.origin + ": ") + m);
  }
  const CameraOptions& cam = options.camera;
  const int width = cam.width_px;
  const int height = cam.height_px;
  const double pitch = cam.pixel_pitch_m;
  const double a = 0.5 * options.aperture_diameter_m;
  const double cx = options.CentreX();
  const double cy = options.CentreY();
  const GapModel model(options.gap, a);
  const std::string prefix =
      options.origin.empty() ? std::string() : options.origin + ": ";
  SimulationResult result;

  // Shortest wavelength of the spectrum (including +4 sigma of bandwidth)
  // sets the finest fringes.
  double lambda_min = options.wavelength.value.metres;
  for (const SpectralLine& l : options.wavelength.lines) {
    lambda_min = std::min(lambda_min, l.wavelength.metres);
  }
  lambda_min -= 4.0 * options.bandwidth_m / 2.3548;
  const double half_wave_min = lambda_min / (2.0 * options.stack.gap_index);

  // Pass 1: the exact gap at every pixel centre near the aperture (one
  // evaluation per pixel, three rows kept), the local fringe period from
  // central differences, and the supersampling factor per pixel.
  cv::Mat factor(height, width, CV_8UC1, cv::Scalar(0));
  std::vector<RowStats> stats(static_cast<std::size_t>(height));
  const double a_px = a / pitch;
  const double edge_in = std::max(0.0, a_px - 0.7072);
  const double edge_out = a_px + 0.7072;
  const double reach_px = a_px + 1.5;  // evaluated region (stencils)
  // Columns [first, last) of the row at y_px (pixels) within reach of the
  // aperture centre.
  auto span = [&](double y_px) {
    const double dy = y_px - cy;
    const double h2 = reach_px * reach_px - dy * dy;
    if (h2 <= 0.0) return std::pair<int, int>(0, 0);
    const double h = std::sqrt(h2);
    const int first = std::max(0, static_cast<int>(std::floor(cx - h)));
    const int last = std::min(width, static_cast<int>(std::ceil(cx + h)) + 1);
    return std::pair<int, int>(first, std::max(first, last));
  };
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  cv::parallel_for_(cv::Range(0, height), [&](const cv::Range& range) {
    GapRow row;
    std::array<std::vector<double>, 3> c;  // rows r-1, r, r+1
    auto fill = [&](int r, std::vector<double>* out) {
      out->assign(static_cast<std::size_t>(width), kNaN);
      if (r < 0 || r >= height) return;
      const auto [first, last] = span(r);
      if (first >= last) return;
      model.PrepareRow(-(r - cy) * pitch, &row);
      for (int i = first; i < last; ++i) {
        (*out)[static_cast<std::size_t>(i)] =
            model.AtRow(row, (i - cx) * pitch);
      }
    };
    // Central differences (one-sided at the image border).
    auto diff = [](double minus, double centre, double plus) {
      if (!std::isnan(minus) && !std::isnan(plus)) return 0.5 * (plus - minus);
      if (!std::isnan(plus)) return plus - centre;
      if (!std::isnan(minus)) return centre - minus;
      return 0.0;
    };
    fill(range.start - 1, &c[0]);
    fill(range.start, &c[1]);
    for (int r = range.start; r < range.end; ++r) {
      fill(r + 1, &c[2]);
      RowStats& st = stats[static_cast<std::size_t>(r)];
      auto* f = factor.ptr<std::uint8_t>(r);
      const double dy = r - cy;
      for (int i = 0; i < width; ++i) {
        const double dx = i - cx;
        const double rho = std::sqrt(dx * dx + dy * dy);
        if (rho >= edge_out) continue;
        if (rho > a_px) {  // centre outside, a corner may be inside
          f[i] = 8;
          continue;
        }
        const auto u = static_cast<std::size_t>(i);
        const double t = c[1][u];
        const double gx = diff(i > 0 ? c[1][u - 1] : kNaN, t,
                               i + 1 < width ? c[1][u + 1] : kNaN);
        const double gy = diff(c[0][u], t, c[2][u]);
        const double grad = std::hypot(gx, gy);  // metres of gap per pixel
        const double period = grad > 0.0
                                  ? half_wave_min / grad
                                  : std::numeric_limits<double>::infinity();
        if (t < st.min_gap) {
          st.min_gap = t;
          st.min_gap_x = i;
        }
        st.max_gap = std::max(st.max_gap, t);
        if (period < st.min_period) {
          st.min_period = period;
          st.min_period_x = i;
        }
        f[i] = static_cast<std::uint8_t>(rho > edge_in ? 8 : FactorFor(period));
      }
      std::swap(c[0], c[1]);
      std::swap(c[1], c[2]);
    }
  });
  RowStats all;
  int min_gap_y = -1;
  int min_period_y = -1;
  for (int r = 0; r < height; ++r) {
    const RowStats& st = stats[static_cast<std::size_t>(r)];
    if (st.min_gap < all.min_gap) {
      all.min_gap = st.min_gap;
      all.min_gap_x = st.min_gap_x;
      min_gap_y = r;
    }
    all.max_gap = std::max(all.max_gap, st.max_gap);
    if (st.min_period < all.min_period) {
      all.min_period = st.min_period;
      all.min_period_x = st.min_period_x;
      min_period_y = r;
    }
  }
  if (min_gap_y < 0) {
    throw InputError(prefix +
                     "aperture: no pixel centre lies inside the aperture; "
                     "check aperture.diameter, centre and camera.pixel-pitch");
  }
  if (all.min_gap < -1e-12) {
    std::ostringstream m;
    m << prefix << "gap.contact-offset: the gap would be negative ("
      << all.min_gap * 1e9 << " nm) at pixel (" << all.min_gap_x << ", "
      << min_gap_y
      << "): the surfaces would overlap; raise contact-offset or reduce the "
         "tilt or Zernike terms";
    throw InputError(m.str());
  }
  if (all.min_period < kMinFringePeriodPx) {
    std::ostringstream m;
    m.precision(3);
    m << prefix << "fringes would alias: the local fringe period is "
      << all.min_period << " px at pixel (" << all.min_period_x << ", "
      << min_period_y << "), under the " << kMinFringePeriodPx
      << " px a camera resolves; use a finer camera.pixel-pitch, a smaller "
         "aperture, or a gap with fewer fringes";
    throw InputError(m.str());
  }
  result.min_fringe_period_px = all.min_period;

  const std::vector<SpectralSample> spectrum =
      SampleSpectrum(options, all.max_gap, &result.messages);
  result.spectral_samples = static_cast<int>(spectrum.size());
  const AiryTable table(options.stack, options.view);

  // Pass 2: mean Airy intensity over each pixel (s x s midpoint samples,
  // only those inside the aperture), falloff, surround and stray light.
  // Within a pixel the gap is its Taylor quadratic about the centre, from
  // exact values on a half-pixel stencil (rows shared between pixel rows):
  // the neglected third-order term, |d3t| h^3 / 6 with h <= 0.71 px, stays
  // below 1e-6 of a wave for any sphere accepted at >= 2.5 px fringe period
  // [derived: the third derivative of a sag is about 3 r / R^3].
  cv::Mat signal(height, width, CV_32FC1);
  cv::parallel_for_(cv::Range(0, height), [&](const cv::Range& range) {
    GapRow row;
    const int n_half = 2 * width + 1;
    // Half-rows at r - 0.5, r, r + 0.5; entry k is at x = (k - 1) / 2 px.
    std::array<std::vector<double>, 3> h;
    auto fill = [&](double y_px, std::vector<double>* out) {
      out->assign(static_cast<std::size_t>(n_half), kNaN);
      const auto [first, last] = span(y_px);
      if (first >= last) return;
      model.PrepareRow(-(y_px - cy) * pitch, &row);
      for (int k = 2 * first; k <= std::min(2 * last, n_half - 1); ++k) {
        (*out)[static_cast<std::size_t>(k)] =
            model.AtRow(row, (0.5 * (k - 1) - cx) * pitch);
      }
    };
    fill(range.start - 0.5, &h[0]);
    for (int r = range.start; r < range.end; ++r) {
      const auto* f = factor.ptr<std::uint8_t>(r);
      auto* out = signal.ptr<float>(r);
      bool filled = false;
      const double dy = r - cy;
      for (int i = 0; i < width; ++i) {
        const int s = f[i];
        if (s == 0) {
          out[i] = static_cast<float>(cam.surround + cam.background);
          continue;
        }
        if (!filled) {
          fill(r, &h[1]);
          fill(r + 0.5, &h[2]);
          filled = true;
        }
        const auto k = 2 * static_cast<std::size_t>(i) + 1;
        const double t0 = h[1][k];
        const double tl = h[1][k - 1];
        const double tr = h[1][k + 1];
        const double tu = h[0][k];  // v = -0.5 (up in the image)
        const double td = h[2][k];  // v = +0.5
        const double gu = tr - tl;
        const double gv = td - tu;
        const double huu = 4.0 * (tr - 2.0 * t0 + tl);
        const double hvv = 4.0 * (td - 2.0 * t0 + tu);
        const double huv =
            h[2][k + 1] - h[2][k - 1] - h[0][k + 1] + h[0][k - 1];
        double sum = 0.0;
        int inside = 0;
        for (int v = 0; v < s; ++v) {
          const double dv = (v + 0.5) / s - 0.5;
          const double yy = (dy + dv) * (dy + dv);
          for (int uu = 0; uu < s; ++uu) {
            const double du = (uu + 0.5) / s - 0.5;
            const double xx = i - cx + du;
            if (xx * xx + yy > a_px * a_px) continue;
            ++inside;
            const double t = t0 + gu * du + gv * dv +
                             0.5 * (huu * du * du + hvv * dv * dv) +
                             huv * du * dv;
            for (const SpectralSample& sp : spectrum) {
              sum += sp.weight * table.AtCycles(t * sp.cycles_per_m);
            }
          }
        }
        const double n = static_cast<double>(s) * s;
        const double rho2 = ((i - cx) * (i - cx) + dy * dy) / (a_px * a_px);
        const double light = std::max(0.0, 1.0 - cam.falloff * rho2);
        out[i] = static_cast<float>(cam.exposure * light * sum / n +
                                    cam.surround * (n - inside) / n +
                                    cam.background);
      }
      if (filled) {
        std::swap(h[0], h[2]);
      } else {
        fill(r + 0.5, &h[0]);
      }
    }
  });

  if (cam.blur_sigma_px > 0.0) {
    cv::GaussianBlur(signal, signal, cv::Size(0, 0), cam.blur_sigma_px,
                     cam.blur_sigma_px, cv::BORDER_REFLECT);
  }

  // Camera: shot noise (Poisson in electrons; its Gaussian limit above
  // 1000 electrons, where the skewness 1/sqrt(N) is under 3 %), read noise,
  // gamma, quantisation. One generator per row, seeded from (seed, row):
  // the image does not depend on the thread count.
  const int type = cam.bit_depth == 8    ? CV_8UC1
                   : cam.bit_depth == 16 ? CV_16UC1
                                         : CV_32FC1;
  result.image.create(height, width, type);
  const double full = cam.bit_depth == 8    ? 255.0
                      : cam.bit_depth == 16 ? 65535.0
                                            : 1.0;
  cv::parallel_for_(cv::Range(0, height), [&](const cv::Range& range) {
    for (int r = range.start; r < range.end; ++r) {
      std::mt19937_64 rng(
          SplitMix64(options.seed ^ SplitMix64(static_cast<std::uint64_t>(r))));
      std::normal_distribution<double> normal(0.0, 1.0);
      // The Poisson generator is rebuilt only when the mean changes (flat
      // regions such as the surround repeat it).
      std::poisson_distribution<long> poisson(1.0);
      const float* in = signal.ptr<float>(r);
      for (int i = 0; i < width; ++i) {
        double level = static_cast<double>(in[i]);
        if (cam.full_well_e > 0.0) {
          double electrons = std::max(0.0, level) * cam.full_well_e;
          if (electrons <= 0.0) {
            electrons = 0.0;
          } else if (electrons < 1000.0) {
            if (poisson.mean() != electrons) {
              poisson = std::poisson_distribution<long>(electrons);
            }
            electrons = static_cast<double>(poisson(rng));
          } else {
            electrons += std::sqrt(electrons) * normal(rng);
          }
          if (cam.read_noise_e > 0.0)
            electrons += cam.read_noise_e * normal(rng);
          level = electrons / cam.full_well_e;
        }
        level = std::max(0.0, level);
        if (cam.gamma != 1.0) level = std::pow(level, cam.gamma);
        if (cam.bit_depth == 32) {
          result.image.ptr<float>(r)[i] = static_cast<float>(level);
        } else {
          const double q = std::round(std::min(1.0, level) * full);
          if (cam.bit_depth == 8) {
            result.image.ptr<std::uint8_t>(r)[i] = static_cast<std::uint8_t>(q);
          } else {
            result.image.ptr<std::uint16_t>(r)[i] =
                static_cast<std::uint16_t>(q);
          }
        }
      }
    }
  });

  // Truth.
  const double n_gap = options.stack.gap_index;
  const double lambda = options.wavelength.value.metres;
  const double half_wave = lambda / (2.0 * n_gap);
  const FringeRule rule = RuleFor(options.stack, options.view);
  const GapOptions& g = options.gap;
  nlohmann::json truth;
  truth["tool"] = ToolJson();
  truth["gap_file"] = options.origin;
  truth["seed"] = options.seed;
  nlohmann::json settings;
  settings["gap"] = {{"part_radius_mm", RadiusMm(g.part_radius_m)},
                     {"plate_radius_mm", RadiusMm(g.plate_radius_m)},
                     {"contact", ContactName(g.contact)},
                     {"contact_offset_nm", g.contact_offset_m * 1e9},
                     {"contact_x_mm", g.contact_x_m * 1e3},
                     {"contact_y_mm", g.contact_y_m * 1e3},
                     {"tilt_x_nm", g.tilt_x_m * 1e9},
                     {"tilt_y_nm", g.tilt_y_m * 1e9}};
  settings["media"] = {{"upper_index", options.stack.upper_index},
                       {"gap_index", options.stack.gap_index},
                       {"lower_index", options.stack.lower_index},
                       {"view", ViewName(options.view)}};
  nlohmann::json lines = nlohmann::json::array();
  for (const SpectralLine& l : options.wavelength.lines) {
    lines.push_back(
        {{"wavelength_nm", l.wavelength.nm()}, {"weight", l.weight}});
  }
  settings["light"] = {{"wavelength_nm", lambda * 1e9},
                       {"source", options.wavelength.source_name},
                       {"citation", options.wavelength.citation},
                       {"lines", lines},
                       {"bandwidth_fwhm_nm", options.bandwidth_m * 1e9}};
  settings["aperture"] = {{"diameter_mm", options.aperture_diameter_m * 1e3},
                          {"diameter_px", options.aperture_diameter_m / pitch},
                          {"centre_px", {cx, cy}}};
  settings["camera"] = {{"width_px", width},
                        {"height_px", height},
                        {"pixel_pitch_um", pitch * 1e6},
                        {"blur_sigma_px", cam.blur_sigma_px},
                        {"falloff", cam.falloff},
                        {"background", cam.background},
                        {"surround", cam.surround},
                        {"exposure", cam.exposure},
                        {"full_well_e", cam.full_well_e},
                        {"read_noise_e", cam.read_noise_e},
                        {"gamma", cam.gamma},
                        {"bit_depth", cam.bit_depth},
                        {"jpeg_quality", cam.jpeg_quality}};
  truth["settings"] = settings;

  nlohmann::json key;
  key["part_radius_mm"] = RadiusMm(g.part_radius_m);
  key["plate_radius_mm"] = RadiusMm(g.plate_radius_m);
  // Paraxial radius of the gap, 1/(1/Rp + 1/Rt): what a ring analysis
  // without a reference radius measures.
  const double inv =
      (std::isfinite(g.part_radius_m) ? 1.0 / g.part_radius_m : 0.0) +
      (std::isfinite(g.plate_radius_m) ? 1.0 / g.plate_radius_m : 0.0);
  key["gap_radius_mm"] =
      inv != 0.0 ? nlohmann::json(1e3 / inv) : nlohmann::json("flat");
  key["contact"] = ContactName(g.contact);
  auto to_px = [&](double x_m, double y_m) {
    return nlohmann::json::array({cx + x_m / pitch, cy - y_m / pitch});
  };
  key["contact_point_px"] = to_px(g.contact_x_m, g.contact_y_m);
  const auto stationary = model.Stationary();
  key["fringe_centre_px"] = stationary
                                ? to_px(stationary->first, stationary->second)
                                : nlohmann::json(nullptr);
  key["centre_fringe"] = FringeStateName(rule.contact);
  key["fringe_visibility"] = rule.visibility;
  key["minimum_offset"] = rule.minimum_offset;
  key["half_wave_nm"] = half_wave * 1e9;
  key["contact_gap_fringes"] = g.contact_offset_m / half_wave;
  const double sag = model.Rotational(a) - model.Rotational(0.0);
  key["gap_sag_um"] = sag * 1e6;
  key["power_fringes"] = sag / half_wave;
  key["gap_min_nm"] = all.min_gap * 1e9;
  key["gap_max_nm"] = all.max_gap * 1e9;
  key["fringes_across_aperture"] = (all.max_gap - all.min_gap) / half_wave;
  key["min_fringe_period_px"] = all.min_period;
  // Dark (intensity minima) and bright fringes of the rotational part plus
  // the offset, about the contact point, inside the aperture: gap t_k =
  // (k + d) lambda / (2 n) for minima, (k + d + 1/2) lambda / (2 n) for
  // maxima (optics RuleFor); radii by exact inversion of the sphere sags.
  // Tilt and Zernike terms are not included in these radii.
  const double reach = a - std::hypot(g.contact_x_m, g.contact_y_m);
  for (const bool dark : {true, false}) {
    nlohmann::json list = nlohmann::json::array();
    if (model.curved() && reach > 0.0) {
      for (int k = 0; k < 100000 && list.size() < 200; ++k) {
        const double t =
            (k + rule.minimum_offset + (dark ? 0.0 : 0.5)) * half_wave;
        if (t < g.contact_offset_m) continue;
        const auto radius = model.RadiusForGap(t, reach);
        if (!radius) {
          if (t > g.contact_offset_m + std::max(model.Rotational(0.0),
                                                model.Rotational(reach))) {
            break;
          }
          continue;
        }
        list.push_back({{"order", k},
                        {"gap_nm", t * 1e9},
                        {"radius_mm", *radius * 1e3},
                        {"radius_px", *radius / pitch}});
      }
    }
    key[dark ? "dark_fringes" : "bright_fringes"] = list;
  }
  nlohmann::json zernike = nlohmann::json::array();
  for (std::size_t j = 0; j < g.zernike_m.size(); ++j) {
    if (g.zernike_m[j] == 0.0) continue;
    const ZernikeMode mode = ZernikeModeOf(static_cast<int>(j));
    zernike.push_back({{"j", j},
                       {"n", mode.n},
                       {"m", mode.m},
                       {"noll", NollIndex(mode.n, mode.m)},
                       {"coefficient_nm", g.zernike_m[j] * 1e9}});
  }
  key["zernike"] = zernike;
  key["spectral_samples"] = result.spectral_samples;
  truth["truth"] = key;
  truth["status"] =
      StatusJson(result.messages.empty() ? Status::kOk : Status::kWarning,
                 result.messages);
  result.status = result.messages.empty() ? Status::kOk : Status::kWarning;
  result.truth = std::move(truth);
  return result;
}

std::string CheckOutputPath(const std::filesystem::path& image_path,
                            int bit_depth) {
  const std::string ext = Lower(image_path.extension().string());
  if (ext == ".tif" || ext == ".tiff") return {};
  if (ext == ".png") {
    if (bit_depth == 32) {
      return image_path.string() +
             ": PNG holds 8 or 16 bits; use .tif for camera.bit-depth = 32";
    }
    return {};
  }
  if (ext == ".jpg" || ext == ".jpeg") {
    if (bit_depth != 8) {
      return image_path.string() +
             ": JPEG holds 8 bits only; set camera.bit-depth = 8 or write "
             ".tif/.png";
    }
    return {};
  }
  return image_path.string() +
         ": unknown image extension; use .tif, .tiff, .png, .jpg or .jpeg";
}

std::filesystem::path TruthPathFor(const std::filesystem::path& image_path) {
  std::filesystem::path out = image_path;
  out.replace_filename(image_path.stem().string() + ".truth.json");
  return out;
}

nlohmann::json SimulationTruthJson(const SimulationResult& result,
                                   const std::filesystem::path& image_path,
                                   const CameraOptions& camera) {
  nlohmann::json truth = result.truth;
  std::string format = Lower(image_path.extension().string());
  format = format == ".png"                          ? "png"
           : (format == ".jpg" || format == ".jpeg") ? "jpeg"
                                                     : "tiff";
  truth["image"] = {{"path", image_path.string()},
                    {"format", format},
                    {"width", result.image.cols},
                    {"height", result.image.rows},
                    {"bit_depth", camera.bit_depth}};
  return truth;
}

void WriteSimulation(const SimulationResult& result,
                     const std::filesystem::path& image_path,
                     const CameraOptions& camera) {
  if (std::string m = CheckOutputPath(image_path, camera.bit_depth);
      !m.empty()) {
    throw InputError(m);
  }
  ImageWriteOptions write;
  write.jpeg_quality = camera.jpeg_quality;
  WriteImage(image_path, result.image, write);
  WriteJson(TruthPathFor(image_path).string(),
            SimulationTruthJson(result, image_path, camera));
}

}  // namespace figura
