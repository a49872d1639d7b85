// The lot index page, checked from outside: Python's own HTML parser
// (Debian /usr/bin/python3, html.parser) reads the table and every
// attribute, node runs the sorting script against a small stand-in DOM, and
// headless Chromium (when installed) loads the page from file://.
#include "report/lot_index.h"

#include <gtest/gtest.h>

#include <opencv2/imgproc.hpp>
#include <regex>
#include <sstream>
#include <string>

#include "core/error.h"
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
using report_test::WriteAll;
namespace fs = std::filesystem;

const char* const kPython = "/usr/bin/python3";

// A lot of four parts (pass, fail, indeterminate, error), with hostile
// names and messages; the summary layout of src/inspect/lot_summary.h.
nlohmann::json Summary() {
  nlohmann::json s;
  s["format"] = "figura-lot-summary";
  s["format_version"] = 1;
  s["tool"] = {{"name", "figura"}, {"version", "0.1.0"}};
  s["lot"] = "L-<7>&\"x\"";
  s["operator"] = "M. \u00C5str\u00F6m";
  s["analysis"] = "rings";
  s["tolerance"] = {{"text", "3/2(0.5)"}};
  s["decision_rule"] = "iso14253-1";
  s["decision_rule_text"] = "pass when value + U95 is inside the limit";
  s["counts"] = {{"total", 4},
                 {"pass", 1},
                 {"fail", 1},
                 {"indeterminate", 1},
                 {"error", 1}};
  s["verdict"] = "error";
  s["columns"] = {
      {{"key", "radius_of_curvature_mm"},
       {"label", "radius of curvature"},
       {"unit", "mm"}},
      {{"key", "power_fringes"}, {"label", "power"}, {"unit", "fringes"}}};
  s["parts"] = nlohmann::json::array();
  s["parts"].push_back({{"file", "photos/a<b>&c\".tif"},
                        {"part", "P-001"},
                        {"status", "ok"},
                        {"verdict", "pass"},
                        {"message", ""},
                        {"pdf", "P-001.pdf"},
                        {"thumbnail", "P-001.png"},
                        {"radius_of_curvature_mm", 100.0},
                        {"power_fringes", 0.5}});
  s["parts"].push_back({{"file", "photos/p 2 #1.tif"},
                        {"part", "P-002"},
                        {"status", "warning"},
                        {"verdict", "fail"},
                        {"message", "few rings"},
                        {"pdf", "P 002 #1.pdf"},
                        {"thumbnail", ""},
                        {"radius_of_curvature_mm", 9.5},
                        {"power_fringes", -1.25}});
  s["parts"].push_back({{"file", "photos/p3.tif"},
                        {"part", "P-003"},
                        {"status", "ok"},
                        {"verdict", "indeterminate"},
                        {"message", ""},
                        {"pdf", "javascript:alert(1)"},
                        {"thumbnail", "../../../etc/passwd"},
                        {"radius_of_curvature_mm", 25.125},
                        {"power_fringes", nullptr}});
  s["parts"].push_back({{"file", "photos/broken.png"},
                        {"part", "P-004"},
                        {"status", "error"},
                        {"verdict", ""},
                        {"message", "<script>alert('x')</script> truncated"},
                        {"pdf", "P-004.pdf"},
                        {"thumbnail", ""},
                        {"radius_of_curvature_mm", nullptr},
                        {"power_fringes", nullptr}});
  return s;
}

cv::Mat Thumb(int w, int h) {
  cv::Mat img(h, w, CV_8UC3, cv::Scalar(30, 120, 220));
  cv::circle(img, {w / 2, h / 2}, std::min(w, h) / 3, cv::Scalar(250, 250, 250),
             -1);
  return img;
}

// Python's html.parser turns the page into lines a test can read:
//   ROW <n cells> | cell text | cell text ...   (one per tbody row)
//   SRC <value> / HREF <value> / SCRIPTSRC / LINK / STYLEHREF (attributes)
//   PNG <width> <height>   (for every data:image/png thumbnail, from IHDR)
constexpr const char* kParser = R"PY(
import sys, base64, struct
from html.parser import HTMLParser
class P(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.in_body = False; self.row = None; self.cell = None; self.out = []
    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == 'tbody': self.in_body = True
        if tag == 'tr' and self.in_body: self.row = []
        if tag == 'td' and self.row is not None: self.cell = ''
        if tag == 'script' and 'src' in a: self.out.append('SCRIPTSRC ' + a['src'])
        if tag == 'link': self.out.append('LINK ' + str(a.get('href')))
        for k, v in attrs:
            if k == 'src':
                self.out.append('SRC ' + v[:30])
                if v.startswith('data:image/png;base64,'):
                    b = base64.b64decode(v.split(',', 1)[1], validate=True)
                    assert b[:8] == b'\x89PNG\r\n\x1a\n'
                    w, h = struct.unpack('>II', b[16:24])
                    self.out.append('PNG %d %d' % (w, h))
            if k == 'href': self.out.append('HREF ' + v)
    def handle_endtag(self, tag):
        if tag == 'tbody': self.in_body = False
        if tag == 'td' and self.cell is not None:
            self.row.append(self.cell.strip()); self.cell = None
        if tag == 'tr' and self.row is not None:
            self.out.append('ROW %d | ' % len(self.row) + ' | '.join(self.row)); self.row = None
    def handle_data(self, d):
        if self.cell is not None: self.cell += d
p = P()
p.feed(open(sys.argv[1], encoding='utf-8').read())
p.close()
sys.stdout.write('\n'.join(p.out) + '\n')
)PY";

std::vector<std::string> Parse(const fs::path& html) {
  const fs::path script = html.parent_path() / "parse.py";
  WriteAll(script, kParser);
  const RunResult r =
      RunCommand(std::string(kPython) + " " + ShellQuote(script.string()) +
                 " " + ShellQuote(html.string()));
  EXPECT_EQ(r.code, 0) << "html.parser failed on " << html;
  std::vector<std::string> lines;
  std::istringstream in(r.out);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

std::vector<std::string> With(const std::vector<std::string>& lines,
                              const std::string& prefix) {
  std::vector<std::string> out;
  for (const std::string& l : lines) {
    if (l.rfind(prefix, 0) == 0) out.push_back(l.substr(prefix.size()));
  }
  return out;
}

#define REQUIRE_PYTHON()                                               \
  if (!Have(kPython)) {                                                \
    GTEST_SKIP() << "Debian /usr/bin/python3 (html.parser) not found"; \
  }

TEST(LotIndex, OneRowPerPartWithEscapedTextAsParsedByPython) {
  REQUIRE_PYTHON();
  const fs::path dir = ScratchDir("index-rows");
  // The first part's thumbnail comes from its PNG file beside the page.
  report_test::WriteAll(dir / "P-001.png", EncodePng(Thumb(90, 60), 400));
  const fs::path html = dir / "index.html";
  WriteLotIndex(html, Summary());
  const std::string page = ReadAll(html);
  // Raw text: nothing from the input reaches the page unescaped.
  EXPECT_EQ(page.find("<script>alert"), std::string::npos);
  EXPECT_EQ(page.find("a<b>"), std::string::npos);
  EXPECT_NE(page.find("&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt;"),
            std::string::npos);

  const std::vector<std::string> lines = Parse(html);
  const std::vector<std::string> rows = With(lines, "ROW ");
  ASSERT_EQ(rows.size(), 4U) << page;
  // 6 fixed columns + 2 numeric + message + report = 10 cells per row.
  for (const std::string& r : rows) EXPECT_EQ(r.substr(0, 4), "10 |") << r;
  // The parser gives back exactly the original strings.
  EXPECT_NE(rows[0].find("| photos/a<b>&c\".tif |"), std::string::npos)
      << rows[0];
  EXPECT_NE(rows[0].find("| pass |"), std::string::npos) << rows[0];
  EXPECT_NE(rows[1].find("| fail |"), std::string::npos) << rows[1];
  EXPECT_NE(rows[1].find("| -1.25 |"), std::string::npos) << rows[1];
  EXPECT_NE(rows[2].find("| indeterminate |"), std::string::npos) << rows[2];
  EXPECT_NE(rows[3].find("| error |"), std::string::npos) << rows[3];
  EXPECT_NE(rows[3].find("<script>alert('x')</script> truncated"),
            std::string::npos)
      << rows[3];

  // Self-contained: every src is inline data, no external script or style
  // sheet; links only to the parts' PDFs, relative and percent-encoded.
  for (const std::string& src : With(lines, "SRC ")) {
    EXPECT_EQ(src.rfind("data:image/", 0), 0U) << src;
  }
  EXPECT_TRUE(With(lines, "SCRIPTSRC ").empty());
  EXPECT_TRUE(With(lines, "LINK ").empty());
  const std::vector<std::string> hrefs = With(lines, "HREF ");
  EXPECT_EQ(hrefs, (std::vector<std::string>{"P-001.pdf", "P%20002%20%231.pdf",
                                             "P-004.pdf"}));
  EXPECT_EQ(page.find("http:"), std::string::npos);
  EXPECT_EQ(page.find("https:"), std::string::npos);
  // One thumbnail (the PNG file), at its own size (smaller than 160 px).
  EXPECT_EQ(With(lines, "PNG "), (std::vector<std::string>{"90 60"}));
  // Header: lot (escaped), counts and decision rule.
  EXPECT_NE(page.find("L-&lt;7&gt;&amp;&quot;x&quot;"), std::string::npos);
  EXPECT_NE(page.find("fail: 1"), std::string::npos);
  EXPECT_NE(page.find("iso14253-1"), std::string::npos);
}

TEST(LotIndex, ThumbnailsFromPicturesAreScaledDown) {
  REQUIRE_PYTHON();
  const fs::path dir = ScratchDir("index-thumbs");
  const fs::path html = dir / "index.html";
  LotIndexOptions options;
  options.thumbnail_px = 120;
  WriteLotIndex(html, Summary(), {Thumb(600, 400), cv::Mat(), Thumb(200, 300)},
                options);
  const std::vector<std::string> pngs = With(Parse(html), "PNG ");
  EXPECT_EQ(pngs, (std::vector<std::string>{"120 80", "80 120"}));
}

// The sorting script, run by node against a minimal stand-in of the DOM it
// uses: sorting the radius column gives numeric order (9.5 < 25.125 < 100,
// where text order would put "100" first), empty cells last; a second click
// reverses.
TEST(LotIndex, SortScriptSortsNumbersNumerically) {
  const std::string node = "/usr/bin/node";
  if (!Have(node)) GTEST_SKIP() << "node not installed: script not run";
  const std::string page = RenderLotIndex(Summary(), {}, ".");
  const std::size_t a = page.find("<script>");
  const std::size_t b = page.find("</script>");
  ASSERT_NE(a, std::string::npos);
  ASSERT_NE(b, std::string::npos);
  const std::string script = page.substr(a + 8, b - a - 8);
  const fs::path dir = ScratchDir("index-sort");
  const std::string harness = R"JS(
function Cell(text, sort, type) {
  this.textContent = text; this.attrs = {};
  if (sort !== undefined) this.attrs['data-sort'] = sort;
  if (type) this.attrs['data-type'] = type;
}
Cell.prototype.getAttribute = function (k) { return k in this.attrs ? this.attrs[k] : null; };
Cell.prototype.setAttribute = function (k, v) { this.attrs[k] = String(v); };
Cell.prototype.removeAttribute = function (k) { delete this.attrs[k]; };
Cell.prototype.addEventListener = function (n, f) { this['on' + n] = f; };
var heads = [new Cell('#', undefined, 'number'), new Cell('part'),
             new Cell('radius', undefined, 'number')];
function row(i, part, r) { return {id: part, cells: [new Cell(String(i), String(i)), new Cell(part), new Cell(r, r)]}; }
var body = {rows: [row(1, 'P-001', '100'), row(2, 'P-002', '9.5'),
                   row(3, 'P-003', ''), row(4, 'P-004', '25.125')]};
body.appendChild = function (r) {
  this.rows.splice(this.rows.indexOf(r), 1); this.rows.push(r);
};
var table = {tHead: {rows: [{cells: heads}]}, tBodies: [body]};
var window = {};
var document = {getElementById: function (id) { return id === 'parts' ? table : null; }};
)JS";
  const std::string tail = R"JS(
function order() { return body.rows.map(function (r) { return r.id; }).join(','); }
heads[2].onclick(); console.log(order());
heads[2].onclick(); console.log(order());
heads[1].onclick(); console.log(order());
window.figuraSortBy(0); console.log(order());
)JS";
  WriteAll(dir / "sort.js", harness + script + tail);
  const RunResult r =
      RunCommand(node + " " + ShellQuote((dir / "sort.js").string()));
  ASSERT_EQ(r.code, 0) << r.out;
  EXPECT_EQ(r.out,
            "P-002,P-004,P-001,P-003\n"    // ascending, empty last
            "P-001,P-004,P-002,P-003\n"    // descending, empty still last
            "P-001,P-002,P-003,P-004\n"    // text column
            "P-001,P-002,P-003,P-004\n");  // back to input order
}

// Headless Chromium loads the page from file:// and its DOM has one tbody
// row per part.
TEST(LotIndex, ChromiumShowsOneRowPerPart) {
  std::string chromium;
  for (const char* c : {"/usr/bin/chromium", "/usr/bin/chromium-browser",
                        "/usr/bin/google-chrome"}) {
    if (Have(c)) chromium = c;
  }
  if (chromium.empty()) {
    GTEST_SKIP() << "chromium not installed (Debian package chromium): the "
                    "page was not loaded in a browser";
  }
  const fs::path dir = ScratchDir("index-chromium");
  const fs::path html = dir / "index.html";
  WriteLotIndex(html, Summary());
  const RunResult r =
      RunCommand("timeout 60 " + chromium +
                 " --headless --no-sandbox --disable-gpu --dump-dom " +
                 ShellQuote("file://" + fs::absolute(html).string()));
  ASSERT_EQ(r.code, 0);
  const std::size_t a = r.out.find("<tbody>");
  const std::size_t b = r.out.find("</tbody>");
  ASSERT_NE(a, std::string::npos) << r.out.substr(0, 2000);
  ASSERT_NE(b, std::string::npos);
  const std::string body = r.out.substr(a, b - a);
  int rows = 0;
  for (std::size_t p = body.find("<tr"); p != std::string::npos;
       p = body.find("<tr", p + 1)) {
    ++rows;
  }
  EXPECT_EQ(rows, 4);
}

TEST(LotIndex, EmptyAndOddSummariesStillRender) {
  const std::string empty = RenderLotIndex(nlohmann::json::object(), {}, ".");
  EXPECT_NE(empty.find("<tbody>\n</tbody>"), std::string::npos);
  EXPECT_NE(empty.find("total: 0"), std::string::npos);
  nlohmann::json odd = {{"lot", 42}, {"parts", {nullptr, "x", {{"part", 7}}}}};
  const std::string page = RenderLotIndex(odd, {}, ".");
  EXPECT_NE(page.find("Lot 42"), std::string::npos);
  std::size_t rows = 0;
  for (std::size_t p = page.find("<tr>"); p != std::string::npos;
       p = page.find("<tr>", p + 1)) {
    ++rows;
  }
  EXPECT_EQ(rows, 1U + 3U);  // header row + one per entry
}

TEST(LotIndex, OptionsAndOutputErrors) {
  LotIndexOptions bad;
  bad.thumbnail_px = 4;
  EXPECT_FALSE(bad.Check().empty());
  EXPECT_TRUE(LotIndexOptions{}.Check().empty());
  EXPECT_THROW(RenderLotIndex(Summary(), {}, ".", bad), InputError);
  const fs::path html = "/nonexistent-figura-folder/index.html";
  try {
    WriteLotIndex(html, Summary());
    FAIL() << "no OutputError";
  } catch (const OutputError& e) {
    EXPECT_NE(std::string(e.what()).find(html.string()), std::string::npos);
  }
}

// RFC 4648, section 10 test vectors [memory]; HTML escaping of the five
// special characters.
TEST(LotIndex, Base64AndEscaping) {
  EXPECT_EQ(Base64(""), "");
  EXPECT_EQ(Base64("f"), "Zg==");
  EXPECT_EQ(Base64("fo"), "Zm8=");
  EXPECT_EQ(Base64("foo"), "Zm9v");
  EXPECT_EQ(Base64("foob"), "Zm9vYg==");
  EXPECT_EQ(Base64("fooba"), "Zm9vYmE=");
  EXPECT_EQ(Base64("foobar"), "Zm9vYmFy");
  EXPECT_EQ(Base64(std::string("\xFF\x00\xFE", 3)), "/wD+");
  EXPECT_EQ(HtmlEscape("a<b>&\"c'd \u00B5"),
            "a&lt;b&gt;&amp;&quot;c&#39;d \u00B5");
}

}  // namespace
}  // namespace figura
