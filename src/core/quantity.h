// Quantities with units: lengths parsed from text such as "589.29nm",
// "0.58929 um", "12.5µm", "100mm", "-1.2 m". A bare number where a length is
// expected is an error naming the accepted units.
#pragma once

#include <array>
#include <string>
#include <string_view>

namespace figura {

// The units a length may carry, for messages and help text.
inline constexpr const char* kLengthUnits = "nm, um (or µm), mm, cm, m";

// A length in metres. Signed: a test-plate radius may be negative.
struct Length {
  double metres = 0.0;

  static constexpr Length Metres(double v) { return Length{v}; }
  static constexpr Length Millimetres(double v) { return Length{v * 1e-3}; }
  static constexpr Length Micrometres(double v) { return Length{v * 1e-6}; }
  static constexpr Length Nanometres(double v) { return Length{v * 1e-9}; }

  // The value in millimetres.
  [[nodiscard]] constexpr double mm() const { return metres * 1e3; }
  // The value in micrometres.
  [[nodiscard]] constexpr double um() const { return metres * 1e6; }
  // The value in nanometres.
  [[nodiscard]] constexpr double nm() const { return metres * 1e9; }

  friend constexpr bool operator==(Length, Length) = default;
};

// Parses a length with a unit (nm, um, µm, mm, cm, m; optional space between
// number and unit; optional sign). Throws InputError naming `what` (an option
// or key name, may be empty) and the accepted units on a bare number, an
// unknown unit, or a non-finite value.
Length ParseLength(std::string_view text, std::string_view what = {});

// Parses a plain finite number (no unit), e.g. a refractive index. Throws
// InputError naming `what` on anything else.
double ParseNumber(std::string_view text, std::string_view what = {});

// A pixel position "X,Y" (two numbers, a comma between), e.g. "512.5,384".
// Throws InputError naming `what` when the text is not of that form.
std::array<double, 2> ParsePixelPoint(std::string_view text,
                                      std::string_view what);

// Formats a length in the unit that reads best for the bench ("589.2938 nm",
// "8 um", "100 mm", "1.2 m"), with up to `digits` significant digits.
std::string FormatLength(Length length, int digits = 7);

// Trims ASCII white space from both ends.
std::string_view Trim(std::string_view text);

}  // namespace figura
