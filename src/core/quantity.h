// Quantities with units: lengths parsed from text such as "589.29nm",
// "0.58929 um", "12.5µm", "100mm", "-1.2 m". A bare number where a length is
// expected is an error naming the accepted units.
#pragma once

#include <array>
#include <optional>
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

// Parses a whole number (no unit) of magnitude at most 2e9, e.g. a pixel
// count. Throws InputError "<what>: expected a whole number, got '<text>'"
// on a fraction or a number out of that range, and as ParseNumber on
// anything else.
int ParseWholeNumber(std::string_view text, std::string_view what = {});

// A size given either in pixels (a bare number, e.g. "480") or as an
// object-side length with a unit (e.g. "25mm"), as --aperture-diameter takes.
struct PixelsOrLength {
  double pixels = 0.0;           // the bare number; used when !length
  std::optional<Length> length;  // set when the text carried a unit

  // The size in pixels: the bare number, or the length divided by
  // `pixel_pitch_m` (object-side metres per pixel). A length without a pitch
  // throws InputError naming `what` and `pitch_option` (the option or key
  // that gives the pitch).
  [[nodiscard]] double Pixels(std::optional<double> pixel_pitch_m,
                              std::string_view what,
                              std::string_view pitch_option) const;
  // The size as a length: the length, or the pixels times `pixel_pitch_m`.
  [[nodiscard]] Length ToLength(double pixel_pitch_m) const;
};

// Parses pixels (a bare finite number) or a length with a unit (as
// ParseLength). Throws InputError naming `what` on anything else, saying
// that both forms are accepted.
PixelsOrLength ParsePixelsOrLength(std::string_view text,
                                   std::string_view what);

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
