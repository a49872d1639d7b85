// The per-part PDF report, checked from outside with poppler-utils: pdfinfo
// (page count, A4 size, metadata), pdftoppm (the page renders; colours of the
// verdict box) and pdftotext (the words a reader sees, and where they sit).
#include "report/part_report.h"

#include <gtest/gtest.h>

#include <cctype>
#include <cmath>
#include <cstring>
#include <limits>
#include <opencv2/imgproc.hpp>
#include <regex>
#include <sstream>
#include <string>

#include "core/error.h"
#include "core/version.h"
#include "report/cairo_util.h"
#include "report_test_util.h"

namespace figura {
namespace {

using report_test::Have;
using report_test::ReadAll;
using report_test::RunCommand;
using report_test::RunResult;
using report_test::ScratchDir;
using report_test::ShellQuote;
namespace fs = std::filesystem;

// A4 in PostScript points: 210 mm x 297 mm at 72 pt per 25.4 mm (ISO 216
// [memory]).
constexpr double kA4W = 210.0 / 25.4 * 72.0;
constexpr double kA4H = 297.0 / 25.4 * 72.0;

bool HavePoppler() {
  return Have("/usr/bin/pdftotext") && Have("/usr/bin/pdftoppm") &&
         Have("/usr/bin/pdfinfo");
}

#define REQUIRE_POPPLER()                                                   \
  if (!HavePoppler()) {                                                     \
    GTEST_SKIP() << "poppler-utils (pdftotext, pdftoppm, pdfinfo) missing"; \
  }

// A synthetic Newton's-rings photograph (BGR): I = 128 + 100 cos(pi r^2 /
// (lambda R)) with r in pixels and a made-up lambda R of 900 px^2.
cv::Mat RingsPicture() {
  cv::Mat img(360, 480, CV_8UC3);
  for (int y = 0; y < img.rows; ++y) {
    for (int x = 0; x < img.cols; ++x) {
      const double r2 = (x - 240.0) * (x - 240.0) + (y - 180.0) * (y - 180.0);
      const auto v = static_cast<unsigned char>(
          std::lround(128.0 + 100.0 * std::cos(M_PI * r2 / 900.0)));
      img.at<cv::Vec3b>(y, x) =
          cv::Vec3b(v, v, static_cast<unsigned char>(v / 2));
    }
  }
  return img;
}

// A stand-in fit plot: white with a blue line and a few points.
cv::Mat PlotPicture() {
  cv::Mat img(300, 400, CV_8UC3, cv::Scalar(255, 255, 255));
  cv::line(img, {40, 260}, {380, 30}, cv::Scalar(200, 80, 20), 2);
  for (int i = 0; i < 8; ++i) {
    cv::circle(img, {60 + 40 * i, 247 - 27 * i}, 3, cv::Scalar(40, 40, 40), -1);
  }
  return img;
}

// A rings part result as engineer LOT assembles it (the fields of RingsJson
// plus part, tolerance and conformance). Numbers are invented.
nlohmann::json RingsPart(const std::string& verdict = "pass") {
  nlohmann::json j;
  j["analysis"] = "rings";
  j["part"] = {{"lot", "L-2026-031"},    {"part", "P-017"},
               {"serial", "SN 4471"},    {"notes", "bench 2"},
               {"operator", "K. Varga"}, {"date", "2026-11-30T14:05:00Z"}};
  j["input"] = {
      {"path", "photos/p017.tif"},
      {"sha256",
       "9f86d081884c7d659a2feaa0c55ad015a3bf4f1b2b0b822cd15d6c15b0f00a08"},
      {"width", 480},
      {"height", 360},
      {"bit_depth", 16},
      {"channels", 1},
      {"format", "tiff"}};
  j["settings"] = {{"wavelength_nm", 589.29},  {"source", "sodium D"},
                   {"pixel_pitch_mm", 0.0031}, {"gap_index", 1.0},
                   {"model", "offset"},        {"outlier_sigma", 3.5}};
  j["tool"] = {{"name", "figura"}, {"version", Version()}};
  j["status"] = {{"state", "warning"},
                 {"messages", {"only 6 rings: the radius is less certain"}}};
  j["radius_of_curvature_mm"] = 51.68243;
  j["radius_of_curvature_u_mm"] = 0.01757;
  j["radius_of_curvature_u95_mm"] = 0.03514;
  j["coverage_factor"] = 2.0;
  j["uncertainty_method"] = "weighted least squares, residual-scaled";
  j["order_offset"] = 0.213;
  j["order_offset_u"] = 0.021;
  j["ring_count"] = 6;
  j["aperture_diameter_mm"] = 12.0;
  j["sag_um"] = 348.9;
  j["power_fringes"] = 3.2144;
  j["power_u_fringes"] = 0.0431;
  j["astigmatism_fringes"] = 0.12;
  j["astigmatism_u_fringes"] = nullptr;
  j["residual_rms_fringes"] = 0.031;
  j["tolerance"] = {{"text", "3/4(1)"}};
  nlohmann::json a = {{"symbol", "A"},
                      {"key", "power"},
                      {"limit_nm", 1092.1},
                      {"two_sided", true},
                      {"value_nm", 877.6},
                      {"u95_nm", 11.7},
                      {"verdict", "pass"},
                      {"margin_nm", 214.5},
                      {"guarded_margin_nm", 202.8},
                      {"margin_fringes", 0.79},
                      {"guarded_margin_fringes", 0.74}};
  nlohmann::json b = {{"symbol", "B"},
                      {"key", "irregularity"},
                      {"limit_nm", 273.0},
                      {"two_sided", false},
                      {"value_nm", 32.8},
                      {"u95_nm", 20.0},
                      {"verdict", verdict},
                      {"margin_nm", 240.2},
                      {"guarded_margin_nm", 220.2},
                      {"margin_fringes", 0.88},
                      {"guarded_margin_fringes", 0.81}};
  j["conformance"] = {
      {"decision_rule", "iso14253-1"},
      {"decision_rule_text",
       "ISO 14253-1: pass when the value plus its expanded uncertainty is "
       "inside the limit"},
      {"verdict", verdict},
      {"characteristics", {a, b}}};
  return j;
}

std::string PdfText(const fs::path& pdf) {
  return RunCommand("/usr/bin/pdftotext -enc UTF-8 " +
                    ShellQuote(pdf.string()) + " -")
      .out;
}

std::string PdfInfo(const fs::path& pdf) {
  return RunCommand("/usr/bin/pdfinfo -isodates " + ShellQuote(pdf.string()))
      .out;
}

int PageCount(const std::string& info) {
  std::smatch m;
  if (!std::regex_search(info, m, std::regex(R"(Pages:\s+(\d+))"))) return -1;
  return std::stoi(m[1].str());
}

// Reads a binary PPM (P6) or PGM (P5) with maxval 255, as pdftoppm writes
// them (netpbm formats [memory]); empty on anything else.
cv::Mat ReadPnm(const fs::path& path) {
  const std::string bytes = ReadAll(path);
  std::size_t pos = 0;
  auto token = [&]() {
    while (pos < bytes.size() &&
           std::isspace(static_cast<unsigned char>(bytes[pos])))
      ++pos;
    const std::size_t start = pos;
    while (pos < bytes.size() &&
           !std::isspace(static_cast<unsigned char>(bytes[pos])))
      ++pos;
    return bytes.substr(start, pos - start);
  };
  const std::string magic = token();
  const int w = std::stoi(token());
  const int h = std::stoi(token());
  const int maxval = std::stoi(token());
  ++pos;  // one white-space byte before the samples
  const int channels = magic == "P6" ? 3 : (magic == "P5" ? 1 : 0);
  if (channels == 0 || maxval != 255 ||
      bytes.size() - pos < static_cast<std::size_t>(w) * h * channels) {
    return {};
  }
  cv::Mat img(h, w, channels == 3 ? CV_8UC3 : CV_8UC1);
  std::memcpy(img.data, bytes.data() + pos,
              static_cast<std::size_t>(w) * h * channels);
  if (channels == 3) cv::cvtColor(img, img, cv::COLOR_RGB2BGR);
  return img;
}

// Renders page 1 at `dpi` with pdftoppm and reads it back (BGR, or grey
// with `gray`; empty on failure).
cv::Mat Render(const fs::path& pdf, int dpi, bool gray = false) {
  const fs::path prefix = pdf.parent_path() / (pdf.stem().string() + "-page");
  const RunResult r =
      RunCommand("/usr/bin/pdftoppm -r " + std::to_string(dpi) +
                 (gray ? " -gray" : "") + " -f 1 -l 1 -singlefile " +
                 ShellQuote(pdf.string()) + " " + ShellQuote(prefix.string()));
  if (r.code != 0) return {};
  return ReadPnm(prefix.string() + (gray ? ".pgm" : ".ppm"));
}

TEST(PartReport, RingsResultIsOneA4PageWithVerdictNumbersAndMetadata) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("rings-report");
  const fs::path pdf = dir / "P-017.pdf";
  WritePartReport(pdf, RingsPart(), RingsPicture(), PlotPicture());
  ASSERT_TRUE(fs::exists(pdf));
  EXPECT_EQ(ReadAll(pdf).substr(0, 5), "%PDF-");
  // No temporary file left beside it.
  int files = 0;
  for ([[maybe_unused]] const auto& e : fs::directory_iterator(dir)) ++files;
  EXPECT_EQ(files, 1);

  const std::string info = PdfInfo(pdf);
  EXPECT_EQ(PageCount(info), 1) << info;
  std::smatch m;
  ASSERT_TRUE(std::regex_search(
      info, m, std::regex(R"(Page size:\s+([0-9.]+) x ([0-9.]+) pts)")))
      << info;
  EXPECT_NEAR(std::stod(m[1].str()), kA4W, 0.05);
  EXPECT_NEAR(std::stod(m[2].str()), kA4H, 0.05);
  EXPECT_NE(info.find("P-017"), std::string::npos) << info;  // Title
  EXPECT_NE(info.find(std::string("figura ") + Version()), std::string::npos)
      << info;  // Creator
  EXPECT_NE(info.find("2026-11-30T14:05:00"), std::string::npos)
      << info;  // CreationDate from part.date

  const std::string text = PdfText(pdf);
  for (const char* want :
       {"PASS", "P-017", "L-2026-031", "SN 4471", "K. Varga", "3/4(1)",
        "iso14253-1", "photos/p017.tif",
        "9f86d081884c7d659a2feaa0c55ad015a3bf4f1b2b0b822cd15d6c15b0f00a08",
        "only 6 rings", "sodium D", "Cautions", "qualified person"}) {
    EXPECT_NE(text.find(want), std::string::npos) << want << "\n" << text;
  }
  // R = 51.68243 mm with U95 = 0.03514 mm: the uncertainty to two
  // significant digits and the value to the same place (GUM, JCGM
  // 100:2008, 7.2.6 [practice]).
  EXPECT_NE(text.find("51.682"), std::string::npos) << text;
  EXPECT_EQ(text.find("51.6824"), std::string::npos) << text;
  EXPECT_NE(text.find("\u00B1 0.035"), std::string::npos) << text;
  // Power 3.2144 with u = 0.0431 fringes -> 3.214, u = 0.043.
  EXPECT_NE(text.find("3.214"), std::string::npos) << text;
  EXPECT_NE(text.find("u = 0.043"), std::string::npos) << text;
  // Margins per characteristic.
  EXPECT_NE(text.find("214.5"), std::string::npos) << text;
  EXPECT_NE(text.find("\u00B1 1092.1"), std::string::npos) << text;

  // The page renders; at 72 dpi it is 595 x 842 px and the verdict box is
  // filled with the pass colour.
  const cv::Mat page = Render(pdf, 72);
  ASSERT_FALSE(page.empty());
  EXPECT_NEAR(page.cols, kA4W, 1.0);
  EXPECT_NEAR(page.rows, kA4H, 1.0);
  const VerdictStyle pass = StyleOfVerdict("pass");
  const cv::Vec3b px = page.at<cv::Vec3b>(154, 40);  // inside the box corner
  EXPECT_NEAR(px[2], pass.fill_r * 255.0, 6.0);
  EXPECT_NEAR(px[1], pass.fill_g * 255.0, 6.0);
  EXPECT_NEAR(px[0], pass.fill_b * 255.0, 6.0);
}

TEST(PartReport, SameInputGivesTheSameBytes) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("reproducible");
  WritePartReport(dir / "a.pdf", RingsPart(), RingsPicture(), PlotPicture());
  WritePartReport(dir / "b.pdf", RingsPart(), RingsPicture(), PlotPicture());
  EXPECT_EQ(ReadAll(dir / "a.pdf"), ReadAll(dir / "b.pdf"));
}

TEST(PartReport, FailAndIndeterminateArePrintedAsWords) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("verdicts");
  for (const char* v : {"fail", "indeterminate"}) {
    const fs::path pdf = dir / (std::string(v) + ".pdf");
    WritePartReport(pdf, RingsPart(v), cv::Mat(), cv::Mat());
    std::string upper = v;
    for (char& c : upper) c = static_cast<char>(std::toupper(c));
    const std::string text = PdfText(pdf);
    EXPECT_NE(text.find(upper), std::string::npos) << v << "\n" << text;
    EXPECT_EQ(PageCount(PdfInfo(pdf)), 1);
  }
}

// The verdict fills stay apart when printed in grey: rendered with
// pdftoppm -gray, the box grey levels differ by at least 30 of 255.
TEST(PartReport, VerdictColoursDifferInGreyscale) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("grey");
  std::vector<double> levels;
  for (const char* v : {"pass", "fail", "indeterminate", "error"}) {
    nlohmann::json j = RingsPart(v);
    if (std::string(v) == "error") {
      j["status"] = {{"state", "error"}, {"messages", {"no fringes found"}}};
    }
    const fs::path pdf = dir / (std::string(v) + ".pdf");
    WritePartReport(pdf, j, cv::Mat(), cv::Mat());
    const cv::Mat page = Render(pdf, 36, true);
    ASSERT_FALSE(page.empty()) << v;
    ASSERT_EQ(page.channels(), 1);
    levels.push_back(page.at<unsigned char>(77, 20));  // (154, 40) at 72 dpi
  }
  for (std::size_t i = 0; i < levels.size(); ++i) {
    for (std::size_t k = i + 1; k < levels.size(); ++k) {
      EXPECT_GE(std::abs(levels[i] - levels[k]), 30.0)
          << "verdicts " << i << " and " << k;
    }
  }
}

TEST(PartReport, ErrorResultSaysWhyWithoutNumbers) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("error");
  nlohmann::json j;
  j["analysis"] = "rings";
  j["part"] = {{"lot", "L-9"}, {"part", "P-404"}, {"date", "2026-11-30"}};
  j["input"] = {{"path", "photos/blank.png"}, {"sha256", "ab12"}};
  j["settings"] = {{"wavelength_nm", 546.07}};
  j["tool"] = {{"name", "figura"}, {"version", Version()}};
  j["status"] = {{"state", "error"},
                 {"messages", {"no fringes found: the image is flat"}}};
  // Numbers that must not be shown for an error.
  j["radius_of_curvature_mm"] = 77.777;
  const fs::path pdf = dir / "P-404.pdf";
  WritePartReport(pdf, j, RingsPicture(), cv::Mat());
  EXPECT_EQ(PageCount(PdfInfo(pdf)), 1);
  const std::string text = PdfText(pdf);
  EXPECT_NE(text.find("ERROR"), std::string::npos) << text;
  EXPECT_NE(text.find("no fringes found: the image is flat"), std::string::npos)
      << text;
  EXPECT_NE(text.find("P-404"), std::string::npos) << text;
  EXPECT_EQ(text.find("77.77"), std::string::npos) << text;
  EXPECT_EQ(text.find("Key numbers"), std::string::npos) << text;
  EXPECT_FALSE(Render(pdf, 30).empty());
}

TEST(PartReport, MissingAndNullFieldsGiveDashesNeverNan) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("missing");
  nlohmann::json j = RingsPart();
  j["radius_of_curvature_mm"] = std::numeric_limits<double>::quiet_NaN();
  j["radius_of_curvature_u95_mm"] = std::numeric_limits<double>::infinity();
  j["sag_um"] = nullptr;
  j.erase("tool");
  j["part"].erase("operator");
  j["conformance"]["characteristics"][0]["value_nm"] = nullptr;
  const fs::path pdf = dir / "x.pdf";
  WritePartReport(pdf, j, cv::Mat(), cv::Mat());
  const std::string text = PdfText(pdf);
  const std::regex bad(R"(\b(nan|inf|NaN|Inf|null)\b)");
  EXPECT_FALSE(std::regex_search(text, bad)) << text;
  EXPECT_NE(text.find("\u2014"), std::string::npos) << text;

  // Even an empty object renders: a page with dashes and no verdict.
  WritePartReport(dir / "empty.pdf", nlohmann::json::object(), cv::Mat(),
                  cv::Mat());
  EXPECT_EQ(PageCount(PdfInfo(dir / "empty.pdf")), 1);
  EXPECT_NE(PdfText(dir / "empty.pdf").find("NO TOLERANCE"), std::string::npos);
}

// Every word pdftotext finds lies on the page (nothing runs off the edge).
void ExpectWordsOnPage(const fs::path& pdf) {
  const fs::path html = pdf.parent_path() / "bbox.html";
  ASSERT_EQ(RunCommand("/usr/bin/pdftotext -bbox " + ShellQuote(pdf.string()) +
                       " " + ShellQuote(html.string()))
                .code,
            0);
  const std::string boxes = ReadAll(html);
  const std::regex word(
      R"re(<word xMin="([-0-9.]+)" yMin="([-0-9.]+)" xMax="([-0-9.]+)" yMax="([-0-9.]+)">)re");
  int n = 0;
  for (auto it = std::sregex_iterator(boxes.begin(), boxes.end(), word);
       it != std::sregex_iterator(); ++it) {
    ++n;
    const std::smatch& m = *it;
    EXPECT_GE(std::stod(m[1].str()), 0.0) << m.str();
    EXPECT_GE(std::stod(m[2].str()), 0.0) << m.str();
    EXPECT_LE(std::stod(m[3].str()), kA4W - 20.0) << m.str();  // margin kept
    EXPECT_LE(std::stod(m[4].str()), kA4H) << m.str();
  }
  EXPECT_GT(n, 50);
}

TEST(PartReport, HostileStringsStayOnThePage) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("hostile");
  nlohmann::json j = RingsPart();
  j["part"]["part"] = "<P&1> \"quoted\"";
  j["part"]["lot"] = "Lot \u00B5-\u03BB\u2082 \u00D8 50";
  j["part"]["operator"] = std::string("bad \xFF\xFE\tx\ny");
  std::string long_name = "photos/";
  for (int i = 0; i < 60; ++i)
    long_name += "very_long_folder_name_" + std::to_string(i) + "/";
  long_name += "p<1>&.tif";
  j["input"]["path"] = long_name;
  j["tolerance"]["text"] = std::string(300, 'W');
  j["status"]["messages"] = nlohmann::json::array();
  for (int i = 0; i < 20; ++i) {
    j["status"]["messages"].push_back("warning number " + std::to_string(i) +
                                      " " + std::string(200, 'x'));
  }
  for (int i = 0; i < 200; ++i) {
    j["settings"]["extra_" + std::to_string(i)] = std::string(80, 'y');
  }
  const fs::path pdf = dir / "hostile.pdf";
  WritePartReport(pdf, j, RingsPicture(), PlotPicture());
  EXPECT_EQ(PageCount(PdfInfo(pdf)), 1);
  const std::string text = PdfText(pdf);
  EXPECT_NE(text.find("<P&1>"), std::string::npos) << text;
  EXPECT_NE(text.find("\u00B5-\u03BB\u2082"), std::string::npos) << text;
  EXPECT_NE(text.find("bad \uFFFD\uFFFD x y"), std::string::npos) << text;
  EXPECT_NE(text.find("more settings in the result JSON"), std::string::npos)
      << text;
  EXPECT_NE(text.find("more notes in the result JSON"), std::string::npos)
      << text;
  // The long path is broken after a slash, on the same line as its label.
  EXPECT_NE(text.find("File: photos/very_long_folder_name_0/"),
            std::string::npos)
      << text;
  EXPECT_FALSE(Render(pdf, 30).empty());
  ExpectWordsOnPage(pdf);
}

TEST(PartReport, MapResultShowsItsNumbers) {
  REQUIRE_POPPLER();
  const fs::path dir = ScratchDir("map");
  nlohmann::json j = RingsPart();
  for (const char* k : {"radius_of_curvature_mm", "radius_of_curvature_u_mm",
                        "radius_of_curvature_u95_mm", "ring_count", "sag_um",
                        "order_offset", "order_offset_u", "power_fringes",
                        "power_u_fringes", "astigmatism_fringes",
                        "astigmatism_u_fringes", "residual_rms_fringes"}) {
    j.erase(k);
  }
  j["analysis"] = "map";
  j["pv_nm"] = 143.27;
  j["rms_nm"] = 27.91;
  j["power_fringes"] = 0.4;
  j["irregularity_fringes"] = 0.21;
  j["rsi_fringes"] = 0.05;
  j["zernike"] = {{{"j", 4}, {"n", 2}, {"m", 0}, {"coefficient_nm", 61.4}},
                  {{"j", 5}, {"n", 2}, {"m", -2}, {"coefficient_nm", -8.25}}};
  const fs::path pdf = dir / "map.pdf";
  WritePartReport(pdf, j, RingsPicture(), cv::Mat());
  const std::string text = PdfText(pdf);
  EXPECT_NE(text.find("peak-to-valley"), std::string::npos) << text;
  EXPECT_NE(text.find("143.27"), std::string::npos) << text;
  EXPECT_NE(text.find("Z4 (2, 0) 61.4"), std::string::npos) << text;
  EXPECT_EQ(text.find("radius of curvature"), std::string::npos) << text;
}

TEST(PartReport, UnwritableDestinationNamesTheFile) {
  const fs::path pdf = "/nonexistent-figura-folder/p.pdf";
  try {
    WritePartReport(pdf, RingsPart(), cv::Mat(), cv::Mat());
    FAIL() << "no OutputError";
  } catch (const OutputError& e) {
    EXPECT_NE(std::string(e.what()).find(pdf.string()), std::string::npos)
        << e.what();
  }
}

TEST(PartReport, VerdictWord) {
  EXPECT_EQ(PartVerdictWord(RingsPart("fail")), "fail");
  nlohmann::json e = RingsPart();
  e["status"]["state"] = "error";
  EXPECT_EQ(PartVerdictWord(e), "error");
  EXPECT_EQ(PartVerdictWord(nlohmann::json::object()), "no tolerance");
  EXPECT_EQ(PartVerdictWord(nlohmann::json::array()), "error");
}

// Text helpers shared with the lot index.
TEST(ReportText, CleanUtf8ReplacesInvalidSequencesAndControls) {
  // RFC 3629: C0 80 is an overlong NUL, ED A0 80 a surrogate, F4 90 80 80
  // above U+10FFFF, a lone continuation byte is invalid [memory].
  EXPECT_EQ(CleanUtf8("a\xC0\x80z"), "a\uFFFD\uFFFDz");
  EXPECT_EQ(CleanUtf8("\xED\xA0\x80"), "\uFFFD\uFFFD\uFFFD");
  EXPECT_EQ(CleanUtf8("\xF4\x90\x80\x80"), "\uFFFD\uFFFD\uFFFD\uFFFD");
  EXPECT_EQ(CleanUtf8("\x80"), "\uFFFD");
  EXPECT_EQ(CleanUtf8("\xE2\x82"), "\uFFFD\uFFFD");  // truncated
  EXPECT_EQ(CleanUtf8("\u00B5m \u03BB \U0001F600"),
            "\u00B5m \u03BB \U0001F600");
  EXPECT_EQ(CleanUtf8("a\tb\nc\x7F\u0085"), "a b c  ");
  EXPECT_EQ(CharBoundaries("a\u00B5\u20AC").size(), 4U);
}

TEST(ReportText, NumbersRoundedAsTheGumSuggests) {
  // GUM (JCGM 100:2008) 7.2.2 example: m = 100.021 47 g with u = 0.35 mg,
  // i.e. two significant digits of u and the value to the same place
  // [memory].
  const int d = DecimalsForUncertainty(0.00035);
  EXPECT_EQ(d, 5);
  EXPECT_EQ(FormatFixed(100.02147, d), "100.02147");
  EXPECT_EQ(FormatFixed(0.00035, d), "0.00035");
  EXPECT_EQ(DecimalsForUncertainty(12.3), 0);
  EXPECT_EQ(DecimalsForUncertainty(0.035), 3);
  EXPECT_EQ(FormatFixed(-0.0001, 2), "0.00");
  EXPECT_EQ(FormatNumber(-0.0, 6), "0");
  EXPECT_EQ(FormatNumber(std::nan(""), 6), "\u2014");
  EXPECT_EQ(FormatFixed(std::numeric_limits<double>::infinity(), 2), "\u2014");
}

// PIL (Debian python3-pil) reads the PNG: the size, and the mean of each
// channel equal to OpenCV's own area-resampled copy.
TEST(ReportText, EncodePngIsReadByPil) {
  const std::string python = "/usr/bin/python3";
  if (!Have(python) || RunCommand(python + " -c 'import PIL'").code != 0) {
    GTEST_SKIP() << "/usr/bin/python3 with PIL (python3-pil) not available";
  }
  const cv::Mat picture = RingsPicture();
  const std::string png = EncodePng(picture, 120);
  ASSERT_FALSE(png.empty());
  const fs::path dir = ScratchDir("png");
  report_test::WriteAll(dir / "t.png", png);
  const RunResult r =
      RunCommand(python + " -c " +
                 ShellQuote("import sys\nfrom PIL import Image, ImageStat\n"
                            "im = Image.open(sys.argv[1]).convert('RGB')\n"
                            "print(im.size[0], im.size[1], "
                            "*['%.3f' % m for m in ImageStat.Stat(im).mean])") +
                 " " + ShellQuote((dir / "t.png").string()));
  ASSERT_EQ(r.code, 0);
  std::istringstream in(r.out);
  int w = 0;
  int h = 0;
  double mr = 0;
  double mg = 0;
  double mb = 0;
  in >> w >> h >> mr >> mg >> mb;
  EXPECT_EQ(w, 120);
  EXPECT_EQ(h, 90);
  cv::Mat ref;
  cv::resize(picture, ref, cv::Size(120, 90), 0, 0, cv::INTER_AREA);
  const cv::Scalar mean = cv::mean(ref);
  EXPECT_NEAR(mr, mean[2], 0.6);
  EXPECT_NEAR(mg, mean[1], 0.6);
  EXPECT_NEAR(mb, mean[0], 0.6);
  EXPECT_TRUE(EncodePng(cv::Mat(), 100).empty());
}

}  // namespace
}  // namespace figura
