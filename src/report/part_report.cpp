#include "report/part_report.h"

#include <cairo-pdf.h>
#include <cairo.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <initializer_list>
#include <opencv2/imgproc.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "core/error.h"
#include "core/version.h"
#include "io/atomic_file.h"
#include "report/cairo_util.h"

namespace figura {
namespace {

// A4 portrait in PostScript points (ISO 216: 210 mm x 297 mm).
constexpr double kPageW = 595.28;
constexpr double kPageH = 841.89;
constexpr double kMargin = 36.0;
constexpr double kContentW = kPageW - 2.0 * kMargin;
// Pictures are embedded (losslessly, Flate) with at most this many pixels on
// their longest side: about 220 dpi across half the page width, sharp in
// print while the file stays about 1-2 MB.
constexpr int kMaxPicturePx = 800;
constexpr const char* kDash = "\u2014";
constexpr const char* kSans = "DejaVu Sans";
constexpr const char* kMono = "DejaVu Sans Mono";

// --- JSON access: any field may be missing, null or of another type. -------

const nlohmann::json* Find(const nlohmann::json& j,
                           std::initializer_list<const char*> path) {
  const nlohmann::json* node = &j;
  for (const char* key : path) {
    if (!node->is_object()) return nullptr;
    const auto it = node->find(key);
    if (it == node->end()) return nullptr;
    node = &*it;
  }
  return node;
}

// A field as display text: strings as they are, numbers compactly, booleans
// as yes/no; missing, null or empty -> em dash.
std::string Text(const nlohmann::json* v) {
  if (v == nullptr || v->is_null()) return kDash;
  if (v->is_string()) {
    const std::string s = CleanUtf8(v->get<std::string>());
    return s.empty() ? kDash : s;
  }
  if (v->is_boolean()) return v->get<bool>() ? "yes" : "no";
  if (v->is_number()) {
    const double d = v->get<double>();
    if (!std::isfinite(d)) return kDash;
    if (v->is_number_integer() || v->is_number_unsigned()) return v->dump();
    return FormatNumber(d, 6);
  }
  return CleanUtf8(v->dump());
}

std::string Text(const nlohmann::json& j,
                 std::initializer_list<const char*> path) {
  return Text(Find(j, path));
}

std::optional<double> Number(const nlohmann::json* v) {
  if (v == nullptr || !v->is_number()) return std::nullopt;
  const double d = v->get<double>();
  if (!std::isfinite(d)) return std::nullopt;
  return d;
}

std::optional<double> Number(const nlohmann::json& j,
                             std::initializer_list<const char*> path) {
  return Number(Find(j, path));
}

// --- Drawing helpers. --------------------------------------------------------

struct Font {
  double size = 9.0;
  bool bold = false;
  bool mono = false;
};

void SetFont(cairo_t* cr, const Font& f) {
  cairo_select_font_face(
      cr, f.mono ? kMono : kSans, CAIRO_FONT_SLANT_NORMAL,
      f.bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, f.size);
}

double Width(cairo_t* cr, const std::string& s) {
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  return e.x_advance;
}

// `s` shortened with an ellipsis (at a character boundary) to fit `max_w`.
std::string Fit(cairo_t* cr, const std::string& s, double max_w) {
  if (Width(cr, s) <= max_w) return s;
  std::vector<std::size_t> cuts = CharBoundaries(s);
  // Binary search over the character boundaries for the longest prefix.
  std::size_t lo = 0;
  std::size_t hi = cuts.size();
  while (hi - lo > 1) {
    const std::size_t mid = (lo + hi) / 2;
    if (Width(cr, s.substr(0, cuts[mid]) + "\u2026") <= max_w) {
      lo = mid;
    } else {
      hi = mid;
    }
  }
  return s.substr(0, cuts[lo]) + "\u2026";
}

// Shows `s` at (x, baseline y), fitted to `max_w`; align 0 left, 0.5 centre,
// 1 right.
void Show(cairo_t* cr, double x, double y, const std::string& s, double max_w,
          double align = 0.0) {
  const std::string t = Fit(cr, s, max_w);
  cairo_move_to(cr, x + align * (max_w - Width(cr, t)), y);
  cairo_show_text(cr, t.c_str());
}

// Replaces the last line of a wrapped block by itself plus an ellipsis,
// shortened to fit.
std::string WithEllipsis(cairo_t* cr, const std::string& line, double max_w) {
  const std::vector<std::size_t> cuts = CharBoundaries(line);
  for (std::size_t k = cuts.size(); k-- > 0;) {
    std::string t = line.substr(0, cuts[k]) + "\u2026";
    if (Width(cr, t) <= max_w) return t;
  }
  return "\u2026";
}

// Splits `s` into lines no wider than `max_w` (at spaces where possible,
// inside long words otherwise), at most `max_lines`; the last shown line
// ends with an ellipsis when text was left out.
std::vector<std::string> Wrap(cairo_t* cr, const std::string& s, double max_w,
                              int max_lines) {
  std::vector<std::string> lines;
  const std::vector<std::size_t> cuts = CharBoundaries(s);
  std::size_t start = 0;  // index into cuts
  while (start + 1 < cuts.size() &&
         static_cast<int>(lines.size()) < max_lines) {
    // Longest run of characters from `start` that fits.
    std::size_t end = start + 1;
    while (end + 1 < cuts.size() &&
           Width(cr, s.substr(cuts[start], cuts[end + 1] - cuts[start])) <=
               max_w) {
      ++end;
    }
    std::size_t brk = end;
    if (end + 1 < cuts.size()) {
      // Not the end of the text: break before a space or after a slash
      // (paths) when that keeps the line at least half full; else inside
      // the word.
      for (std::size_t k = end; k > start + 1 && 2 * (k - start) >= end - start;
           --k) {
        if (s[cuts[k]] == ' ' || s[cuts[k] - 1] == '/') {
          brk = k;
          break;
        }
      }
    }
    lines.push_back(s.substr(cuts[start], cuts[brk] - cuts[start]));
    start = brk;
    while (start + 1 < cuts.size() && s[cuts[start]] == ' ') ++start;
  }
  if (start + 1 < cuts.size() && !lines.empty()) {
    lines.back() = WithEllipsis(cr, lines.back(), max_w);
  }
  return lines;
}

// Draws wrapped text from baseline `y`; returns the baseline after the last
// line.
double Paragraph(cairo_t* cr, double x, double y, const std::string& s,
                 double max_w, int max_lines, double leading) {
  for (const std::string& line : Wrap(cr, s, max_w, max_lines)) {
    cairo_move_to(cr, x, y);
    cairo_show_text(cr, line.c_str());
    y += leading;
  }
  return y;
}

void Grey(cairo_t* cr, double level) {
  cairo_set_source_rgb(cr, level, level, level);
}

// A section title with a hairline under it; returns the next baseline.
double Section(cairo_t* cr, double y, const std::string& title) {
  SetFont(cr, {8.5, true});
  Grey(cr, 0.15);
  Show(cr, kMargin, y, title, kContentW);
  cairo_set_line_width(cr, 0.5);
  Grey(cr, 0.6);
  cairo_move_to(cr, kMargin, y + 3.0);
  cairo_line_to(cr, kMargin + kContentW, y + 3.0);
  cairo_stroke(cr);
  Grey(cr, 0.0);
  return y + 13.0;
}

// A table row: cells with their x offsets (from kMargin) and widths;
// numeric cells right-aligned.
struct Cell {
  std::string text;
  double x = 0.0;
  double w = 0.0;
  bool right = false;
};

void Row(cairo_t* cr, double y, const std::vector<Cell>& cells) {
  for (const Cell& c : cells) {
    Show(cr, kMargin + c.x, y, c.text, c.w - 4.0, c.right ? 1.0 : 0.0);
  }
}

// --- Content. ---------------------------------------------------------------

// A value with its expanded uncertainty, both rounded to the uncertainty's
// two significant digits (GUM JCGM 100:2008, 7.2.6 [practice]).
struct ValueText {
  std::string value;
  std::string uncertainty;
};

ValueText WithUncertainty(std::optional<double> v, std::optional<double> u95,
                          std::optional<double> u, std::string_view u_label) {
  ValueText t{kDash, kDash};
  if (!v) return t;
  const std::optional<double> shown = u95 ? u95 : u;
  if (shown && *shown > 0.0) {
    const int decimals = DecimalsForUncertainty(*shown);
    t.value = FormatFixed(*v, decimals);
    t.uncertainty =
        std::string(u95 ? "\u00B1 " : std::string(u_label) + " = ") +
        FormatFixed(*shown, decimals);
  } else {
    t.value = FormatNumber(*v, 6);
  }
  return t;
}

// One line of the key numbers table.
struct KeyNumber {
  const char* label;
  const char* key;      // value field
  const char* u95_key;  // expanded uncertainty field ("" none)
  const char* u_key;    // standard uncertainty field ("" none)
  const char* unit;
};

// Rings result fields (src/fringe/ring_analysis.cpp RingsJson).
const std::vector<KeyNumber>& RingNumbers() {
  static const std::vector<KeyNumber> k = {
      {"radius of curvature", "radius_of_curvature_mm",
       "radius_of_curvature_u95_mm", "radius_of_curvature_u_mm", "mm"},
      {"part radius (against test plate)", "part_radius_mm",
       "part_radius_u95_mm", "part_radius_u_mm", "mm"},
      {"test plate radius", "reference_radius_mm", "", "", "mm"},
      {"radius deviation from the plate", "radius_deviation_um", "", "",
       "\u00B5m"},
      {"aperture diameter", "aperture_diameter_mm", "", "", "mm"},
      {"sagitta over the aperture", "sag_um", "", "", "\u00B5m"},
      {"power", "power_fringes", "", "power_u_fringes", "fringes"},
      {"astigmatism", "astigmatism_fringes", "", "astigmatism_u_fringes",
       "fringes"},
      {"astigmatism axis", "astigmatism_axis_deg", "", "", "\u00B0"},
      {"order offset e", "order_offset", "", "order_offset_u", "orders"},
      {"rings used", "ring_count", "", "", ""},
      {"fit residual RMS", "residual_rms_fringes", "", "", "fringes"},
      {"fringe visibility", "visibility", "", "", ""},
  };
  return k;
}

// Map result fields (src/surface/surface_map.h MapJson).
const std::vector<KeyNumber>& MapNumbers() {
  static const std::vector<KeyNumber> k = {
      {"peak-to-valley", "pv_nm", "pv_u95_nm", "pv_u_nm", "nm"},
      {"RMS", "rms_nm", "rms_u95_nm", "rms_u_nm", "nm"},
      {"power", "power_fringes", "power_u95_fringes", "power_u_fringes",
       "fringes"},
      {"irregularity", "irregularity_fringes", "irregularity_u95_fringes",
       "irregularity_u_fringes", "fringes"},
      {"rotationally symmetric irregularity", "rsi_fringes", "rsi_u95_fringes",
       "rsi_u_fringes", "fringes"},
      {"peak-to-valley", "pv_waves", "", "", "waves"},
      {"RMS", "rms_waves", "", "", "waves"},
      {"aperture diameter", "aperture_diameter_mm", "", "", "mm"},
  };
  return k;
}

// Flattens the settings object into "a.b: value" lines.
void Flatten(const nlohmann::json& j, const std::string& prefix,
             std::vector<std::string>* out) {
  if (j.is_object()) {
    for (const auto& [k, v] : j.items()) {
      Flatten(v, prefix.empty() ? k : prefix + "." + k, out);
    }
    return;
  }
  std::string value;
  if (j.is_array()) {
    value = "[";
    for (std::size_t i = 0; i < j.size(); ++i) {
      if (i) value += ", ";
      value += Text(&j[i]);
    }
    value += "]";
  } else {
    value = Text(&j);
  }
  out->push_back(CleanUtf8(prefix) + ": " + value);
}

// Cautions printed at the foot of every page (our wording).
constexpr const char* kCautions =
    "Cautions: spectral and discharge lamps run hot and some emit ultraviolet "
    "light; lasers need the controls of their class; test plates and lenses "
    "have sharp edges and must be handled clean and cool. Follow the safety "
    "codes that apply where you work. This page records a measurement made "
    "by software: accepting or rejecting the part needs the sign-off of a "
    "qualified person under your quality system.";

// The ISO 8601 date for CREATE_DATE from part.date ("YYYY-MM-DD" or
// "YYYY-MM-DDThh:mm:ss" with an optional "Z" or "+hh:mm"); empty if it is
// neither.
std::string PdfDate(const std::string& date) {
  auto digits = [&](std::size_t pos, std::size_t n) {
    if (pos + n > date.size()) return false;
    for (std::size_t i = pos; i < pos + n; ++i) {
      if (!std::isdigit(static_cast<unsigned char>(date[i]))) return false;
    }
    return true;
  };
  if (!(digits(0, 4) && date.size() >= 10 && date[4] == '-' && digits(5, 2) &&
        date[7] == '-' && digits(8, 2))) {
    return {};
  }
  if (date.size() == 10) return date + "T00:00:00";
  if (!(date.size() >= 19 && (date[10] == 'T' || date[10] == ' ') &&
        digits(11, 2) && date[13] == ':' && digits(14, 2) && date[16] == ':' &&
        digits(17, 2))) {
    return {};
  }
  std::string out = date.substr(0, 10) + "T" + date.substr(11, 8);
  const std::string zone = date.substr(19);
  if (zone == "Z" || (zone.size() == 6 && (zone[0] == '+' || zone[0] == '-') &&
                      digits(20, 2) && zone[3] == ':' && digits(23, 2))) {
    out += zone;
  } else if (!zone.empty()) {
    return {};
  }
  return out;
}

// Draws `image` scaled into the box (keeping its aspect ratio, centred) with
// a caption above; an empty image draws nothing.
void Picture(cairo_t* cr, const cv::Mat& image, double x, double y, double w,
             double h, const std::string& caption) {
  if (image.empty()) return;
  SetFont(cr, {7.5, false});
  Grey(cr, 0.3);
  Show(cr, x, y + 8.0, caption, w);
  y += 12.0;
  h -= 12.0;
  cv::Mat small = image;
  const int longest = std::max(image.cols, image.rows);
  if (longest > kMaxPicturePx) {
    const double f = static_cast<double>(kMaxPicturePx) / longest;
    cv::resize(image, small,
               cv::Size(std::max(1, static_cast<int>(image.cols * f)),
                        std::max(1, static_cast<int>(image.rows * f))),
               0, 0, cv::INTER_AREA);
  }
  const CairoSurface surface = SurfaceFromMat(small);
  const double sw = small.cols;
  const double sh = small.rows;
  const double scale = std::min(w / sw, h / sh);
  const double dx = x + 0.5 * (w - sw * scale);
  const double dy = y + 0.5 * (h - sh * scale);
  cairo_save(cr);
  cairo_translate(cr, dx, dy);
  cairo_scale(cr, scale, scale);
  cairo_set_source_surface(cr, surface.get(), 0.0, 0.0);
  cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_GOOD);
  cairo_rectangle(cr, 0.0, 0.0, sw, sh);
  cairo_fill(cr);
  cairo_restore(cr);
  cairo_set_line_width(cr, 0.5);
  Grey(cr, 0.5);
  cairo_rectangle(cr, dx, dy, sw * scale, sh * scale);
  cairo_stroke(cr);
}

void FillStyle(cairo_t* cr, const VerdictStyle& s) {
  cairo_set_source_rgb(cr, s.fill_r, s.fill_g, s.fill_b);
}
void TextStyle(cairo_t* cr, const VerdictStyle& s) {
  cairo_set_source_rgb(cr, s.text_r, s.text_g, s.text_b);
}

// The header band; returns the y below it.
double Header(cairo_t* cr, const nlohmann::json& r) {
  const double top = 26.0;
  const double h = 62.0;
  Grey(cr, 0.92);
  cairo_rectangle(cr, kMargin, top, kContentW, h);
  cairo_fill(cr);
  const double col = kContentW / 3.0;
  const std::pair<const char*, std::string> fields[2][3] = {
      {{"Lot", Text(r, {"part", "lot"})},
       {"Part", Text(r, {"part", "part"})},
       {"Serial", Text(r, {"part", "serial"})}},
      {{"Date", Text(r, {"part", "date"})},
       {"Operator", Text(r, {"part", "operator"})},
       {"Tool",
        Text(r, {"tool", "name"}) + " " + Text(r, {"tool", "version"})}}};
  for (int row = 0; row < 2; ++row) {
    for (int c = 0; c < 3; ++c) {
      const double x = kMargin + 8.0 + c * col;
      const double y = top + 12.0 + row * 27.0;
      SetFont(cr, {6.5, false});
      Grey(cr, 0.35);
      Show(cr, x, y, fields[row][c].first, col - 12.0);
      SetFont(cr, {11.0, true});
      Grey(cr, 0.0);
      Show(cr, x, y + 12.5, fields[row][c].second, col - 12.0);
    }
  }
  SetFont(cr, {6.5, false});
  Grey(cr, 0.35);
  const std::string analysis = Text(r, {"analysis"});
  Show(cr, kMargin, top - 6.0,
       std::string("figura part report") +
           (analysis == kDash ? "" : " \u00B7 analysis: " + analysis),
       kContentW);
  return top + h + 10.0;
}

// The verdict box and, beside it, the tolerance and decision rule (or, for
// an error, why there is no result); returns the y below.
double VerdictBlock(cairo_t* cr, double y, const nlohmann::json& r,
                    const std::string& verdict) {
  const double box_w = 170.0;
  const double box_h = 60.0;
  const VerdictStyle style = StyleOfVerdict(verdict);
  FillStyle(cr, style);
  cairo_rectangle(cr, kMargin, y, box_w, box_h);
  cairo_fill_preserve(cr);
  cairo_set_line_width(cr, 1.0);
  Grey(cr, 0.0);
  cairo_stroke(cr);
  TextStyle(cr, style);
  SetFont(cr, {7.0, false});
  Show(cr, kMargin + 8.0, y + 11.0, "VERDICT", box_w - 16.0);
  std::string word = verdict;
  std::transform(word.begin(), word.end(), word.begin(), [](unsigned char c) {
    return static_cast<char>(std::toupper(c));
  });
  double size = 28.0;
  SetFont(cr, {size, true});
  while (size > 10.0 && Width(cr, word) > box_w - 16.0) {
    size -= 1.0;
    SetFont(cr, {size, true});
  }
  Show(cr, kMargin + 8.0, y + 22.0 + 0.5 * (box_h - 22.0) + 0.35 * size, word,
       box_w - 16.0, 0.5);

  const double x = kMargin + box_w + 12.0;
  const double w = kContentW - box_w - 12.0;
  double ty = y + 12.0;
  Grey(cr, 0.0);
  if (verdict == "error") {
    SetFont(cr, {10.5, true});
    Show(cr, x, ty, "No result: the analysis stopped.", w);
    ty += 14.0;
    SetFont(cr, {8.5, false});
    const nlohmann::json* msgs = Find(r, {"status", "messages"});
    std::string why;
    if (msgs != nullptr && msgs->is_array()) {
      for (const auto& m : *msgs) {
        why += (why.empty() ? "" : " \u00B7 ") + Text(&m);
      }
    }
    Paragraph(cr, x, ty, why.empty() ? "No reason was recorded." : why, w, 4,
              10.5);
    return y + box_h + 10.0;
  }
  const nlohmann::json* conf = Find(r, {"conformance"});
  SetFont(cr, {11.0, true});
  Show(cr, x, ty, "Tolerance (ISO 10110-5): " + Text(r, {"tolerance", "text"}),
       w);
  ty += 13.0;
  if (conf == nullptr || !conf->is_object()) {
    SetFont(cr, {8.5, false});
    Paragraph(cr, x, ty,
              "No tolerance was applied to this part, so there is no verdict.",
              w, 2, 10.5);
    return y + box_h + 10.0;
  }
  SetFont(cr, {8.5, true});
  Show(cr, x, ty, "Decision rule: " + Text(*conf, {"decision_rule"}), w);
  ty += 10.5;
  SetFont(cr, {7.5, false});
  Grey(cr, 0.2);
  Paragraph(cr, x, ty, Text(*conf, {"decision_rule_text"}), w, 3, 9.0);
  Grey(cr, 0.0);
  return y + box_h + 10.0;
}

// Margins per toleranced characteristic; returns the y below.
double MarginTable(cairo_t* cr, double y, const nlohmann::json& r) {
  const nlohmann::json* items = Find(r, {"conformance", "characteristics"});
  if (items == nullptr || !items->is_array() || items->empty()) return y;
  y = Section(cr, y,
              "Margins per characteristic (nm of surface; fringes at the "
              "tolerance wavelength; negative margin = outside)");
  // Column x offsets and widths (sum = content width).
  const double xs[] = {0, 110, 168, 232, 284, 344, 408, 463};
  const double ws[] = {110, 58, 64, 52, 60, 64, 55, kContentW - 463};
  SetFont(cr, {7.0, true});
  Grey(cr, 0.3);
  const char* heads[] = {"characteristic", "limit (nm)",  "value (nm)",
                         "U95 (nm)",       "margin (nm)", "guarded (nm)",
                         "margin (fr)",    "verdict"};
  std::vector<Cell> head;
  head.reserve(8);
  for (int i = 0; i < 8; ++i)
    head.push_back({heads[i], xs[i], ws[i], i > 0 && i < 7});
  Row(cr, y, head);
  y += 10.5;
  std::vector<std::string> reasons;
  int shown = 0;
  for (const auto& c : *items) {
    if (shown == 8) break;
    ++shown;
    const std::string v = Text(c, {"verdict"});
    const VerdictStyle st = StyleOfVerdict(v);
    FillStyle(cr, st);
    cairo_rectangle(cr, kMargin + xs[7], y - 7.5, ws[7], 10.0);
    cairo_fill(cr);
    const auto nm = [&](const char* key) {
      const std::optional<double> d = Number(c, {key});
      return d ? FormatFixed(*d, 1) : std::string(kDash);
    };
    const bool two = Find(c, {"two_sided"}) != nullptr &&
                     Find(c, {"two_sided"})->is_boolean() &&
                     Find(c, {"two_sided"})->get<bool>();
    const std::optional<double> lim = Number(c, {"limit_nm"});
    const std::optional<double> mf = Number(c, {"margin_fringes"});
    std::vector<Cell> cells = {
        {Text(c, {"symbol"}) + "  " + Text(c, {"key"}), xs[0], ws[0], false},
        {lim ? std::string(two ? "\u00B1 " : "\u2264 ") + FormatFixed(*lim, 1)
             : std::string(kDash),
         xs[1], ws[1], true},
        {nm("value_nm"), xs[2], ws[2], true},
        {nm("u95_nm"), xs[3], ws[3], true},
        {nm("margin_nm"), xs[4], ws[4], true},
        {nm("guarded_margin_nm"), xs[5], ws[5], true},
        {mf ? FormatFixed(*mf, 2) : std::string(kDash), xs[6], ws[6], true},
    };
    SetFont(cr, {8.0, false});
    Grey(cr, 0.0);
    Row(cr, y, cells);
    SetFont(cr, {8.0, true});
    TextStyle(cr, st);
    Show(cr, kMargin + xs[7] + 3.0, y, v, ws[7] - 4.0);
    const nlohmann::json* reason = Find(c, {"reason"});
    if (reason != nullptr && reason->is_string() &&
        !reason->get<std::string>().empty()) {
      reasons.push_back(Text(c, {"symbol"}) + ": " + Text(reason));
    }
    y += 10.5;
  }
  Grey(cr, 0.25);
  SetFont(cr, {7.0, false});
  for (std::size_t i = 0; i < reasons.size() && i < 3; ++i) {
    y = Paragraph(cr, kMargin, y, reasons[i], kContentW, 1, 8.5);
  }
  Grey(cr, 0.0);
  return y + 4.0;
}

// Warnings of the analysis and of the conformance check; returns the y below.
double Notes(cairo_t* cr, double y, const nlohmann::json& r) {
  std::vector<std::string> notes;
  for (const char* block : {"status", "conformance_status"}) {
    const nlohmann::json* msgs = Find(r, {block, "messages"});
    if (msgs == nullptr || !msgs->is_array()) continue;
    for (const auto& m : *msgs) notes.push_back(Text(&m));
  }
  if (notes.empty()) return y;
  y = Section(cr, y, "Notes");
  SetFont(cr, {7.5, false});
  int lines = 0;
  std::size_t shown = 0;
  for (const std::string& n : notes) {
    if (lines >= 5) break;
    ++shown;
    const double before = y;
    y = Paragraph(cr, kMargin, y, "\u2022 " + n, kContentW,
                  std::min(2, 5 - lines), 9.0);
    lines += static_cast<int>(std::lround((y - before) / 9.0));
  }
  if (shown < notes.size()) {
    Grey(cr, 0.3);
    Show(cr, kMargin, y,
         "\u2026 " + std::to_string(notes.size() - shown) +
             " more notes in the result JSON",
         kContentW);
    Grey(cr, 0.0);
    y += 9.0;
  }
  return y + 3.0;
}

// The key numbers with uncertainties and units; returns the y below.
double KeyNumbers(cairo_t* cr, double y, const nlohmann::json& r) {
  const bool map = Text(r, {"analysis"}) == "map" ||
                   (Find(r, {"pv_nm"}) != nullptr &&
                    Find(r, {"radius_of_curvature_mm"}) == nullptr);
  const std::vector<KeyNumber>& rows = map ? MapNumbers() : RingNumbers();
  y = Section(cr, y, "Key numbers");
  const double xs[] = {0, 200, 310, 430};
  const double ws[] = {200, 110, 120, kContentW - 430};
  SetFont(cr, {7.0, true});
  Grey(cr, 0.3);
  Row(cr, y,
      {{"quantity", xs[0], ws[0], false},
       {"value", xs[1], ws[1], true},
       {"uncertainty", xs[2], ws[2], true},
       {"  unit", xs[3], ws[3], false}});
  y += 10.5;
  Grey(cr, 0.0);
  bool first = true;
  for (const KeyNumber& k : rows) {
    const bool present = Find(r, {k.key}) != nullptr;
    if (!present && !first) continue;
    first = false;
    const std::optional<double> u95 =
        *k.u95_key ? Number(r, {k.u95_key}) : std::nullopt;
    const std::optional<double> u =
        *k.u_key ? Number(r, {k.u_key}) : std::nullopt;
    const ValueText t = WithUncertainty(Number(r, {k.key}), u95, u, "u");
    SetFont(cr, {8.5, false});
    Row(cr, y,
        {{k.label, xs[0], ws[0], false},
         {t.value, xs[1], ws[1], true},
         {t.uncertainty, xs[2], ws[2], true},
         {std::string("  ") + k.unit, xs[3], ws[3], false}});
    y += 10.5;
  }
  SetFont(cr, {6.8, false});
  Grey(cr, 0.25);
  std::string note =
      "\u00B1 values are expanded uncertainties (about 95 %); u = standard "
      "uncertainty.";
  if (const std::optional<double> k = Number(r, {"coverage_factor"})) {
    note += " Coverage factor k = " + FormatNumber(*k, 3) + ".";
  }
  const nlohmann::json* method = Find(r, {"uncertainty_method"});
  if (method != nullptr && method->is_string()) {
    note += " Method: " + Text(method);
  }
  y = Paragraph(cr, kMargin, y, note, kContentW, 2, 8.0);
  // Map: the leading Zernike terms.
  const nlohmann::json* z = Find(r, {"zernike"});
  if (z != nullptr && z->is_array() && !z->empty()) {
    std::string terms = "Zernike terms (nm): ";
    for (std::size_t i = 0; i < z->size() && i < 15; ++i) {
      const auto& t = (*z)[i];
      terms += (i ? ", " : "") + std::string("Z") + Text(t, {"j"}) + " (" +
               Text(t, {"n"}) + ", " + Text(t, {"m"}) + ") " +
               (Number(t, {"coefficient_nm"})
                    ? FormatFixed(*Number(t, {"coefficient_nm"}), 1)
                    : std::string(kDash));
    }
    y = Paragraph(cr, kMargin, y, terms, kContentW, 2, 8.0);
  }
  Grey(cr, 0.0);
  return y + 4.0;
}

// Settings in two columns of small type between y and y_end.
void Settings(cairo_t* cr, double y, double y_end, const nlohmann::json& r) {
  std::vector<std::string> lines;
  const nlohmann::json* s = Find(r, {"settings"});
  if (s != nullptr) Flatten(*s, "", &lines);
  if (lines.empty()) lines.emplace_back(kDash);
  y = Section(cr, y, "Settings");
  SetFont(cr, {6.3, false});
  Grey(cr, 0.1);
  const double leading = 7.6;
  const int per_col = std::max(1, static_cast<int>((y_end - y) / leading));
  const int capacity = 2 * per_col;
  const int n = static_cast<int>(lines.size());
  const int shown = n <= capacity ? n : capacity - 1;
  const double col_w = 0.5 * kContentW - 6.0;
  for (int i = 0; i < shown; ++i) {
    const int col = i / per_col;
    const int row = i % per_col;
    Show(cr, kMargin + col * (0.5 * kContentW + 6.0), y + row * leading,
         lines[static_cast<std::size_t>(i)], col_w);
  }
  if (shown < n) {
    Show(cr, kMargin + 0.5 * kContentW + 6.0, y + (per_col - 1) * leading,
         "\u2026 " + std::to_string(n - shown) +
             " more settings in the result JSON",
         col_w);
  }
  Grey(cr, 0.0);
}

// Input path, size and SHA-256 from `y`.
void Input(cairo_t* cr, double y, const nlohmann::json& r) {
  y = Section(cr, y, "Input");
  SetFont(cr, {7.0, false});
  y = Paragraph(cr, kMargin, y, "File: " + Text(r, {"input", "path"}),
                kContentW, 2, 8.5);
  // Size, depth and format, where known.
  std::string facts;
  if (Number(r, {"input", "width"}) && Number(r, {"input", "height"})) {
    facts = Text(r, {"input", "width"}) + " \u00D7 " +
            Text(r, {"input", "height"}) + " px";
  }
  if (Number(r, {"input", "bit_depth"})) {
    facts += (facts.empty() ? "" : ", ") + Text(r, {"input", "bit_depth"}) +
             " bits per sample";
  }
  if (Find(r, {"input", "format"}) != nullptr) {
    facts += (facts.empty() ? "" : ", ") + Text(r, {"input", "format"});
  }
  if (!facts.empty()) {
    Show(cr, kMargin, y, facts, kContentW);
    y += 8.5;
  }
  SetFont(cr, {7.0, false, true});
  Show(cr, kMargin, y, "SHA-256: " + Text(r, {"input", "sha256"}), kContentW);
}

// The cautions footer at the bottom of the page.
void Footer(cairo_t* cr) {
  const double y = kPageH - 58.0;
  cairo_set_line_width(cr, 0.5);
  Grey(cr, 0.6);
  cairo_move_to(cr, kMargin, y);
  cairo_line_to(cr, kMargin + kContentW, y);
  cairo_stroke(cr);
  SetFont(cr, {6.3, false});
  Grey(cr, 0.25);
  const double after =
      Paragraph(cr, kMargin, y + 9.0, kCautions, kContentW, 3, 7.5);
  Show(cr, kMargin, after, std::string("Made by figura ") + Version() + ".",
       kContentW);
  Grey(cr, 0.0);
}

void DrawPage(cairo_t* cr, const nlohmann::json& r, const std::string& verdict,
              const cv::Mat& picture, const cv::Mat& plot) {
  Grey(cr, 1.0);
  cairo_paint(cr);
  double y = Header(cr, r);
  y = VerdictBlock(cr, y, r, verdict);
  const bool error = verdict == "error";
  if (!error) {
    y = MarginTable(cr, y, r);
    y = Notes(cr, y, r);
    y = KeyNumbers(cr, y, r);
  }
  // Bottom blocks sit at fixed places; the pictures and the settings share
  // what is left between.
  const double input_y = kPageH - 58.0 - 48.0;
  const double min_settings = 52.0;
  const bool any_picture = !picture.empty() || !plot.empty();
  if (any_picture) {
    const double h = std::min(230.0, input_y - min_settings - y);
    if (h >= 80.0) {
      const double gap = 10.0;
      const char* caption =
          error ? "Photograph" : "Picture (overlay or surface map)";
      if (!picture.empty() && !plot.empty()) {
        const double w = 0.5 * (kContentW - gap);
        Picture(cr, picture, kMargin, y, w, h, caption);
        Picture(cr, plot, kMargin + w + gap, y, w, h, "Fit plot");
      } else if (!picture.empty()) {
        Picture(cr, picture, kMargin, y, kContentW, h, caption);
      } else {
        Picture(cr, plot, kMargin, y, kContentW, h, "Fit plot");
      }
      y += h + 8.0;
    }
  }
  Settings(cr, y + 4.0, input_y - 10.0, r);
  Input(cr, input_y, r);
  Footer(cr);
}

std::string MetadataText(const std::string& s) { return CleanUtf8(s); }

}  // namespace

VerdictStyle StyleOfVerdict(const std::string& verdict) {
  // Fills chosen far apart in luminance (Rec. 601 grey levels about 197,
  // 155, 89, 48 and 230 of 255) so that greyscale print keeps them apart.
  if (verdict == "pass") {
    return {0.659, 0.847, 0.690, 0, 0, 0, "#a8d8b0", "#000000"};
  }
  if (verdict == "indeterminate") {
    return {0.788, 0.604, 0.180, 0, 0, 0, "#c99a2e", "#000000"};
  }
  if (verdict == "fail") {
    return {0.722, 0.196, 0.165, 1, 1, 1, "#b8322a", "#ffffff"};
  }
  if (verdict == "error") {
    return {0.188, 0.188, 0.188, 1, 1, 1, "#303030", "#ffffff"};
  }
  return {0.902, 0.902, 0.902, 0, 0, 0, "#e6e6e6", "#000000"};
}

std::string PartVerdictWord(const nlohmann::json& part_result) {
  const nlohmann::json* state = Find(part_result, {"status", "state"});
  if (state != nullptr && state->is_string() &&
      state->get<std::string>() == "error") {
    return "error";
  }
  const nlohmann::json* v = Find(part_result, {"conformance", "verdict"});
  if (v != nullptr && v->is_string()) {
    std::string s = v->get<std::string>();
    if (s == "pass" || s == "fail" || s == "indeterminate") return s;
  }
  if (!part_result.is_object()) return "error";
  return "no tolerance";
}

void WritePartReport(const std::filesystem::path& pdf,
                     const nlohmann::json& part_result,
                     const cv::Mat& picture_bgr, const cv::Mat& plot_bgr) {
  const std::string verdict = PartVerdictWord(part_result);
  WriteViaTemp(pdf, [&](const std::filesystem::path& temp) {
    CairoSurface surface(
        cairo_pdf_surface_create(temp.c_str(), kPageW, kPageH));
    if (cairo_surface_status(surface.get()) != CAIRO_STATUS_SUCCESS) {
      throw OutputError(
          pdf.string() + ": " +
          cairo_status_to_string(cairo_surface_status(surface.get())));
    }
    cairo_pdf_surface_restrict_to_version(surface.get(), CAIRO_PDF_VERSION_1_5);
    const std::string part = Text(part_result, {"part", "part"});
    const std::string lot = Text(part_result, {"part", "lot"});
    const std::string title =
        MetadataText("Part " + part + ", lot " + lot + ": " + verdict);
    const std::string subject = MetadataText(
        "Form measurement report (" + Text(part_result, {"analysis"}) + ")");
    const std::string creator = std::string(kToolName) + " " + Version();
    cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_TITLE,
                                   title.c_str());
    cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_SUBJECT,
                                   subject.c_str());
    cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_CREATOR,
                                   creator.c_str());
    const std::string date =
        PdfDate(CleanUtf8(Text(part_result, {"part", "date"})));
    if (!date.empty()) {
      cairo_pdf_surface_set_metadata(
          surface.get(), CAIRO_PDF_METADATA_CREATE_DATE, date.c_str());
      cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_MOD_DATE,
                                     date.c_str());
    }
    {
      CairoContext cr(cairo_create(surface.get()));
      DrawPage(cr.get(), part_result, verdict, picture_bgr, plot_bgr);
      cairo_show_page(cr.get());
      const cairo_status_t st = cairo_status(cr.get());
      if (st != CAIRO_STATUS_SUCCESS) {
        throw OutputError(pdf.string() + ": " + cairo_status_to_string(st));
      }
    }
    cairo_surface_finish(surface.get());
    const cairo_status_t st = cairo_surface_status(surface.get());
    if (st != CAIRO_STATUS_SUCCESS) {
      throw OutputError(pdf.string() + ": " + cairo_status_to_string(st));
    }
  });
}

}  // namespace figura
