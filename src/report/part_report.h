// The per-part PDF report: one A4 portrait page made with cairo from a part
// result JSON (the analysis result of ../shared/design.md plus "analysis",
// "part", "tolerance" and "conformance" blocks). Layout, top to bottom: a
// header band (lot, part, serial, date, operator, tool version), the verdict
// in large type with its decision rule and the margin per characteristic,
// the key numbers with uncertainties and units, the picture and the plot,
// the settings in small type, the input path and SHA-256, and a cautions
// footer. What each part shows is described in docs/reports.md.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <opencv2/core.hpp>
#include <string>

namespace figura {

// A verdict's print style: fill colour (RGB, 0..1) and text colour, chosen
// so that the fills differ in lightness as well as hue (they stay apart in
// greyscale print); the verdict word is always printed beside the colour.
struct VerdictStyle {
  double fill_r = 0.0, fill_g = 0.0, fill_b = 0.0;
  double text_r = 0.0, text_g = 0.0, text_b = 0.0;
  const char* css_fill = "";  // the same fill as a CSS colour "#rrggbb"
  const char* css_text = "";  // the same text colour as "#rrggbb"
};

// The style of a verdict word ("pass", "fail", "indeterminate", "error",
// anything else: neutral).
VerdictStyle StyleOfVerdict(const std::string& verdict);

// The one word a part's page leads with: "error" when status.state is
// "error", else conformance.verdict ("pass", "fail", "indeterminate"), else
// "no tolerance" when no conformance block is present.
std::string PartVerdictWord(const nlohmann::json& part_result);

// Writes the one-page report, A4 portrait (595.28 x 841.89 pt), atomically
// (temporary name + rename). `picture_bgr` is the overlay or surface picture
// and `plot_bgr` the fit plot (8-bit, 1 or 3 channels, BGR; either may be
// empty and is then left out). Any JSON field may be missing or null: it is
// shown as an em dash, never as NaN. A result with status "error" still
// gets a page that says why, without numbers. PDF metadata: TITLE (lot and
// part), SUBJECT, CREATOR (figura and its version), CREATE_DATE from
// part.date (so the same input gives the same bytes). Throws OutputError
// naming the file when it cannot be written.
void WritePartReport(const std::filesystem::path& pdf,
                     const nlohmann::json& part_result,
                     const cv::Mat& picture_bgr, const cv::Mat& plot_bgr);

}  // namespace figura
