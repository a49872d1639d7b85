// Helpers for the io tests: scratch folders, file bytes, a deterministic
// sample pattern, a libtiff writer for test images in every layout the
// loader accepts, a BMP writer, and running Debian's /usr/bin/python3 as a
// reference.
#pragma once

#include <gtest/gtest.h>
#include <sys/wait.h>
#include <tiffio.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <opencv2/core.hpp>
#include <sstream>
#include <string>
#include <system_error>
#include <vector>

#include "core/sha256.h"
#include "scratch_dir.h"

namespace figura::io_test {

namespace fs = std::filesystem;

// A fresh, empty folder under FIGURA_TEST_TMP/io, private to this process.
inline fs::path ScratchDir(const std::string& name) {
  return test::ScratchDir("io", name);
}

inline void WriteBytes(const fs::path& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
  ASSERT_TRUE(out.good()) << path;
}

inline std::string ReadBytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

// Files in `dir` whose names contain ".tmp-" (leftover temporaries).
inline std::vector<std::string> TempFiles(const fs::path& dir) {
  std::vector<std::string> found;
  for (const auto& e : fs::directory_iterator(dir)) {
    const std::string name = e.path().filename().string();
    if (name.find(".tmp-") != std::string::npos) found.push_back(name);
  }
  return found;
}

// The test pattern: sample c of pixel (x, y) for a given bit depth (8, 16:
// integers covering the range; 32: float). The same formula is written in
// the Python scripts that produce reference files.
inline double Pattern(int x, int y, int c, int bits) {
  if (bits == 8) return (x * 7 + y * 13 + c * 50) % 256;
  if (bits == 16) return (x * 1021 + y * 2039 + c * 7919) % 65536;
  return (x - 0.5 * y + 0.25 * c) * 0.125;  // exact in binary floating point
}

// Expected grey value from RGB samples with the Rec. 601 luma weights
// (ITU-R BT.601-7, 2.5.1: 0.299 R + 0.587 G + 0.114 B).
inline double Rec601(double r, double g, double b) {
  return 0.299 * r + 0.587 * g + 0.114 * b;
}

// A TIFF layout to write.
struct TiffSpec {
  int width = 37;  // odd sizes: partial edge strips and tiles
  int height = 23;
  int bits = 8;     // 8, 16 (unsigned) or 32 (float)
  int samples = 1;  // 1 grey, 3 RGB, 4 RGBA (alpha = 0)
  bool separate = false;
  bool tiled = false;
  std::uint16_t compression = COMPRESSION_NONE;
  std::uint16_t photometric = PHOTOMETRIC_MINISBLACK;
  int rows_per_strip = 5;
  int tile = 16;
};

// Writes `spec` filled with Pattern() with libtiff. Returns false on failure.
inline bool WriteTestTiff(const fs::path& path, const TiffSpec& spec) {
  TIFF* tif = TIFFOpen(path.c_str(), "w");
  if (tif == nullptr) return false;
  const bool is_float = spec.bits == 32;
  TIFFSetField(tif, TIFFTAG_IMAGEWIDTH, static_cast<std::uint32_t>(spec.width));
  TIFFSetField(tif, TIFFTAG_IMAGELENGTH,
               static_cast<std::uint32_t>(spec.height));
  TIFFSetField(tif, TIFFTAG_BITSPERSAMPLE,
               static_cast<std::uint16_t>(spec.bits));
  TIFFSetField(tif, TIFFTAG_SAMPLESPERPIXEL,
               static_cast<std::uint16_t>(spec.samples));
  TIFFSetField(tif, TIFFTAG_SAMPLEFORMAT,
               is_float ? SAMPLEFORMAT_IEEEFP : SAMPLEFORMAT_UINT);
  TIFFSetField(tif, TIFFTAG_PHOTOMETRIC, spec.photometric);
  TIFFSetField(tif, TIFFTAG_PLANARCONFIG,
               spec.separate ? PLANARCONFIG_SEPARATE : PLANARCONFIG_CONTIG);
  TIFFSetField(tif, TIFFTAG_COMPRESSION, spec.compression);
  if (spec.samples == 4) {
    const std::uint16_t extra = EXTRASAMPLE_UNASSALPHA;
    TIFFSetField(tif, TIFFTAG_EXTRASAMPLES, 1, &extra);
  }
  const int bytes = spec.bits / 8;
  const int planes = spec.separate ? spec.samples : 1;
  const int per_pixel = spec.separate ? 1 : spec.samples;
  const auto put = [&](std::vector<std::uint8_t>& buf, std::size_t index,
                       double v) {
    if (spec.bits == 8) {
      buf[index] = static_cast<std::uint8_t>(v);
    } else if (spec.bits == 16) {
      const auto s = static_cast<std::uint16_t>(v);
      std::memcpy(&buf[index * 2], &s, 2);
    } else {
      const auto f = static_cast<float>(v);
      std::memcpy(&buf[index * 4], &f, 4);
    }
  };
  bool ok = true;
  if (spec.tiled) {
    TIFFSetField(tif, TIFFTAG_TILEWIDTH, static_cast<std::uint32_t>(spec.tile));
    TIFFSetField(tif, TIFFTAG_TILELENGTH,
                 static_cast<std::uint32_t>(spec.tile));
    std::vector<std::uint8_t> buf(
        static_cast<std::size_t>(spec.tile * spec.tile * per_pixel * bytes));
    for (int p = 0; p < planes; ++p) {
      for (int y0 = 0; y0 < spec.height; y0 += spec.tile) {
        for (int x0 = 0; x0 < spec.width; x0 += spec.tile) {
          std::fill(buf.begin(), buf.end(), 0);
          for (int r = 0; r < spec.tile; ++r) {
            for (int q = 0; q < spec.tile; ++q) {
              for (int c = 0; c < per_pixel; ++c) {
                const int x = x0 + q;
                const int y = y0 + r;
                const int ch = spec.separate ? p : c;
                // Padding of edge tiles gets a value far from the pattern.
                const double v =
                    (x < spec.width && y < spec.height)
                        ? (ch == 3 ? 0.0 : Pattern(x, y, ch, spec.bits))
                        : (spec.bits == 32 ? 1e6
                                           : (spec.bits == 8 ? 255 : 65535));
                put(buf,
                    static_cast<std::size_t>((r * spec.tile + q) * per_pixel +
                                             c),
                    v);
              }
            }
          }
          const std::uint32_t tile = TIFFComputeTile(
              tif, static_cast<std::uint32_t>(x0),
              static_cast<std::uint32_t>(y0), 0, static_cast<std::uint16_t>(p));
          ok = ok &&
               TIFFWriteEncodedTile(tif, tile, buf.data(),
                                    static_cast<tmsize_t>(buf.size())) >= 0;
        }
      }
    }
  } else {
    TIFFSetField(tif, TIFFTAG_ROWSPERSTRIP,
                 static_cast<std::uint32_t>(spec.rows_per_strip));
    for (int p = 0; p < planes; ++p) {
      for (int y0 = 0; y0 < spec.height; y0 += spec.rows_per_strip) {
        const int rows = std::min(spec.rows_per_strip, spec.height - y0);
        std::vector<std::uint8_t> buf(
            static_cast<std::size_t>(rows * spec.width * per_pixel * bytes));
        for (int r = 0; r < rows; ++r) {
          for (int x = 0; x < spec.width; ++x) {
            for (int c = 0; c < per_pixel; ++c) {
              const int ch = spec.separate ? p : c;
              const double v =
                  ch == 3 ? 0.0 : Pattern(x, y0 + r, ch, spec.bits);
              put(buf,
                  static_cast<std::size_t>((r * spec.width + x) * per_pixel +
                                           c),
                  v);
            }
          }
        }
        const std::uint32_t strip = TIFFComputeStrip(
            tif, static_cast<std::uint32_t>(y0), static_cast<std::uint16_t>(p));
        ok =
            ok && TIFFWriteEncodedStrip(tif, strip, buf.data(),
                                        static_cast<tmsize_t>(buf.size())) >= 0;
      }
    }
  }
  TIFFClose(tif);
  return ok;
}

// The grey value the loader must produce for pixel (x, y) of `spec`.
inline double ExpectedGrey(const TiffSpec& spec, int x, int y) {
  if (spec.samples >= 3) {
    return Rec601(Pattern(x, y, 0, spec.bits), Pattern(x, y, 1, spec.bits),
                  Pattern(x, y, 2, spec.bits));
  }
  const double v = Pattern(x, y, 0, spec.bits);
  if (spec.photometric == PHOTOMETRIC_MINISWHITE) {
    return (spec.bits == 8 ? 255.0 : spec.bits == 16 ? 65535.0 : 1.0) - v;
  }
  return v;
}

// A 24-bit uncompressed BMP of `bgr` (CV_8UC3): BITMAPFILEHEADER (14 bytes)
// and BITMAPINFOHEADER (40 bytes), rows bottom-up, each padded to a multiple
// of 4 bytes, samples in B, G, R order [memory: Microsoft's BMP file format
// documentation, BITMAPINFOHEADER]. Written here so that the io tests need
// no encoder of the library under test.
inline std::string EncodeTestBmp(const cv::Mat& bgr) {
  const auto width = static_cast<std::uint32_t>(bgr.cols);
  const auto height = static_cast<std::uint32_t>(bgr.rows);
  const std::uint32_t row_bytes = (3 * width + 3) / 4 * 4;
  const std::uint32_t pixel_bytes = row_bytes * height;
  std::string out;
  const auto put = [&out](std::uint32_t value, int bytes) {
    for (int i = 0; i < bytes; ++i)
      out.push_back(static_cast<char>((value >> (8 * i)) & 0xFF));
  };
  out += "BM";
  put(14 + 40 + pixel_bytes, 4);  // file size
  put(0, 4);                      // two reserved words
  put(14 + 40, 4);                // offset of the pixels
  put(40, 4);                     // BITMAPINFOHEADER size
  put(width, 4);
  put(height, 4);  // positive: bottom-up rows
  put(1, 2);       // planes
  put(24, 2);      // bits per pixel
  put(0, 4);       // BI_RGB, no compression
  put(pixel_bytes, 4);
  put(2835, 4);  // 72 dpi in pixels per metre, both axes
  put(2835, 4);
  put(0, 4);  // colours used
  put(0, 4);  // important colours
  for (int y = bgr.rows - 1; y >= 0; --y) {
    const std::size_t start = out.size();
    out.append(reinterpret_cast<const char*>(bgr.ptr(y)), 3 * width);
    out.resize(start + row_bytes, '\0');
  }
  return out;
}

// Runs a Python script with Debian's /usr/bin/python3 (not the one on PATH).
// Returns the exit status; 77 means a module is missing (the script should
// exit 77 on ImportError) and the caller skips.
// Every script starts with this: the imports, its folder `d`, and
// pattern(c, bits), the same formula as io_test::Pattern, on 23 rows x 37
// columns.
inline constexpr const char* kPythonPreamble = R"PY(import sys
try:
    import numpy as np, tifffile
    from PIL import Image
except ImportError:
    sys.exit(77)
d = sys.argv[0].rsplit('/', 1)[0]
h, w = 23, 37
y, x = np.mgrid[0:h, 0:w]
def pattern(c, bits):  # same formula as io_test::Pattern
    if bits == 8: return ((x * 7 + y * 13 + c * 50) % 256).astype(np.uint8)
    if bits == 16: return ((x * 1021 + y * 2039 + c * 7919) % 65536).astype(np.uint16)
    return ((x - 0.5 * y + 0.25 * c) * 0.125).astype(np.float32)
)PY";

inline int RunPython(const fs::path& dir, const std::string& script) {
  const fs::path file = dir / "script.py";
  {
    std::ofstream out(file);
    out << kPythonPreamble << script;
  }
  if (!fs::exists("/usr/bin/python3")) return 77;
  const std::string cmd = "/usr/bin/python3 '" + file.string() + "'";
  const int rc = std::system(cmd.c_str());
  return WIFEXITED(rc) ? WEXITSTATUS(rc) : -1;
}

// Runs a reference-file script once per build tree: its output folder is
// cached under FIGURA_TEST_TMP/io/cache/<name>-<hash of the script>, made
// under a private name and renamed into place, so concurrent test processes
// share one result. Tests must not write into `*dir`. Returns like
// RunPython.
inline int CachedPython(const std::string& name, const std::string& script,
                        fs::path* dir) {
  const fs::path cache = fs::path(FIGURA_TEST_TMP) / "io" / "cache";
  *dir =
      cache / (name + "-" + Sha256Hex(kPythonPreamble + script).substr(0, 16));
  if (fs::exists(*dir / "done")) return 0;
  fs::create_directories(cache);
  const fs::path work = cache / (name + ".tmp" + test::ProcessSuffix());
  fs::remove_all(work);
  fs::create_directories(work);
  const int rc = RunPython(
      work, script + "\nopen(sys.argv[0].rsplit('/', 1)[0] + '/done', 'w')\n");
  std::error_code ec;
  if (rc == 0)
    fs::rename(work, *dir, ec);  // fails harmlessly if another process won
  fs::remove_all(work, ec);
  return rc;
}

}  // namespace figura::io_test
