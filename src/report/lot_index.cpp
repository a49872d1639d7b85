#include "report/lot_index.h"

#include <cmath>
#include <cstdint>
#include <fstream>
#include <sstream>
#include <string>
#include <system_error>

#include "core/error.h"
#include "io/atomic_file.h"
#include "report/cairo_util.h"
#include "report/part_report.h"

namespace figura {
namespace {

constexpr const char* kDash = "\u2014";

const nlohmann::json* Field(const nlohmann::json& j, const char* key) {
  if (!j.is_object()) return nullptr;
  const auto it = j.find(key);
  return it == j.end() ? nullptr : &*it;
}

// A string field, cleaned to valid UTF-8 (not yet escaped); "" if absent.
std::string Str(const nlohmann::json& j, const char* key) {
  const nlohmann::json* v = Field(j, key);
  if (v == nullptr || v->is_null()) return {};
  if (v->is_string()) return CleanUtf8(v->get<std::string>());
  if (v->is_number() || v->is_boolean()) return v->dump();
  return {};
}

// Escaped text or an em dash when empty.
std::string Cell(const std::string& s) {
  return s.empty() ? std::string(kDash) : HtmlEscape(s);
}

// Reads a thumbnail file (PNG or JPEG by its signature) as a data: URI;
// empty when missing, too large or of another kind.
std::string FileDataUri(const std::filesystem::path& path,
                        std::size_t max_bytes) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) return {};
  const std::uintmax_t size = std::filesystem::file_size(path, ec);
  if (ec || size == 0 || size > max_bytes) return {};
  std::ifstream in(path, std::ios::binary);
  if (!in) return {};
  std::string bytes(static_cast<std::size_t>(size), '\0');
  if (!in.read(bytes.data(), static_cast<std::streamsize>(size))) return {};
  const char* mime = nullptr;
  if (bytes.size() > 8 && bytes.compare(0, 8, "\x89PNG\r\n\x1a\n") == 0) {
    mime = "image/png";
  } else if (bytes.size() > 3 && bytes.compare(0, 3, "\xFF\xD8\xFF") == 0) {
    mime = "image/jpeg";
  }
  if (mime == nullptr) return {};
  return std::string("data:") + mime + ";base64," + Base64(bytes);
}

// A link target must stay a relative file reference: no scheme (javascript:,
// http:), no absolute path. Others are shown as text without a link.
bool SafeRelativeLink(const std::string& s) {
  if (s.empty() || s[0] == '/' || s[0] == '\\') return false;
  const std::size_t colon = s.find(':');
  const std::size_t slash = s.find('/');
  return colon == std::string::npos ||
         (slash != std::string::npos && slash < colon);
}

// Percent-encodes characters that break or change a relative URL (space,
// %, #, ?, quotes, < >, non-ASCII); the result is then HTML-escaped.
std::string UrlPath(const std::string& s) {
  static const char* kHex = "0123456789ABCDEF";
  std::string out;
  for (const char ch : s) {
    const auto c = static_cast<unsigned char>(ch);
    if (c <= 0x20U || c >= 0x7FU || ch == '%' || ch == '#' || ch == '?' ||
        ch == '"' || ch == '\'' || ch == '<' || ch == '>' || ch == '\\') {
      out += '%';
      out += kHex[c >> 4U];
      out += kHex[c & 0xFU];
    } else {
      out += ch;
    }
  }
  return out;
}

// The sortable-table script: a click on a header sorts by that column,
// numbers numerically (data-sort holds the raw number; empty cells last),
// text by locale order; a second click reverses. Plain ES5, no libraries.
constexpr const char* kScript = R"JS(
(function () {
  'use strict';
  function key(cell) {
    var raw = cell.getAttribute('data-sort');
    if (raw === null) { raw = cell.textContent; }
    return raw;
  }
  function compare(a, b, numeric) {
    if (numeric) {
      var x = parseFloat(a), y = parseFloat(b);
      var xn = isNaN(x), yn = isNaN(y);
      if (xn || yn) { return xn === yn ? 0 : (xn ? 1 : -1); }
      return x - y;
    }
    return a.localeCompare(b, undefined, {numeric: true, sensitivity: 'base'});
  }
  function sortBy(table, col, th) {
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    var numeric = th.getAttribute('data-type') === 'number';
    var dir = th.getAttribute('aria-sort') === 'ascending' ? -1 : 1;
    var indexed = rows.map(function (r, i) { return [r, i]; });
    indexed.sort(function (p, q) {
      var c = compare(key(p[0].cells[col]), key(q[0].cells[col]), numeric);
      if (numeric && c !== 0 && (isNaN(parseFloat(key(p[0].cells[col]))) ||
                                 isNaN(parseFloat(key(q[0].cells[col]))))) {
        return c;  /* empty cells stay last in both directions */
      }
      return c !== 0 ? dir * c : p[1] - q[1];
    });
    var heads = table.tHead.rows[0].cells;
    for (var h = 0; h < heads.length; ++h) { heads[h].removeAttribute('aria-sort'); }
    th.setAttribute('aria-sort', dir === 1 ? 'ascending' : 'descending');
    indexed.forEach(function (p) { body.appendChild(p[0]); });
  }
  var table = document.getElementById('parts');
  if (!table || !table.tHead) { return; }
  var heads = table.tHead.rows[0].cells;
  Array.prototype.forEach.call(heads, function (th, col) {
    th.addEventListener('click', function () { sortBy(table, col, th); });
    th.addEventListener('keydown', function (e) {
      if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); sortBy(table, col, th); }
    });
  });
  window.figuraSortBy = function (col) { sortBy(table, col, heads[col]); };
})();
)JS";

constexpr const char* kStyle = R"CSS(
body { font-family: sans-serif; margin: 1.5em; color: #111; background: #fff; }
h1 { font-size: 1.4em; margin: 0 0 0.3em 0; }
.meta { color: #444; font-size: 0.9em; margin: 0.2em 0; }
.counts span { display: inline-block; margin: 0.3em 0.6em 0.3em 0; padding: 0.2em 0.6em;
  border: 1px solid #222; border-radius: 3px; font-weight: bold; }
table { border-collapse: collapse; margin-top: 1em; font-size: 0.9em; }
th, td { border: 1px solid #bbb; padding: 0.25em 0.5em; vertical-align: middle; }
th { background: #eee; cursor: pointer; user-select: none; white-space: nowrap; }
th[aria-sort="ascending"]::after { content: " \25B2"; }
th[aria-sort="descending"]::after { content: " \25BC"; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.file { max-width: 22em; overflow-wrap: anywhere; }
td.msg { max-width: 28em; overflow-wrap: anywhere; font-size: 0.9em; }
td.verdict { font-weight: bold; text-transform: uppercase; text-align: center; }
img.thumb { display: block; max-width: 160px; max-height: 160px; }
)CSS";

}  // namespace

std::string LotIndexOptions::Check() const {
  if (thumbnail_px < 16 || thumbnail_px > 1024) {
    return "thumbnail size must be 16 to 1024 px, not " +
           std::to_string(thumbnail_px);
  }
  return {};
}

std::string HtmlEscape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

std::string Base64(std::string_view bytes) {
  static const char* kAlphabet =
      "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  std::string out;
  out.reserve((bytes.size() + 2) / 3 * 4);
  std::size_t i = 0;
  for (; i + 3 <= bytes.size(); i += 3) {
    const std::uint32_t v =
        (static_cast<std::uint32_t>(static_cast<unsigned char>(bytes[i]))
         << 16U) |
        (static_cast<std::uint32_t>(static_cast<unsigned char>(bytes[i + 1]))
         << 8U) |
        static_cast<std::uint32_t>(static_cast<unsigned char>(bytes[i + 2]));
    out += kAlphabet[(v >> 18U) & 63U];
    out += kAlphabet[(v >> 12U) & 63U];
    out += kAlphabet[(v >> 6U) & 63U];
    out += kAlphabet[v & 63U];
  }
  const std::size_t rest = bytes.size() - i;
  if (rest > 0) {
    std::uint32_t v =
        static_cast<std::uint32_t>(static_cast<unsigned char>(bytes[i])) << 16U;
    if (rest == 2) {
      v |= static_cast<std::uint32_t>(static_cast<unsigned char>(bytes[i + 1]))
           << 8U;
    }
    out += kAlphabet[(v >> 18U) & 63U];
    out += kAlphabet[(v >> 12U) & 63U];
    out += rest == 2 ? kAlphabet[(v >> 6U) & 63U] : '=';
    out += '=';
  }
  return out;
}

std::string RenderLotIndex(const nlohmann::json& summary,
                           const std::vector<cv::Mat>& thumbnails,
                           const std::filesystem::path& base_dir,
                           const LotIndexOptions& options) {
  if (const std::string why = options.Check(); !why.empty()) {
    throw InputError("lot index: " + why);
  }
  const std::string lot = Str(summary, "lot");
  const nlohmann::json* tool = Field(summary, "tool");
  const std::string version =
      tool != nullptr ? Str(*tool, "version") : std::string();
  std::ostringstream h;
  h << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
       "<meta name=\"viewport\" content=\"width=device-width, "
       "initial-scale=1\">\n"
       // Nothing may be fetched: no network, no other files but the PDFs
       // the links open, and inline images only.
       "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src "
       "'none'; img-src data:; style-src 'unsafe-inline'; script-src "
       "'unsafe-inline'\">\n"
    << "<title>Lot " << Cell(lot) << " \u2014 figura</title>\n<style>" << kStyle
    << "</style>\n</head>\n<body>\n";
  h << "<h1>Lot " << Cell(lot) << "</h1>\n";
  const std::string lot_verdict = Str(summary, "verdict");
  if (!lot_verdict.empty()) {
    const VerdictStyle st = StyleOfVerdict(lot_verdict);
    h << "<p class=\"meta\">Lot verdict: <span class=\"verdict\" style=\""
      << "background:" << st.css_fill << ";color:" << st.css_text
      << ";padding:0.1em 0.5em;font-weight:bold\">" << HtmlEscape(lot_verdict)
      << "</span></p>\n";
  }
  h << "<p class=\"meta\">Operator: " << Cell(Str(summary, "operator"))
    << " &middot; analysis: " << Cell(Str(summary, "analysis"))
    << " &middot; tool: figura " << Cell(version) << "</p>\n";
  const nlohmann::json* tol = Field(summary, "tolerance");
  if (tol != nullptr && tol->is_object()) {
    h << "<p class=\"meta\">Tolerance (ISO 10110-5): "
      << Cell(Str(*tol, "text")) << "</p>\n";
  }
  h << "<p class=\"meta\">Decision rule: "
    << Cell(Str(summary, "decision_rule"));
  const std::string rule_text = Str(summary, "decision_rule_text");
  if (!rule_text.empty()) h << " \u2014 " << HtmlEscape(rule_text);
  h << "</p>\n";
  const std::string started = Str(summary, "started_utc");
  const std::string finished = Str(summary, "finished_utc");
  if (!started.empty() || !finished.empty()) {
    h << "<p class=\"meta\">Run: " << Cell(started) << " to " << Cell(finished)
      << "</p>\n";
  }
  const nlohmann::json* interrupted = Field(summary, "interrupted");
  if (interrupted != nullptr && interrupted->is_boolean() &&
      interrupted->get<bool>()) {
    h << "<p class=\"meta\"><strong>The run was interrupted: not every input "
         "has a row.</strong></p>\n";
  }

  // Counts per verdict: from the summary when given, else counted here.
  const nlohmann::json* parts = Field(summary, "parts");
  const bool have_parts = parts != nullptr && parts->is_array();
  const char* kinds[] = {"total", "pass", "fail", "indeterminate", "error"};
  h << "<p class=\"counts\">";
  const nlohmann::json* counts = Field(summary, "counts");
  for (const char* kind : kinds) {
    long long n = 0;
    const nlohmann::json* c =
        counts != nullptr ? Field(*counts, kind) : nullptr;
    if (c != nullptr && c->is_number_integer()) {
      n = c->get<long long>();
    } else if (have_parts) {
      for (const auto& p : *parts) {
        const std::string v =
            Str(p, "status") == "error" ? "error" : Str(p, "verdict");
        if (std::string(kind) == "total" || v == kind) ++n;
      }
    }
    const VerdictStyle st = StyleOfVerdict(kind);
    h << "<span class=\"count-" << kind
      << "\" style=\"background:" << st.css_fill << ";color:" << st.css_text
      << "\">" << kind << ": " << n << "</span>";
  }
  h << "</p>\n";

  // Numeric columns: from the summary's "columns" list.
  struct Column {
    std::string key, label, unit;
  };
  std::vector<Column> columns;
  const nlohmann::json* cols = Field(summary, "columns");
  if (cols != nullptr && cols->is_array()) {
    for (const auto& c : *cols) {
      Column col{Str(c, "key"), Str(c, "label"), Str(c, "unit")};
      if (col.key.empty()) continue;
      if (col.label.empty()) col.label = col.key;
      columns.push_back(col);
    }
  }

  h << "<table id=\"parts\">\n<thead><tr>"
    << "<th tabindex=\"0\" data-type=\"number\">#</th>"
    << "<th>picture</th>"
    << "<th tabindex=\"0\">part</th>"
    << "<th tabindex=\"0\">file</th>"
    << "<th tabindex=\"0\">verdict</th>"
    << "<th tabindex=\"0\">status</th>";
  for (const Column& c : columns) {
    h << "<th tabindex=\"0\" data-type=\"number\">" << HtmlEscape(c.label);
    if (!c.unit.empty()) h << " (" << HtmlEscape(c.unit) << ")";
    h << "</th>";
  }
  h << "<th tabindex=\"0\">message</th><th>report</th></tr></thead>\n<tbody>\n";
  if (have_parts) {
    std::size_t i = 0;
    for (const auto& p : *parts) {
      const std::string status = Str(p, "status");
      const std::string verdict =
          status == "error" ? "error" : Str(p, "verdict");
      const VerdictStyle st = StyleOfVerdict(verdict);
      h << "<tr>";
      h << "<td class=\"num\" data-sort=\"" << i + 1 << "\">" << i + 1
        << "</td>";
      // Thumbnail: the given picture, else the summary's thumbnail file.
      std::string uri;
      if (i < thumbnails.size() && !thumbnails[i].empty()) {
        uri = "data:image/png;base64," +
              Base64(EncodePng(thumbnails[i], options.thumbnail_px));
      } else {
        const std::string file = Str(p, "thumbnail");
        // Only files at or below the page's folder are embedded.
        if (!file.empty() && SafeRelativeLink(file) &&
            file.find("..") == std::string::npos) {
          uri = FileDataUri(base_dir / file, options.max_thumbnail_file_bytes);
        }
      }
      h << "<td>";
      if (!uri.empty()) {
        h << "<img class=\"thumb\" alt=\"picture of part "
          << HtmlEscape(Str(p, "part")) << "\" src=\"" << uri << "\">";
      } else {
        h << kDash;
      }
      h << "</td>";
      h << "<td>" << Cell(Str(p, "part")) << "</td>";
      h << "<td class=\"file\">" << Cell(Str(p, "file")) << "</td>";
      h << "<td class=\"verdict\" style=\"background:" << st.css_fill
        << ";color:" << st.css_text << "\">" << Cell(verdict) << "</td>";
      h << "<td>" << Cell(status) << "</td>";
      for (const Column& c : columns) {
        const nlohmann::json* v = Field(p, c.key.c_str());
        if (v != nullptr && v->is_number() && std::isfinite(v->get<double>())) {
          const double d = v->get<double>();
          h << "<td class=\"num\" data-sort=\"" << FormatNumber(d, 17) << "\">"
            << HtmlEscape(FormatNumber(d, 8)) << "</td>";
        } else {
          h << "<td class=\"num\" data-sort=\"\">" << kDash << "</td>";
        }
      }
      h << "<td class=\"msg\">" << Cell(Str(p, "message")) << "</td>";
      const std::string pdf = Str(p, "pdf");
      h << "<td>";
      if (!pdf.empty() && SafeRelativeLink(pdf)) {
        h << "<a href=\"" << HtmlEscape(UrlPath(pdf)) << "\">PDF</a>";
      } else {
        h << kDash;
      }
      h << "</td></tr>\n";
      ++i;
    }
  }
  h << "</tbody>\n</table>\n";
  h << "<p class=\"meta\">Click a column header to sort (again to reverse). "
       "Verdicts are written out in every row; colours only repeat them. "
       "This page needs no network.</p>\n";
  h << "<script>" << kScript << "</script>\n</body>\n</html>\n";
  return h.str();
}

void WriteLotIndex(const std::filesystem::path& html,
                   const nlohmann::json& summary,
                   const std::vector<cv::Mat>& thumbnails,
                   const LotIndexOptions& options) {
  const std::filesystem::path base =
      html.has_parent_path() ? html.parent_path() : std::filesystem::path(".");
  const std::string page = RenderLotIndex(summary, thumbnails, base, options);
  WriteFileAtomic(html, page);
}

}  // namespace figura
