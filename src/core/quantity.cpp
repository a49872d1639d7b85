#include "core/quantity.h"

#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <string>
#include <utility>

#include "core/error.h"

namespace figura {
namespace {

struct Unit {
  std::string_view name;
  double metres;
};

// Longest names first so that "mm" is not read as "m".
constexpr std::array<Unit, 7> kUnits = {{{"\xC2\xB5m", 1e-6},  // µm (U+00B5)
                                         {"\xCE\xBCm", 1e-6},  // μm (U+03BC)
                                         {"nm", 1e-9},
                                         {"um", 1e-6},
                                         {"mm", 1e-3},
                                         {"cm", 1e-2},
                                         {"m", 1.0}}};

std::string Quote(std::string_view what) {
  return what.empty() ? std::string() : std::string(what) + ": ";
}

// Reads a number at the start of text; returns characters used (0 if none).
std::size_t ReadNumber(std::string_view text, double* value) {
  std::string_view t = text;
  if (!t.empty() && t.front() == '+') t.remove_prefix(1);
  const char* begin = t.data();
  const char* end = t.data() + t.size();
  auto [ptr, ec] = std::from_chars(begin, end, *value);
  if (ec != std::errc()) return 0;
  return static_cast<std::size_t>(ptr - begin) + (text.size() - t.size());
}

}  // namespace

std::string_view Trim(std::string_view text) {
  const auto is_space = [](char c) {
    return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\f' ||
           c == '\v';
  };
  while (!text.empty() && is_space(text.front())) text.remove_prefix(1);
  while (!text.empty() && is_space(text.back())) text.remove_suffix(1);
  return text;
}

Length ParseLength(std::string_view text, std::string_view what) {
  const std::string_view t = Trim(text);
  double value = 0.0;
  const std::size_t used = ReadNumber(t, &value);
  if (used == 0) {
    throw InputError(Quote(what) + "'" + std::string(text) +
                     "' is not a length; write a number with a unit (" +
                     kLengthUnits + "), e.g. 589.29nm");
  }
  const std::string_view unit = Trim(t.substr(used));
  if (unit.empty()) {
    throw InputError(Quote(what) + "'" + std::string(text) +
                     "' has no unit; accepted units: " + kLengthUnits +
                     " (e.g. " + std::string(t) + "mm)");
  }
  for (const Unit& u : kUnits) {
    if (unit == u.name) {
      const double metres = value * u.metres;
      if (!std::isfinite(metres)) {
        throw InputError(Quote(what) + "'" + std::string(text) +
                         "' is not a finite length");
      }
      return Length{metres};
    }
  }
  throw InputError(Quote(what) + "'" + std::string(text) +
                   "' has unknown unit '" + std::string(unit) +
                   "'; accepted units: " + kLengthUnits);
}

double ParseNumber(std::string_view text, std::string_view what) {
  const std::string_view t = Trim(text);
  double value = 0.0;
  const std::size_t used = ReadNumber(t, &value);
  if (used == 0 || used != t.size() || !std::isfinite(value)) {
    throw InputError(Quote(what) + "'" + std::string(text) +
                     "' is not a plain number");
  }
  return value;
}

int ParseWholeNumber(std::string_view text, std::string_view what) {
  const double v = ParseNumber(text, what);
  // Range first: converting a double beyond int is undefined behaviour.
  if (v != std::floor(v) || std::abs(v) > 2e9) {
    throw InputError(std::string(what) + ": expected a whole number, got '" +
                     std::string(Trim(text)) + "'");
  }
  return static_cast<int>(v);
}

PixelsOrLength ParsePixelsOrLength(std::string_view text,
                                   std::string_view what) {
  const std::string_view t = Trim(text);
  double value = 0.0;
  const std::size_t used = ReadNumber(t, &value);
  PixelsOrLength size;
  if (used != 0 && used == t.size() && std::isfinite(value)) {
    size.pixels = value;
    return size;
  }
  if (used != 0 && used < t.size()) {
    try {
      size.length = ParseLength(t, what);
      return size;
    } catch (const InputError&) {
      // Fall through to the message that names both forms.
    }
  }
  throw InputError(Quote(what) + "'" + std::string(text) +
                   "' is neither pixels (a bare number, e.g. 480) nor a "
                   "length with a unit (" +
                   kLengthUnits + ", e.g. 25mm)");
}

double PixelsOrLength::Pixels(std::optional<double> pixel_pitch_m,
                              std::string_view what,
                              std::string_view pitch_option) const {
  if (!length) return pixels;
  if (!pixel_pitch_m) {
    throw InputError(Quote(what) + "a length (" + FormatLength(*length) +
                     ") needs " + std::string(pitch_option) +
                     " (or give pixels, e.g. 480)");
  }
  return length->metres / *pixel_pitch_m;
}

Length PixelsOrLength::ToLength(double pixel_pitch_m) const {
  return length ? *length : Length::Metres(pixels * pixel_pitch_m);
}

std::string FormatLength(Length length, int digits) {
  const double a = std::fabs(length.metres);
  double scale = 1.0;
  const char* unit = "m";
  if (a != 0.0 && a < 1e-6) {
    scale = 1e9;
    unit = "nm";
  } else if (a != 0.0 && a < 1e-3) {
    scale = 1e6;
    unit = "um";
  } else if (a < 1.0) {  // zero reads "0 mm"
    scale = 1e3;
    unit = "mm";
  }
  std::array<char, 64> buf{};
  std::snprintf(buf.data(), buf.size(), "%.*g %s", digits,
                length.metres * scale, unit);
  return buf.data();
}

std::array<double, 2> ParsePixelPoint(std::string_view text,
                                      std::string_view what) {
  const std::size_t comma = text.find(',');
  if (comma == std::string_view::npos) {
    throw InputError(std::string(what) + ": '" + std::string(text) +
                     "' must be X,Y in pixels, e.g. 512.5,384");
  }
  return {ParseNumber(text.substr(0, comma), what),
          ParseNumber(text.substr(comma + 1), what)};
}

}  // namespace figura
