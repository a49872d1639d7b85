// libFuzzer target: the quantity parsers of core/quantity.h (lengths with
// units, plain numbers, pixel points), as used for every option and job
// key. Properties: only InputError refuses input; accepted values are
// finite; a parsed length printed by FormatLength parses back to the same
// length (7 significant digits: relative error <= 5e-7 by construction of
// "%.7g").
#include <array>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/quantity.h"
#include "fuzz_util.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data,
                                      std::size_t size) {
  using figura::fuzz::Require;
  const std::string_view text = figura::fuzz::AsText(data, size);

  figura::fuzz::RefuseOnlyWithInputError([&] {
    const figura::Length length = figura::ParseLength(text, "--length");
    Require(std::isfinite(length.metres),
            "ParseLength gave a non-finite value");
    const std::string printed = figura::FormatLength(length);
    const figura::Length again = figura::ParseLength(printed, "printed");
    // Subnormal lengths lose digits in the unit conversion; compare with an
    // absolute floor far below any length on the bench (1e-30 m).
    Require(std::fabs(again.metres - length.metres) <=
                5e-7 * std::fabs(length.metres) + 1e-30,
            "FormatLength/ParseLength round trip changed the length");
  });
  figura::fuzz::RefuseOnlyWithInputError([&] {
    const double v = figura::ParseNumber(text, "--number");
    Require(std::isfinite(v), "ParseNumber gave a non-finite value");
  });
  figura::fuzz::RefuseOnlyWithInputError([&] {
    const std::array<double, 2> p =
        figura::ParsePixelPoint(text, "--aperture-centre");
    Require(std::isfinite(p[0]) && std::isfinite(p[1]),
            "ParsePixelPoint gave a non-finite value");
  });
  const std::string_view trimmed = figura::Trim(text);
  Require(trimmed.size() <= text.size(), "Trim grew the text");
  return 0;
}
