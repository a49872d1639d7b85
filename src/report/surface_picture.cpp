#include "report/surface_picture.h"

#include <cairo.h>

#include <algorithm>
#include <cassert>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <string>
#include <vector>

#include "core/error.h"
#include "io/image_writer.h"
#include "report/axis_ticks.h"
#include "report/cairo_util.h"

namespace figura {
namespace {

// matplotlib's viridis (van der Walt & Smith, CC0; matplotlib/_cm_listed.py
// _viridis_data), each entry rounded to 8 bits: 256 x {R, G, B}. Checked
// entry by entry against matplotlib in tests/report/surface_picture_test.cpp.
constexpr unsigned char kViridis[256][3] = {
    {68, 1, 84},    {68, 2, 86},    {69, 4, 87},    {69, 5, 89},
    {70, 7, 90},    {70, 8, 92},    {70, 10, 93},   {70, 11, 94},
    {71, 13, 96},   {71, 14, 97},   {71, 16, 99},   {71, 17, 100},
    {71, 19, 101},  {72, 20, 103},  {72, 22, 104},  {72, 23, 105},
    {72, 24, 106},  {72, 26, 108},  {72, 27, 109},  {72, 28, 110},
    {72, 29, 111},  {72, 31, 112},  {72, 32, 113},  {72, 33, 115},
    {72, 35, 116},  {72, 36, 117},  {72, 37, 118},  {72, 38, 119},
    {72, 40, 120},  {72, 41, 121},  {71, 42, 122},  {71, 44, 122},
    {71, 45, 123},  {71, 46, 124},  {71, 47, 125},  {70, 48, 126},
    {70, 50, 126},  {70, 51, 127},  {70, 52, 128},  {69, 53, 129},
    {69, 55, 129},  {69, 56, 130},  {68, 57, 131},  {68, 58, 131},
    {68, 59, 132},  {67, 61, 132},  {67, 62, 133},  {66, 63, 133},
    {66, 64, 134},  {66, 65, 134},  {65, 66, 135},  {65, 68, 135},
    {64, 69, 136},  {64, 70, 136},  {63, 71, 136},  {63, 72, 137},
    {62, 73, 137},  {62, 74, 137},  {62, 76, 138},  {61, 77, 138},
    {61, 78, 138},  {60, 79, 138},  {60, 80, 139},  {59, 81, 139},
    {59, 82, 139},  {58, 83, 139},  {58, 84, 140},  {57, 85, 140},
    {57, 86, 140},  {56, 88, 140},  {56, 89, 140},  {55, 90, 140},
    {55, 91, 141},  {54, 92, 141},  {54, 93, 141},  {53, 94, 141},
    {53, 95, 141},  {52, 96, 141},  {52, 97, 141},  {51, 98, 141},
    {51, 99, 141},  {50, 100, 142}, {50, 101, 142}, {49, 102, 142},
    {49, 103, 142}, {49, 104, 142}, {48, 105, 142}, {48, 106, 142},
    {47, 107, 142}, {47, 108, 142}, {46, 109, 142}, {46, 110, 142},
    {46, 111, 142}, {45, 112, 142}, {45, 113, 142}, {44, 113, 142},
    {44, 114, 142}, {44, 115, 142}, {43, 116, 142}, {43, 117, 142},
    {42, 118, 142}, {42, 119, 142}, {42, 120, 142}, {41, 121, 142},
    {41, 122, 142}, {41, 123, 142}, {40, 124, 142}, {40, 125, 142},
    {39, 126, 142}, {39, 127, 142}, {39, 128, 142}, {38, 129, 142},
    {38, 130, 142}, {38, 130, 142}, {37, 131, 142}, {37, 132, 142},
    {37, 133, 142}, {36, 134, 142}, {36, 135, 142}, {35, 136, 142},
    {35, 137, 142}, {35, 138, 141}, {34, 139, 141}, {34, 140, 141},
    {34, 141, 141}, {33, 142, 141}, {33, 143, 141}, {33, 144, 141},
    {33, 145, 140}, {32, 146, 140}, {32, 146, 140}, {32, 147, 140},
    {31, 148, 140}, {31, 149, 139}, {31, 150, 139}, {31, 151, 139},
    {31, 152, 139}, {31, 153, 138}, {31, 154, 138}, {30, 155, 138},
    {30, 156, 137}, {30, 157, 137}, {31, 158, 137}, {31, 159, 136},
    {31, 160, 136}, {31, 161, 136}, {31, 161, 135}, {31, 162, 135},
    {32, 163, 134}, {32, 164, 134}, {33, 165, 133}, {33, 166, 133},
    {34, 167, 133}, {34, 168, 132}, {35, 169, 131}, {36, 170, 131},
    {37, 171, 130}, {37, 172, 130}, {38, 173, 129}, {39, 173, 129},
    {40, 174, 128}, {41, 175, 127}, {42, 176, 127}, {44, 177, 126},
    {45, 178, 125}, {46, 179, 124}, {47, 180, 124}, {49, 181, 123},
    {50, 182, 122}, {52, 182, 121}, {53, 183, 121}, {55, 184, 120},
    {56, 185, 119}, {58, 186, 118}, {59, 187, 117}, {61, 188, 116},
    {63, 188, 115}, {64, 189, 114}, {66, 190, 113}, {68, 191, 112},
    {70, 192, 111}, {72, 193, 110}, {74, 193, 109}, {76, 194, 108},
    {78, 195, 107}, {80, 196, 106}, {82, 197, 105}, {84, 197, 104},
    {86, 198, 103}, {88, 199, 101}, {90, 200, 100}, {92, 200, 99},
    {94, 201, 98},  {96, 202, 96},  {99, 203, 95},  {101, 203, 94},
    {103, 204, 92}, {105, 205, 91}, {108, 205, 90}, {110, 206, 88},
    {112, 207, 87}, {115, 208, 86}, {117, 208, 84}, {119, 209, 83},
    {122, 209, 81}, {124, 210, 80}, {127, 211, 78}, {129, 211, 77},
    {132, 212, 75}, {134, 213, 73}, {137, 213, 72}, {139, 214, 70},
    {142, 214, 69}, {144, 215, 67}, {147, 215, 65}, {149, 216, 64},
    {152, 216, 62}, {155, 217, 60}, {157, 217, 59}, {160, 218, 57},
    {162, 218, 55}, {165, 219, 54}, {168, 219, 52}, {170, 220, 50},
    {173, 220, 48}, {176, 221, 47}, {178, 221, 45}, {181, 222, 43},
    {184, 222, 41}, {186, 222, 40}, {189, 223, 38}, {192, 223, 37},
    {194, 223, 35}, {197, 224, 33}, {200, 224, 32}, {202, 225, 31},
    {205, 225, 29}, {208, 225, 28}, {210, 226, 27}, {213, 226, 26},
    {216, 226, 25}, {218, 227, 25}, {221, 227, 24}, {223, 227, 24},
    {226, 228, 24}, {229, 228, 25}, {231, 228, 25}, {234, 229, 26},
    {236, 229, 27}, {239, 229, 28}, {241, 229, 29}, {244, 230, 30},
    {246, 230, 32}, {248, 230, 33}, {251, 231, 35}, {253, 231, 37},
};

// Neutral grey for "no data", magenta for unreliable pixels (far from every
// viridis colour).
constexpr std::uint32_t kNoData = 0xa0a0a0;
constexpr std::uint32_t kUnreliable = 0xff00ff;

std::uint32_t Pack(const std::array<unsigned char, 3>& rgb) {
  return (static_cast<std::uint32_t>(rgb[0]) << 16) |
         (static_cast<std::uint32_t>(rgb[1]) << 8) |
         static_cast<std::uint32_t>(rgb[2]);
}

void SetRgb(cairo_t* cr, const std::array<unsigned char, 3>& rgb) {
  cairo_set_source_rgb(cr, rgb[0] / 255.0, rgb[1] / 255.0, rgb[2] / 255.0);
}

void Text(cairo_t* cr, double x, double y, const std::string& s,
          double align = 0.0) {
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, x - align * e.x_advance, y);
  cairo_show_text(cr, s.c_str());
}

// Height at (x, y) in nm (NaN when invalid or non-finite).
struct MapView {
  const cv::Mat& m;
  [[nodiscard]] double Nm(int y, int x) const {
    const double v = m.type() == CV_32FC1
                         ? static_cast<double>(m.at<float>(y, x))
                         : m.at<double>(y, x);
    return std::isfinite(v) ? v * 1e9
                            : std::numeric_limits<double>::quiet_NaN();
  }
};

// A line-plot panel: device box and data ranges.
struct Panel {
  double x0, y0, w, h;
  double xlo, xhi, ylo, yhi;
  [[nodiscard]] double X(double v) const {
    return x0 + (v - xlo) / (xhi - xlo) * w;
  }
  [[nodiscard]] double Y(double v) const {
    return y0 + h - (v - ylo) / (yhi - ylo) * h;
  }
};

void DrawPanel(cairo_t* cr, const Panel& p, const std::vector<double>& u,
               const std::vector<double>& v, const std::string& title,
               const std::string& xlabel) {
  cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, p.x0, p.y0, p.w, p.h);
  cairo_stroke(cr);
  cairo_set_font_size(cr, 11.0);
  for (const double t : NiceTicks(p.xlo, p.xhi)) {
    Text(cr, p.X(t), p.y0 + p.h + 14.0, TickLabel(t), 0.5);
  }
  for (const double t : NiceTicks(p.ylo, p.yhi)) {
    Text(cr, p.x0 - 5.0, p.Y(t) + 4.0, TickLabel(t), 1.0);
    cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
    cairo_move_to(cr, p.x0, p.Y(t));
    cairo_line_to(cr, p.x0 + p.w, p.Y(t));
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
  }
  cairo_set_font_size(cr, 12.0);
  Text(cr, p.x0 + 0.5 * p.w, p.y0 + p.h + 30.0, xlabel, 0.5);
  Text(cr, p.x0, p.y0 - 6.0, title);
  cairo_save(cr);
  cairo_translate(cr, p.x0 - 44.0, p.y0 + 0.5 * p.h);
  cairo_rotate(cr, -M_PI / 2.0);
  Text(cr, 0.0, 0.0, "height (nm)", 0.5);
  cairo_restore(cr);
  // The profile; NaN breaks the line.
  cairo_save(cr);
  cairo_rectangle(cr, p.x0, p.y0, p.w, p.h);
  cairo_clip(cr);
  SetRgb(cr, ViridisRgb(0.25));
  cairo_set_line_width(cr, 1.5);
  bool pen = false;
  for (std::size_t i = 0; i < u.size(); ++i) {
    if (!std::isfinite(v[i])) {
      pen = false;
      continue;
    }
    if (pen) {
      cairo_line_to(cr, p.X(u[i]), p.Y(v[i]));
    } else {
      cairo_move_to(cr, p.X(u[i]), p.Y(v[i]));
      pen = true;
    }
  }
  cairo_stroke(cr);
  cairo_restore(cr);
}

}  // namespace

std::string SurfacePictureOptions::Check() const {
  if (width < 640 || height < 480 || width > 8000 || height > 8000) {
    return "surface picture size must be between 640 x 480 and 8000 x 8000 "
           "px, got " +
           std::to_string(width) + " x " + std::to_string(height);
  }
  if (!std::isfinite(pixel_pitch_m) || pixel_pitch_m < 0.0) {
    return "surface picture pixel pitch must be >= 0";
  }
  return {};
}

std::array<unsigned char, 3> ViridisRgb(double t) {
  if (!std::isfinite(t)) t = 0.0;
  const auto i =
      static_cast<std::size_t>(std::lround(255.0 * std::clamp(t, 0.0, 1.0)));
  return {kViridis[i][0], kViridis[i][1], kViridis[i][2]};
}

cv::Mat RenderSurfacePicture(const cv::Mat& height_m, const cv::Mat& unreliable,
                             const Circle& aperture_px, double wavelength_m,
                             const std::string& title,
                             const SurfacePictureOptions& options) {
  if (const std::string why = options.Check(); !why.empty()) {
    throw InputError(why);
  }
  if (height_m.empty() ||
      (height_m.type() != CV_32FC1 && height_m.type() != CV_64FC1)) {
    throw InputError(
        "surface picture: the height map is empty or not a float image");
  }
  if (!unreliable.empty() &&
      (unreliable.type() != CV_8UC1 || unreliable.size() != height_m.size())) {
    throw InputError(
        "surface picture: the unreliable-pixel mask does not match the map");
  }
  if (!(aperture_px.radius > 0.0) || !std::isfinite(aperture_px.centre.x) ||
      !std::isfinite(aperture_px.centre.y)) {
    throw InputError("surface picture: no aperture");
  }
  if (!(wavelength_m > 0.0) || !std::isfinite(wavelength_m)) {
    throw InputError("surface picture: the wavelength must be > 0");
  }
  const MapView map{height_m};
  const int cols = height_m.cols;
  const int rows = height_m.rows;
  const double fringe_nm = 0.5 * wavelength_m * 1e9;

  // Colour range over the finite pixels; unreliable pixels in the aperture.
  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  long in_aperture = 0;
  long flagged = 0;
  for (int y = 0; y < rows; ++y) {
    for (int x = 0; x < cols; ++x) {
      const double v = map.Nm(y, x);
      if (std::isfinite(v)) {
        lo = std::min(lo, v);
        hi = std::max(hi, v);
      }
    }
    int x0 = 0;
    int x1 = -1;
    RowSpan(aperture_px, y, cols, x0, x1);
    if (x1 >= x0) {
      in_aperture += x1 - x0 + 1;
      if (!unreliable.empty()) {
        flagged += cv::countNonZero(unreliable.row(y).colRange(x0, x1 + 1));
      }
    }
  }
  const bool any = hi >= lo;
  if (!any) {
    lo = -1.0;
    hi = 1.0;
  } else if (hi - lo < 1e-3) {
    lo -= 0.5;
    hi += 0.5;
  }

  // Layout.
  const int w = options.width;
  const int h = options.height;
  constexpr int kMargin = 16;
  constexpr int kTop = 44;
  constexpr int kBottom = 56;
  constexpr int kBarBlock = 170;
  const int profile_w = std::max(260, static_cast<int>(0.38 * w));
  const int side = std::max(
      64,
      std::min(h - kTop - kBottom, w - 2 * kMargin - kBarBlock - profile_w));
  const int map_x = kMargin;
  const int map_y = kTop + 8;
  const double bar_x = map_x + side + 78.0;
  const double bar_w = 22.0;

  const CairoSurface surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, w, h));
  const CairoContext context(cairo_create(surface.get()));
  cairo_t* cr = context.get();
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_surface_flush(surface.get());

  // The map: each picture pixel is the mean of the finite map pixels it
  // covers (no data when fewer than half are finite), magenta when any of
  // them is unreliable.
  const double span = 2.0 * aperture_px.radius + 1.0;
  const double scale = span / side;  // map px per picture px
  const double ox = aperture_px.centre.x - 0.5 * span + 0.5;
  const double oy = aperture_px.centre.y - 0.5 * span + 0.5;
  unsigned char* data = cairo_image_surface_get_data(surface.get());
  const int stride = cairo_image_surface_get_stride(surface.get());
  cv::parallel_for_(cv::Range(0, side), [&](const cv::Range& range) {
    for (int v = range.start; v < range.end; ++v) {
      auto* out = reinterpret_cast<std::uint32_t*>(
          data + static_cast<std::ptrdiff_t>(map_y + v) * stride);
      const int ys0 = static_cast<int>(std::floor(oy + v * scale));
      const int ys1 =
          std::max(ys0 + 1, static_cast<int>(std::floor(oy + (v + 1) * scale)));
      for (int u = 0; u < side; ++u) {
        const int xs0 = static_cast<int>(std::floor(ox + u * scale));
        const int xs1 = std::max(
            xs0 + 1, static_cast<int>(std::floor(ox + (u + 1) * scale)));
        double sum = 0.0;
        int finite = 0;
        bool bad = false;
        for (int ys = std::max(0, ys0); ys < std::min(rows, ys1); ++ys) {
          const unsigned char* flag =
              unreliable.empty() ? nullptr : unreliable.ptr<unsigned char>(ys);
          for (int xs = std::max(0, xs0); xs < std::min(cols, xs1); ++xs) {
            const double z = map.Nm(ys, xs);
            if (!std::isfinite(z)) continue;
            sum += z;
            ++finite;
            if (flag != nullptr && flag[xs] != 0) bad = true;
          }
        }
        std::uint32_t colour = kNoData;
        if (2 * finite >= (ys1 - ys0) * (xs1 - xs0) && finite > 0) {
          colour = bad ? kUnreliable
                       : Pack(ViridisRgb((sum / finite - lo) / (hi - lo)));
        }
        out[map_x + u] = colour;
      }
    }
  });
  cairo_surface_mark_dirty(surface.get());

  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         CAIRO_FONT_WEIGHT_NORMAL);
  // Frame and the profile lines across the aperture.
  cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, map_x - 0.5, map_y - 0.5, side + 1.0, side + 1.0);
  cairo_stroke(cr);
  const double centre_pic = 0.5 * side;
  cairo_set_source_rgba(cr, 1, 1, 1, 0.8);
  const double dash[] = {4.0, 3.0};
  cairo_set_dash(cr, dash, 2, 0.0);
  cairo_move_to(cr, map_x, map_y + centre_pic);
  cairo_line_to(cr, map_x + side, map_y + centre_pic);
  cairo_move_to(cr, map_x + centre_pic, map_y);
  cairo_line_to(cr, map_x + centre_pic, map_y + side);
  cairo_stroke(cr);
  cairo_set_dash(cr, nullptr, 0, 0.0);
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_set_font_size(cr, 12.0);
  Text(cr, map_x + side - 6.0, map_y + centre_pic - 5.0, "H", 1.0);
  Text(cr, map_x + centre_pic + 5.0, map_y + 14.0, "V");

  // Colour bar: nm on the right, fringes (lambda / 2) on the left.
  for (int k = 0; k < side; ++k) {
    SetRgb(cr, ViridisRgb(1.0 - (k + 0.5) / side));
    cairo_rectangle(cr, bar_x, map_y + k, bar_w, 1.0);
    cairo_fill(cr);
  }
  cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
  cairo_rectangle(cr, bar_x - 0.5, map_y - 0.5, bar_w + 1.0, side + 1.0);
  cairo_stroke(cr);
  auto bar_y = [&](double nm) {
    return map_y + side - (nm - lo) / (hi - lo) * side;
  };
  cairo_set_font_size(cr, 11.0);
  for (const double t : NiceTicks(lo, hi)) {
    const double y = bar_y(t);
    cairo_move_to(cr, bar_x + bar_w, y);
    cairo_line_to(cr, bar_x + bar_w + 5.0, y);
    cairo_stroke(cr);
    Text(cr, bar_x + bar_w + 8.0, y + 4.0, TickLabel(t));
  }
  for (const double t : NiceTicks(lo / fringe_nm, hi / fringe_nm)) {
    const double y = bar_y(t * fringe_nm);
    cairo_move_to(cr, bar_x - 5.0, y);
    cairo_line_to(cr, bar_x, y);
    cairo_stroke(cr);
    Text(cr, bar_x - 8.0, y + 4.0, TickLabel(t), 1.0);
  }
  cairo_set_font_size(cr, 12.0);
  Text(cr, bar_x - 8.0, map_y - 8.0, "fringes", 1.0);
  Text(cr, bar_x + bar_w + 8.0, map_y - 8.0, "nm");

  // Profiles through the aperture centre (H: x right, V: y up).
  const bool mm = options.pixel_pitch_m > 0.0;
  const double unit =
      mm ? options.pixel_pitch_m * 1e3 : 1.0 / aperture_px.radius;
  const double extent = mm ? aperture_px.radius * unit : 1.0;
  const std::string xlabel = mm ? "position (mm)" : "normalised radius";
  std::vector<double> hu;
  std::vector<double> hv;
  std::vector<double> vu;
  std::vector<double> vv;
  const int cy = static_cast<int>(std::lround(aperture_px.centre.y));
  const int cx = static_cast<int>(std::lround(aperture_px.centre.x));
  const int xa = std::max(0, static_cast<int>(std::floor(aperture_px.centre.x -
                                                         aperture_px.radius)));
  const int xb = std::min(
      cols - 1,
      static_cast<int>(std::ceil(aperture_px.centre.x + aperture_px.radius)));
  const int ya = std::max(0, static_cast<int>(std::floor(aperture_px.centre.y -
                                                         aperture_px.radius)));
  const int yb = std::min(
      rows - 1,
      static_cast<int>(std::ceil(aperture_px.centre.y + aperture_px.radius)));
  if (cy >= 0 && cy < rows) {
    for (int x = xa; x <= xb; ++x) {
      hu.push_back((x - aperture_px.centre.x) * unit);
      hv.push_back(map.Nm(cy, x));
    }
  }
  if (cx >= 0 && cx < cols) {
    for (int y = yb; y >= ya; --y) {
      vu.push_back((aperture_px.centre.y - y) * unit);
      vv.push_back(map.Nm(y, cx));
    }
  }
  const double px0 = w - kMargin - profile_w + 64.0;
  const double pw = profile_w - 64.0 - 8.0;
  const double ph = 0.5 * (h - kTop - kBottom) - 56.0;
  const double pad = 0.05 * (hi - lo);
  const Panel horizontal{px0,     map_y + 14.0, pw,       ph,
                         -extent, extent,       lo - pad, hi + pad};
  const Panel vertical{px0,    map_y + ph + 82.0, pw,      ph, -extent,
                       extent, lo - pad,          hi + pad};
  DrawPanel(cr, horizontal, hu, hv, "H profile (through the centre, x right)",
            xlabel);
  DrawPanel(cr, vertical, vu, vv, "V profile (through the centre, y up)",
            xlabel);

  // Title and legend.
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         CAIRO_FONT_WEIGHT_BOLD);
  cairo_set_font_size(cr, 17.0);
  Text(cr, kMargin, 28.0, title);
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, 12.0);
  const double legend_y = std::min(map_y + side + 36.0, h - 32.0);
  char line[256];
  if (any) {
    std::snprintf(line, sizeof line,
                  "map range %.4g nm = %.3g fringes (1 fringe = lambda/2 = "
                  "%.4g nm)",
                  hi - lo, (hi - lo) / fringe_nm, fringe_nm);
  } else {
    std::snprintf(line, sizeof line, "no valid heights");
  }
  Text(cr, kMargin, legend_y, line);
  const double percent = in_aperture > 0
                             ? 100.0 * static_cast<double>(flagged) /
                                   static_cast<double>(in_aperture)
                             : 0.0;
  std::snprintf(line, sizeof line,
                "grey: no data    magenta: unreliable unwrapping (%.2g %% of "
                "the aperture)",
                percent);
  Text(cr, kMargin, legend_y + 20.0, line);

  if (cairo_status(cr) != CAIRO_STATUS_SUCCESS) {
    throw OutputError(std::string("surface picture: ") +
                      cairo_status_to_string(cairo_status(cr)));
  }
  cairo_surface_flush(surface.get());
  // RGB24 pixels are native 32-bit words 0x00RRGGBB, one row per stride.
  cv::Mat bgr(h, w, CV_8UC3);
  for (int y = 0; y < h; ++y) {
    const auto* in = reinterpret_cast<const std::uint32_t*>(
        data + static_cast<std::ptrdiff_t>(y) * stride);
    auto* out = bgr.ptr<cv::Vec3b>(y);
    for (int x = 0; x < w; ++x) {
      out[x] = cv::Vec3b(static_cast<unsigned char>(in[x] & 0xff),
                         static_cast<unsigned char>((in[x] >> 8) & 0xff),
                         static_cast<unsigned char>((in[x] >> 16) & 0xff));
    }
  }
  return bgr;
}

void WriteSurfacePicture(const std::filesystem::path& path,
                         const cv::Mat& height_m, const cv::Mat& unreliable,
                         const Circle& aperture_px, double wavelength_m,
                         const std::string& title,
                         const SurfacePictureOptions& options) {
  WriteImage(path, RenderSurfacePicture(height_m, unreliable, aperture_px,
                                        wavelength_m, title, options));
}

}  // namespace figura
