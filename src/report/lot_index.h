// The lot index page: one self-contained index.html (no network, no
// external scripts, fonts or style sheets) with the lot header, the counts
// per verdict, the decision rule, and a sortable table with one row per
// input (errors included, their message shown), each with its thumbnail
// (inline data: URI), verdict and a link to the part's PDF.
#pragma once

#include <filesystem>
#include <nlohmann/json.hpp>
#include <opencv2/core.hpp>
#include <string>
#include <string_view>
#include <vector>

namespace figura {

// Options of the index page.
struct LotIndexOptions {
  int thumbnail_px = 160;  // longest side of an embedded thumbnail, 16..1024
  // Embedded thumbnail files larger than this are left out (bytes).
  std::size_t max_thumbnail_file_bytes = std::size_t{2} << 20;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// `text` with & < > " ' replaced by HTML character references.
std::string HtmlEscape(std::string_view text);

// Standard base64 (RFC 4648, section 4, with '=' padding) of `bytes`.
std::string Base64(std::string_view bytes);

// The page as a string. `summary` is the lot summary JSON: {"lot", "tool":
// {"name", "version"}, "decision_rule", "decision_rule_text", "counts",
// "parts": [{"file", "part", "status", "verdict", "message", "pdf",
// "thumbnail", numbers...}]}; any field may be missing or null.
// `thumbnails[i]` (8-bit BGR or grey, may be empty or the vector shorter)
// is the picture of parts[i]; where it is empty, parts[i].thumbnail (a PNG
// or JPEG file, relative to `base_dir`) is embedded instead when readable.
// Links to PDFs are relative paths as given in parts[i].pdf.
std::string RenderLotIndex(const nlohmann::json& summary,
                           const std::vector<cv::Mat>& thumbnails,
                           const std::filesystem::path& base_dir,
                           const LotIndexOptions& options = {});

// Renders the page (thumbnail files relative to the folder of `html`) and
// writes it atomically. Throws OutputError naming the file.
void WriteLotIndex(const std::filesystem::path& html,
                   const nlohmann::json& summary,
                   const std::vector<cv::Mat>& thumbnails = {},
                   const LotIndexOptions& options = {});

}  // namespace figura
