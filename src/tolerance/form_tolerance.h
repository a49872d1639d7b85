// ISO 10110-5 surface form tolerances as written on a drawing, e.g.
// "3/2(0.5/0.2)", "3/-(1); λ = 546 nm", "3/0.5(0.25) RMSi < 0.05; λ = 632.8
// nm", parsed into limits in fringes and in nanometres of surface.
//
// Reading of the text (ISO 10110-5, code number 3):
//   3/A(B/C) RMSt < Dt; RMSi < Di; RMSa < Da; λ = E
//   A  power (sagitta deviation), a ± limit (two-sided);
//   B  irregularity, peak-to-valley (one-sided, upper);
//   C  rotationally symmetric irregularity, peak-to-valley (one-sided, upper);
//   RMSt, RMSi, RMSa  RMS of the total deviation, of the irregularity and of
//      the non-rotationally-symmetric part (one-sided, upper) [memory: ISO
//      10110-5:2007, see ../shared/references.md];
//   λ  the test wavelength.
// A dash stands for "not toleranced here" (for A: the radius tolerance is a
// dimension on the drawing). "(B)" alone tolerates B only; "(-/C)" C only.
// Values are in fringes unless written with a unit (nm, um, µm). One fringe
// is half the test wavelength of surface (DIN ISO 10110-5:2016, abstract).
// Where no wavelength is stated, 546.07 nm applies [memory: ISO
// 10110-5:1996/2007 reference wavelength].
#pragma once

#include <array>
#include <cstddef>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>

#include "core/error.h"
#include "core/light_source.h"

namespace figura {

// Test wavelength that applies where a drawing states none, in nm [memory:
// ISO 10110-5:1996/2007].
inline constexpr double kDefaultTestWavelengthNm = 546.07;

// The characteristics a form tolerance may limit, in the order of the text.
enum class FormCharacteristic {
  kPower,            // A
  kIrregularity,     // B
  kRsi,              // C
  kRmsTotal,         // RMSt
  kRmsIrregularity,  // RMSi
  kRmsNonSymmetric,  // RMSa
};

// Number of FormCharacteristic values.
inline constexpr std::size_t kFormCharacteristicCount = 6;

// Fixed facts about one characteristic: its symbol on the drawing, its JSON
// key (as in the result fields of ../shared/design.md), a plain description,
// and whether its limit is two-sided (±, only A).
struct CharacteristicInfo {
  const char* symbol;  // "A", "B", "C", "RMSt", "RMSi", "RMSa"
  const char* key;  // "power", "irregularity", "rsi", "rms_t", "rms_i", "rms_a"
  const char* description;  // e.g. "power (sagitta deviation)"
  bool two_sided;
};

// The table entry for `c`.
const CharacteristicInfo& CharacteristicInfoOf(FormCharacteristic c);

// All characteristics in text order, for loops.
const std::array<FormCharacteristic, kFormCharacteristicCount>&
AllCharacteristics();

// One limit of a form tolerance. Absent or dashed: toleranced == false.
struct ToleranceLimit {
  bool toleranced = false;
  bool dash = false;           // written as '-' (explicitly not toleranced)
  double fringes = 0.0;        // limit in fringes at the tolerance wavelength
  double nm = 0.0;             // the same limit in nm of surface
  bool written_in_nm = false;  // the text gave a length unit, not fringes
  int column = 0;  // 1-based column of the value in the text (0: absent)
};

// Where the tolerance wavelength came from.
enum class WavelengthOrigin {
  kStated,   // written in the text (λ = ...)
  kOption,   // not in the text; supplied by --wavelength
  kDefault,  // neither: kDefaultTestWavelengthNm
};

// JSON/print spelling: "stated", "option", "default".
const char* WavelengthOriginName(WavelengthOrigin origin);

// A parsed ISO 10110-5 form tolerance.
struct FormTolerance {
  std::string text;  // the original text, unchanged
  std::array<ToleranceLimit, kFormCharacteristicCount> limits{};
  double wavelength_nm = kDefaultTestWavelengthNm;  // test wavelength in air
  WavelengthOrigin wavelength_origin = WavelengthOrigin::kDefault;

  // The limit for `c`.
  [[nodiscard]] const ToleranceLimit& LimitOf(FormCharacteristic c) const {
    return limits.at(static_cast<std::size_t>(c));
  }
  // nm of surface per fringe: λ/2 (DIN ISO 10110-5:2016, abstract).
  [[nodiscard]] double NmPerFringe() const { return wavelength_nm / 2.0; }
};

// A malformed tolerance text. what() is one line naming the problem and the
// column, followed by the text and a caret under the column:
//   tolerance text: missing ')' (column 6)
//     3/5(1
//          ^
class ToleranceSyntaxError : public InputError {
 public:
  ToleranceSyntaxError(std::string_view text, int column,
                       const std::string& problem);
  // 1-based column (in characters, not bytes) of the problem.
  [[nodiscard]] int Column() const { return column_; }
  // The problem without text and caret.
  [[nodiscard]] const std::string& Problem() const { return problem_; }

 private:
  int column_;
  std::string problem_;
};

// Parses `text`. Where the text states no wavelength, `fallback` is used
// (origin kOption) if given, else kDefaultTestWavelengthNm (origin kDefault).
// Throws ToleranceSyntaxError on malformed text, negative limits, a
// wavelength without unit or outside 200 nm .. 2000 nm (the range of
// tabulated air wavelengths, NIST ASD), and a text that limits nothing.
FormTolerance ParseFormTolerance(
    std::string_view text,
    const std::optional<Wavelength>& fallback = std::nullopt);

// The 1-based character column of byte offset `byte` in UTF-8 `text`.
int CharacterColumn(std::string_view text, std::size_t byte);

// {"text", "wavelength_nm", "wavelength_origin", "nm_per_fringe",
//  "limits": {"power": {"toleranced", "two_sided", "limit_fringes",
//  "limit_nm", "written_unit"} | null, ...}}; untoleranced limits are null.
nlohmann::json FormToleranceJson(const FormTolerance& tolerance);

}  // namespace figura
