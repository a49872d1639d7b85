#include "report/ring_plot.h"

#include <cairo-svg.h>
#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "core/error.h"
#include "io/atomic_file.h"
#include "report/axis_ticks.h"

namespace figura {
namespace {

constexpr double kWidth = 800.0;
constexpr double kHeight = 600.0;

struct Series {
  std::vector<double> order, r2_mm2, resid;
  std::vector<bool> rejected;
};

// Axis range with a margin, never empty.
void Range(const std::vector<double>& v, double* lo, double* hi) {
  *lo = std::numeric_limits<double>::infinity();
  *hi = -*lo;
  for (double x : v) {
    if (!std::isfinite(x)) continue;
    *lo = std::min(*lo, x);
    *hi = std::max(*hi, x);
  }
  if (!(*hi >= *lo)) {
    *lo = -1.0;
    *hi = 1.0;
  }
  const double pad = std::max(0.05 * (*hi - *lo), 1e-12 + 1e-9 * std::abs(*hi));
  *lo -= pad;
  *hi += pad;
}

struct Panel {
  double x0, y0, w, h;  // device box
  double xlo, xhi, ylo, yhi;
  [[nodiscard]] double X(double v) const {
    return x0 + (v - xlo) / (xhi - xlo) * w;
  }
  [[nodiscard]] double Y(double v) const {
    return y0 + h - (v - ylo) / (yhi - ylo) * h;
  }
};

void Text(cairo_t* cr, double x, double y, const std::string& s,
          double align = 0.0) {
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, x - align * e.width, y);
  cairo_show_text(cr, s.c_str());
}

void Frame(cairo_t* cr, const Panel& p, const std::string& xlabel,
           const std::string& ylabel) {
  cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, p.x0, p.y0, p.w, p.h);
  cairo_stroke(cr);
  cairo_set_font_size(cr, 11.0);
  for (const double xv : NiceTicks(p.xlo, p.xhi)) {
    Text(cr, p.X(xv), p.y0 + p.h + 14.0, TickLabel(xv), 0.5);
  }
  for (const double yv : NiceTicks(p.ylo, p.yhi)) {
    Text(cr, p.x0 - 6.0, p.Y(yv) + 4.0, TickLabel(yv), 1.0);
  }
  cairo_set_font_size(cr, 12.0);
  if (!xlabel.empty())
    Text(cr, p.x0 + 0.5 * p.w, p.y0 + p.h + 30.0, xlabel, 0.5);
  cairo_save(cr);
  cairo_move_to(cr, p.x0 - 62.0, p.y0 + 0.5 * p.h);
  cairo_rotate(cr, -M_PI / 2.0);
  cairo_text_extents_t e;
  cairo_text_extents(cr, ylabel.c_str(), &e);
  cairo_rel_move_to(cr, -0.5 * e.width, 0.0);
  cairo_show_text(cr, ylabel.c_str());
  cairo_restore(cr);
}

void Draw(cairo_t* cr, const Series& s, const RingsResult& r,
          const RingFitOptions& options) {
  const RingFitResult& f = r.fit;
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         CAIRO_FONT_WEIGHT_NORMAL);
  Panel top{90, 50, kWidth - 120, 330, 0, 0, 0, 0};
  Panel bottom{90, 440, kWidth - 120, 110, 0, 0, 0, 0};
  Range(s.order, &top.xlo, &top.xhi);
  bottom.xlo = top.xlo;
  bottom.xhi = top.xhi;
  Range(s.r2_mm2, &top.ylo, &top.yhi);
  Range(s.resid, &bottom.ylo, &bottom.yhi);
  const double rmax = std::max(std::abs(bottom.ylo), std::abs(bottom.yhi));
  bottom.ylo = -rmax;
  bottom.yhi = rmax;

  cairo_set_font_size(cr, 14.0);
  cairo_set_source_rgb(cr, 0, 0, 0);
  char title[160];
  std::snprintf(title, sizeof title, "%s = %.6g mm%s",
                f.test_plate ? "part radius" : "R", f.radius_m * 1e3,
                f.has_uncertainty ? "" : " (no uncertainty)");
  std::string t = title;
  if (f.has_uncertainty) {
    char u[80];
    std::snprintf(u, sizeof u, ", U95 = %.3g mm (k = %.3g)",
                  f.radius_u95_m * 1e3, f.coverage_factor);
    t += u;
  }
  Text(cr, top.x0, 30.0, t);
  const char* unit = r.from_diameters ? "um" : "px";
  Frame(cr, top, "", "r\u00B2 (mm\u00B2)");
  Frame(cr, bottom, "fringe order (relative, dark at integer + d)",
        std::string("residual (") + unit + ")");

  // Fit line: the model's r^2 at each order for the mean curvature (the
  // conic made isotropic), with the exact higher-order sag terms, px^2 ->
  // mm^2.
  const double pitch_mm = r.from_diameters ? 1e-3
                                           : options.pixel_pitch.metres *
                                                 1e3;  // diameters: 1 um units
  RingFitResult mean_fit = f;
  const double a_mean = 0.5 * (f.quad_px2[0] + f.quad_px2[2]);
  mean_fit.quad_px2[0] = mean_fit.quad_px2[2] = a_mean;
  mean_fit.quad_px2[1] = 0.0;
  cairo_set_source_rgb(cr, 0.1, 0.3, 0.8);
  cairo_set_line_width(cr, 1.5);
  bool first = true;
  for (int i = 0; i <= 100; ++i) {
    const double m = top.xlo + (top.xhi - top.xlo) * i / 100.0;
    const double r_px = FittedRadiusPx(mean_fit, m, 0.0);
    const double r2 = r_px * r_px * pitch_mm * pitch_mm;
    if (!(r2 >= top.ylo && r2 <= top.yhi)) continue;
    if (first) {
      cairo_move_to(cr, top.X(m), top.Y(r2));
      first = false;
    } else {
      cairo_line_to(cr, top.X(m), top.Y(r2));
    }
  }
  cairo_stroke(cr);
  // Zero line of the residuals.
  cairo_set_source_rgb(cr, 0.5, 0.5, 0.5);
  cairo_move_to(cr, bottom.x0, bottom.Y(0.0));
  cairo_line_to(cr, bottom.x0 + bottom.w, bottom.Y(0.0));
  cairo_stroke(cr);
  // Points: used in dark grey, rejected in red.
  for (std::size_t i = 0; i < s.order.size(); ++i) {
    if (s.rejected[i]) {
      cairo_set_source_rgb(cr, 0.85, 0.1, 0.1);
    } else {
      cairo_set_source_rgb(cr, 0.15, 0.15, 0.15);
    }
    if (std::isfinite(s.r2_mm2[i])) {
      cairo_arc(cr, top.X(s.order[i]), top.Y(s.r2_mm2[i]), 2.0, 0, 2 * M_PI);
      cairo_fill(cr);
    }
    if (std::isfinite(s.resid[i])) {
      cairo_arc(cr, bottom.X(s.order[i]), bottom.Y(s.resid[i]), 2.0, 0,
                2 * M_PI);
      cairo_fill(cr);
    }
  }
}

}  // namespace

void WriteRingPlot(const std::filesystem::path& path, const RingsResult& result,
                   const RingFitOptions& options) {
  if (result.status == Status::kError) {
    throw InputError(path.string() + ": no plot without a ring fit");
  }
  std::string ext = path.extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) {
    return static_cast<char>(std::tolower(c));
  });
  if (ext != ".svg" && ext != ".png") {
    throw InputError(path.string() + ": a plot is written as .svg or .png");
  }
  // The points: from the fit input (image) or the fit's own residuals.
  Series s;
  const RingFitResult& f = result.fit;
  const double pitch_mm =
      result.from_diameters ? 1e-3 : options.pixel_pitch.metres * 1e3;
  for (std::size_t i = 0; i < result.fit_points.size(); ++i) {
    const RingFitPoint& p = result.fit_points[i];
    const double r =
        std::hypot(p.x_px - f.centre_px.x, p.y_px - f.centre_px.y) * pitch_mm;
    s.order.push_back(p.order);
    s.r2_mm2.push_back(r * r);
    s.resid.push_back(i < f.residuals_px.size()
                          ? f.residuals_px[i]
                          : std::numeric_limits<double>::quiet_NaN());
    s.rejected.push_back(i < f.outlier.size() && f.outlier[i]);
  }
  WriteViaTemp(path, [&](const std::filesystem::path& temp) {
    cairo_surface_t* surface = nullptr;
    if (ext == ".svg") {
      surface = cairo_svg_surface_create(temp.c_str(), kWidth, kHeight);
    } else {
      surface = cairo_image_surface_create(CAIRO_FORMAT_RGB24,
                                           static_cast<int>(kWidth),
                                           static_cast<int>(kHeight));
    }
    std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> guard(
        surface, &cairo_surface_destroy);
    cairo_t* cr = cairo_create(surface);
    Draw(cr, s, result, options);
    const cairo_status_t draw_status = cairo_status(cr);
    cairo_destroy(cr);
    if (draw_status != CAIRO_STATUS_SUCCESS) {
      throw OutputError(path.string() + ": " +
                        cairo_status_to_string(draw_status));
    }
    cairo_status_t st = CAIRO_STATUS_SUCCESS;
    if (ext == ".png") {
      st = cairo_surface_write_to_png(surface, temp.c_str());
    } else {
      cairo_surface_finish(surface);
      st = cairo_surface_status(surface);
    }
    if (st != CAIRO_STATUS_SUCCESS) {
      throw OutputError(path.string() + ": " + cairo_status_to_string(st));
    }
  });
}

}  // namespace figura
