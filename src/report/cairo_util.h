// Small cairo helpers shared by the report writers: owning handles for
// surfaces and contexts, an image surface from an OpenCV picture, and PNG
// encoding into memory.
#pragma once

#include <cairo.h>

#include <memory>
#include <opencv2/core.hpp>
#include <string>

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

}  // namespace figura
