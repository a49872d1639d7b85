#include "tolerance/form_tolerance.h"

#include <cctype>
#include <charconv>
#include <cmath>
#include <sstream>
#include <utility>

namespace figura {
namespace {

constexpr std::array<CharacteristicInfo, kFormCharacteristicCount> kInfo = {{
    {"A", "power", "power (sagitta deviation)", true},
    {"B", "irregularity", "irregularity (peak-to-valley)", false},
    {"C", "rsi", "rotationally symmetric irregularity (peak-to-valley)", false},
    {"RMSt", "rms_t", "RMS of the total surface deviation", false},
    {"RMSi", "rms_i", "RMS irregularity", false},
    {"RMSa", "rms_a", "RMS of the non-rotationally-symmetric deviation", false},
}};

constexpr std::array<FormCharacteristic, kFormCharacteristicCount> kAll = {
    FormCharacteristic::kPower,
    FormCharacteristic::kIrregularity,
    FormCharacteristic::kRsi,
    FormCharacteristic::kRmsTotal,
    FormCharacteristic::kRmsIrregularity,
    FormCharacteristic::kRmsNonSymmetric};

// UTF-8 spellings accepted in the text.
constexpr std::string_view kLambda = "\xCE\xBB";         // λ U+03BB
constexpr std::string_view kLessEqual = "\xE2\x89\xA4";  // ≤ U+2264

// Length units a limit or the wavelength may carry, in nm per unit.
struct LimitUnit {
  std::string_view name;
  double nm;
};
constexpr std::array<LimitUnit, 4> kLimitUnits = {
    {{"nm", 1.0},
     {"um", 1e3},
     {"\xC2\xB5m", 1e3},    // µm U+00B5
     {"\xCE\xBCm", 1e3}}};  // μm U+03BC

// One value read from the text: a number, and the unit if one was written.
struct Value {
  double number = 0.0;
  double nm_per_unit = 0.0;  // 0: no unit (fringes)
  std::size_t begin = 0;     // byte offsets in the text
  std::size_t end = 0;
};

bool IsDigit(char c) { return c >= '0' && c <= '9'; }
bool IsAsciiLetter(char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z');
}

bool EqualsIgnoreCase(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (std::tolower(static_cast<unsigned char>(a[i])) !=
        std::tolower(static_cast<unsigned char>(b[i]))) {
      return false;
    }
  }
  return true;
}

class Parser {
 public:
  explicit Parser(std::string_view text) : text_(text) {}

  [[noreturn]] void Fail(std::size_t byte, const std::string& problem) const {
    throw ToleranceSyntaxError(text_, CharacterColumn(text_, byte), problem);
  }

  void SkipSpace() {
    while (pos_ < text_.size() &&
           (text_[pos_] == ' ' || text_[pos_] == '\t' || text_[pos_] == '\r' ||
            text_[pos_] == '\n')) {
      ++pos_;
    }
  }
  [[nodiscard]] bool AtEnd() const { return pos_ >= text_.size(); }
  [[nodiscard]] char Peek(std::size_t ahead = 0) const {
    return pos_ + ahead < text_.size() ? text_[pos_ + ahead] : '\0';
  }
  [[nodiscard]] bool LooksAt(std::string_view s) const {
    return text_.substr(pos_).substr(0, s.size()) == s;
  }
  [[nodiscard]] std::size_t Pos() const { return pos_; }
  void Advance(std::size_t n) { pos_ += n; }

  // A short quote of what stands at the current position, for messages.
  [[nodiscard]] std::string Here() const {
    if (AtEnd()) return "the end of the text";
    std::size_t n = 1;
    while (pos_ + n < text_.size() &&
           (static_cast<unsigned char>(text_[pos_ + n]) & 0xC0U) == 0x80U) {
      ++n;
    }
    std::string quoted(1, '\'');
    quoted.append(text_.substr(pos_, n));
    quoted.push_back('\'');
    return quoted;
  }

  // Reads digits with one optional decimal mark ('.' or a ',' between
  // digits). Fails at the value's column on a malformed number.
  Value ReadValue(const std::string& what) {
    Value v;
    v.begin = pos_;
    if (Peek() == '-' && (IsDigit(Peek(1)) || Peek(1) == '.')) {
      Fail(pos_, what + " cannot be negative" +
                     (what.front() == 'A'
                          ? std::string("; A is already a ± limit, write it "
                                        "without a sign")
                          : std::string()));
    }
    if (Peek() == '+') Fail(pos_, "write " + what + " without a sign");
    std::string digits;
    bool seen_digit = false;
    bool seen_mark = false;
    while (!AtEnd()) {
      const char c = Peek();
      if (IsDigit(c)) {
        digits.push_back(c);
        seen_digit = true;
      } else if ((c == '.' || (c == ',' && seen_digit && IsDigit(Peek(1)))) &&
                 !seen_mark) {
        digits.push_back('.');
        seen_mark = true;
      } else {
        break;
      }
      ++pos_;
    }
    if (!seen_digit) {
      Fail(v.begin, "expected a number for " + what + ", found " + Here());
    }
    if (Peek() == '.' || (Peek() == ',' && IsDigit(Peek(1)))) {
      Fail(v.begin, "malformed number for " + what);
    }
    const auto [ptr, ec] =
        std::from_chars(digits.data(), digits.data() + digits.size(), v.number);
    if (ec != std::errc() || ptr != digits.data() + digits.size() ||
        !std::isfinite(v.number)) {
      Fail(v.begin, "malformed number for " + what);
    }
    // Optional unit, with or without a space before it.
    const std::size_t before_space = pos_;
    SkipSpace();
    const std::size_t unit_begin = pos_;
    while (!AtEnd() && (IsAsciiLetter(Peek()) ||
                        (static_cast<unsigned char>(Peek()) >= 0x80U))) {
      // Stop before a λ (a following clause) and other non-letters.
      if (LooksAt(kLambda) || LooksAt(kLessEqual)) break;
      ++pos_;
    }
    const std::string_view unit = text_.substr(unit_begin, pos_ - unit_begin);
    if (unit.empty()) {
      pos_ = before_space;
    } else {
      bool known = false;
      for (const LimitUnit& u : kLimitUnits) {
        if (unit == u.name) {
          v.nm_per_unit = u.nm;
          known = true;
        }
      }
      if (!known) {
        // A keyword such as RMSi or lambda right after a number, separated by
        // a space, starts the next clause; anything glued on is a bad unit.
        const bool keyword =
            unit_begin != before_space &&
            (EqualsIgnoreCase(
                 unit.substr(0, std::min<std::size_t>(3, unit.size())),
                 "rms") ||
             EqualsIgnoreCase(unit, "lambda"));
        if (keyword) {
          pos_ = before_space;
        } else {
          Fail(
              unit_begin,
              "unknown unit '" + std::string(unit) + "' for " + what +
                  "; write fringes as a plain number, or a length in nm or um");
        }
      }
    }
    v.end = pos_;
    return v;
  }

 private:
  std::string_view text_;
  std::size_t pos_ = 0;
};

// A limit as read, still in its written unit.
struct Pending {
  Value value;
  bool present = false;
  bool dash = false;
};

}  // namespace

const CharacteristicInfo& CharacteristicInfoOf(FormCharacteristic c) {
  return kInfo.at(static_cast<std::size_t>(c));
}

const std::array<FormCharacteristic, kFormCharacteristicCount>&
AllCharacteristics() {
  return kAll;
}

const char* WavelengthOriginName(WavelengthOrigin origin) {
  switch (origin) {
    case WavelengthOrigin::kStated:
      return "stated";
    case WavelengthOrigin::kOption:
      return "option";
    case WavelengthOrigin::kDefault:
      return "default";
  }
  return "default";
}

int CharacterColumn(std::string_view text, std::size_t byte) {
  int column = 1;
  for (std::size_t i = 0; i < byte && i < text.size(); ++i) {
    if ((static_cast<unsigned char>(text[i]) & 0xC0U) != 0x80U) ++column;
  }
  return column;
}

namespace {

std::string SyntaxMessage(std::string_view text, int column,
                          const std::string& problem) {
  // Echo the text on one line (control characters become spaces, so the
  // caret stays under the right character).
  std::string shown;
  for (const char c : text) {
    shown.push_back(static_cast<unsigned char>(c) < 0x20U ? ' ' : c);
  }
  std::ostringstream out;
  out << "tolerance text: " << problem << " (column " << column << ")\n  "
      << shown << "\n  "
      << std::string(static_cast<std::size_t>(column - 1), ' ') << "^";
  return out.str();
}

}  // namespace

ToleranceSyntaxError::ToleranceSyntaxError(std::string_view text, int column,
                                           const std::string& problem)
    : InputError(SyntaxMessage(text, column, problem)),
      column_(column),
      problem_(problem) {}

FormTolerance ParseFormTolerance(std::string_view text,
                                 const std::optional<Wavelength>& fallback) {
  Parser p(text);
  std::array<Pending, kFormCharacteristicCount> pending{};
  const auto slot = [&pending](FormCharacteristic c) -> Pending& {
    return pending.at(static_cast<std::size_t>(c));
  };

  // Code number "3/".
  p.SkipSpace();
  if (p.AtEnd())
    p.Fail(p.Pos(),
           "the text is empty; expected a form tolerance such as 3/2(0.5)");
  if (IsDigit(p.Peek()) && p.Peek(1) == '/') {
    if (p.Peek() != '3') {
      p.Fail(p.Pos(), std::string("code number ") + p.Peek() +
                          " is not a surface form tolerance; ISO 10110-5 form "
                          "tolerances start "
                          "with 3/");
    }
    p.Advance(2);
  } else if (p.Peek() == '3') {
    p.Advance(1);
    p.SkipSpace();
    if (p.Peek() != '/')
      p.Fail(p.Pos(),
             "expected '/' after the code number 3, found " + p.Here());
    p.Advance(1);
  } else {
    p.Fail(p.Pos(),
           "expected the code number '3/' (ISO 10110-5 surface form "
           "tolerance), found " +
               p.Here());
  }

  // A, B, C: each a value or a dash.
  const auto read_slot = [&p, &slot](FormCharacteristic c,
                                     const std::string& what) {
    p.SkipSpace();
    Pending& s = slot(c);
    if (p.Peek() == '-' && !(IsDigit(p.Peek(1)) || p.Peek(1) == '.')) {
      s.dash = true;
      s.value.begin = p.Pos();
      p.Advance(1);
      return;
    }
    s.value = p.ReadValue(what);
    s.present = true;
  };
  read_slot(FormCharacteristic::kPower, "A (power)");
  p.SkipSpace();
  bool saw_parenthesis = false;
  if (p.Peek() == '(') {
    saw_parenthesis = true;
    const std::size_t open = p.Pos();
    p.Advance(1);
    p.SkipSpace();
    if (p.Peek() == ')')
      p.Fail(p.Pos(), "empty parentheses: write B, B/C or a dash, e.g. 3/2(1)");
    read_slot(FormCharacteristic::kIrregularity, "B (irregularity)");
    p.SkipSpace();
    if (p.Peek() == '/') {
      p.Advance(1);
      read_slot(FormCharacteristic::kRsi,
                "C (rotationally symmetric irregularity)");
      p.SkipSpace();
    }
    if (p.AtEnd()) p.Fail(open, "unclosed parenthesis: missing ')'");
    if (p.Peek() != ')')
      p.Fail(p.Pos(), "expected ')' or '/', found " + p.Here());
    p.Advance(1);
  }

  // Clauses: RMSt/RMSi/RMSa < value, λ = value. Separated by ';' (the
  // first may also follow after plain white space).
  std::optional<Value> stated_wavelength;
  bool first = true;
  for (;;) {
    p.SkipSpace();
    if (p.AtEnd()) break;
    if (p.Peek() == ';') {
      p.Advance(1);
      p.SkipSpace();
      if (p.AtEnd()) break;  // a trailing ';' is harmless
    } else if (!first) {
      p.Fail(p.Pos(), "expected ';' between clauses, found " + p.Here());
    }
    first = false;
    const std::size_t key = p.Pos();
    if (p.LooksAt(kLambda) ||
        (text.size() - key >= 6 &&
         EqualsIgnoreCase(text.substr(key, 6), "lambda"))) {
      if (stated_wavelength) p.Fail(key, "the wavelength is given twice");
      p.Advance(p.LooksAt(kLambda) ? kLambda.size() : 6);
      p.SkipSpace();
      if (p.Peek() != '=')
        p.Fail(p.Pos(),
               "expected '=' after the wavelength symbol, found " + p.Here());
      p.Advance(1);
      p.SkipSpace();
      const Value v = p.ReadValue("the wavelength");
      if (v.nm_per_unit == 0.0) {
        p.Fail(v.begin, "the wavelength needs a unit, e.g. λ = 546.07 nm");
      }
      const double nm = v.number * v.nm_per_unit;
      if (nm < 200.0 || nm > 2000.0) {
        // Same range as ResolveWavelength: tabulated air wavelengths (NIST
        // ASD).
        p.Fail(v.begin,
               "the wavelength is outside 200 nm .. 2000 nm, the range of "
               "tabulated air "
               "wavelengths");
      }
      stated_wavelength = v;
      continue;
    }
    if (text.size() - key >= 3 &&
        EqualsIgnoreCase(text.substr(key, 3), "rms")) {
      std::size_t end = key + 3;
      while (end < text.size() && IsAsciiLetter(text[end])) ++end;
      const std::string_view word = text.substr(key, end - key);
      FormCharacteristic c = FormCharacteristic::kRmsTotal;
      if (EqualsIgnoreCase(word, "rmst")) {
        c = FormCharacteristic::kRmsTotal;
      } else if (EqualsIgnoreCase(word, "rmsi")) {
        c = FormCharacteristic::kRmsIrregularity;
      } else if (EqualsIgnoreCase(word, "rmsa")) {
        c = FormCharacteristic::kRmsNonSymmetric;
      } else {
        p.Fail(key, "unknown RMS form '" + std::string(word) +
                        "'; ISO 10110-5 knows RMSt (total), RMSi "
                        "(irregularity) and RMSa "
                        "(non-rotationally-symmetric)");
      }
      const std::string symbol = CharacteristicInfoOf(c).symbol;
      if (slot(c).present) p.Fail(key, symbol + " is given twice");
      p.Advance(word.size());
      p.SkipSpace();
      if (p.LooksAt("<=")) {
        p.Advance(2);
      } else if (p.LooksAt(kLessEqual)) {
        p.Advance(kLessEqual.size());
      } else if (p.Peek() == '<') {
        p.Advance(1);
      } else {
        p.Fail(p.Pos(), "expected '<' after " + symbol + ", found " + p.Here());
      }
      p.SkipSpace();
      slot(c).value = p.ReadValue(symbol);
      slot(c).present = true;
      continue;
    }
    p.Fail(key, saw_parenthesis || slot(FormCharacteristic::kPower).present ||
                        slot(FormCharacteristic::kPower).dash
                    ? "unexpected text " + p.Here() +
                          "; expected RMSt/RMSi/RMSa < value or λ = "
                          "value, separated by ';'"
                    : "unexpected text " + p.Here());
  }

  FormTolerance t;
  t.text = std::string(text);
  if (stated_wavelength) {
    t.wavelength_nm =
        stated_wavelength->number * stated_wavelength->nm_per_unit;
    t.wavelength_origin = WavelengthOrigin::kStated;
  } else if (fallback) {
    t.wavelength_nm = fallback->value.nm();
    t.wavelength_origin = WavelengthOrigin::kOption;
  }
  const double nm_per_fringe = t.NmPerFringe();
  bool any = false;
  for (const FormCharacteristic c : kAll) {
    const Pending& s = slot(c);
    ToleranceLimit& l = t.limits.at(static_cast<std::size_t>(c));
    l.dash = s.dash;
    if (s.present || s.dash) l.column = CharacterColumn(text, s.value.begin);
    if (!s.present) continue;
    any = true;
    l.toleranced = true;
    l.written_in_nm = s.value.nm_per_unit != 0.0;
    if (l.written_in_nm) {
      l.nm = s.value.number * s.value.nm_per_unit;
      l.fringes = l.nm / nm_per_fringe;
    } else {
      l.fringes = s.value.number;
      l.nm = l.fringes * nm_per_fringe;
    }
    // A finite number may still overflow in the other unit (e.g. 1e308
    // fringes in nm): such a limit cannot be compared with a measurement.
    if (!std::isfinite(l.nm) || !std::isfinite(l.fringes)) {
      Parser(text).Fail(s.value.begin,
                        std::string(CharacteristicInfoOf(c).symbol) +
                            " is too large to convert between fringes and nm");
    }
  }
  if (!any) {
    Parser(text).Fail(0,
                      "the tolerance limits nothing (every value is a dash)");
  }
  return t;
}

nlohmann::json FormToleranceJson(const FormTolerance& tolerance) {
  nlohmann::json limits = nlohmann::json::object();
  for (const FormCharacteristic c : kAll) {
    const CharacteristicInfo& info = CharacteristicInfoOf(c);
    const ToleranceLimit& l = tolerance.LimitOf(c);
    if (!l.toleranced) {
      limits[info.key] = nullptr;
      continue;
    }
    limits[info.key] = {{"symbol", info.symbol},
                        {"two_sided", info.two_sided},
                        {"limit_fringes", l.fringes},
                        {"limit_nm", l.nm},
                        {"written_unit", l.written_in_nm ? "nm" : "fringes"}};
  }
  return {
      {"text", tolerance.text},
      {"wavelength_nm", tolerance.wavelength_nm},
      {"wavelength_origin", WavelengthOriginName(tolerance.wavelength_origin)},
      {"nm_per_fringe", tolerance.NmPerFringe()},
      {"limits", limits}};
}

}  // namespace figura
