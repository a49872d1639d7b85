// Small helpers shared by the report writers (PDF and HTML): owning handles
// for cairo surfaces and contexts, an image surface from an OpenCV picture,
// PNG encoding into memory, text made safe for cairo's toy text API (which
// refuses invalid UTF-8), and the number formats every report uses.
#pragma once

#include <cairo.h>

#include <memory>
#include <opencv2/core.hpp>
#include <string>
#include <string_view>
#include <vector>

namespace figura {

// Deleters so that std::unique_ptr owns cairo objects.
struct CairoSurfaceDeleter {
  void operator()(cairo_surface_t* s) const { cairo_surface_destroy(s); }
};
struct CairoContextDeleter {
  void operator()(cairo_t* cr) const { cairo_destroy(cr); }
};

// An owned cairo surface / context.
using CairoSurface = std::unique_ptr<cairo_surface_t, CairoSurfaceDeleter>;
using CairoContext = std::unique_ptr<cairo_t, CairoContextDeleter>;

// A CAIRO_FORMAT_RGB24 image surface holding a copy of `image` (8-bit, 1, 3
// or 4 channels, BGR(A) as OpenCV stores it; 16-bit is scaled to 8 bits).
// An empty image gives a null surface.
CairoSurface SurfaceFromMat(const cv::Mat& image);

// The bytes of a PNG file of `image` (as SurfaceFromMat takes it), scaled
// down so that its longest side is at most `max_side` pixels (never up).
// Empty for an empty image. Throws OutputError if cairo fails.
std::string EncodePng(const cv::Mat& image, int max_side);

// `text` as valid UTF-8: invalid, overlong or surrogate sequences become
// U+FFFD, control characters (C0, DEL, C1; tabs and line breaks too) become
// spaces.
std::string CleanUtf8(std::string_view text);

// Byte offsets of the start of every character of valid UTF-8 `text`, plus
// text.size() at the end (so a text of n characters gives n + 1 offsets).
std::vector<std::size_t> CharBoundaries(std::string_view text);

// `value` with `significant` significant digits (printf %g); "-0" is
// printed as "0", non-finite values as an em dash.
std::string FormatNumber(double value, int significant);

// `value` with `decimals` digits after the point (printf %f); a negative
// value that rounds to zero is printed without its sign, non-finite values
// as an em dash.
std::string FormatFixed(double value, int decimals);

// Decimals that show an uncertainty `u` (> 0) with two significant digits,
// 0..12 (JCGM 100:2008, GUM 7.2.6: "at most two significant digits"); the
// value it belongs to is rounded to the same place.
int DecimalsForUncertainty(double u);

}  // namespace figura
