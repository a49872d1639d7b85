// Verdict of a measured surface against a whole ISO 10110-5 form tolerance:
// one verdict with margins per toleranced characteristic, and a combined
// verdict (any fail -> fail; else any indeterminate -> indeterminate; else
// pass). Values and limits are compared in nm of surface, so a part tested
// at another wavelength than the drawing's is judged correctly.
#pragma once

#include <array>
#include <limits>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/error.h"
#include "tolerance/decision_rule.h"
#include "tolerance/form_tolerance.h"

namespace figura {

// One measured characteristic in nm of surface: power is the signed sagitta
// deviation (ISO 10110-5 A is compared by magnitude), the others are
// magnitudes. u95 is the expanded uncertainty (about 95 %), NaN if unknown.
struct MeasuredValue {
  double value_nm = std::numeric_limits<double>::quiet_NaN();
  double u95_nm = std::numeric_limits<double>::quiet_NaN();
};

// The measured characteristics, indexed by FormCharacteristic; empty where
// not measured.
struct FormMeasurement {
  std::array<std::optional<MeasuredValue>, kFormCharacteristicCount> values{};

  // Sets the value for `c`.
  void Set(FormCharacteristic c, MeasuredValue v) {
    values.at(static_cast<std::size_t>(c)) = v;
  }
  // The value for `c`, if measured.
  [[nodiscard]] const std::optional<MeasuredValue>& Get(
      FormCharacteristic c) const {
    return values.at(static_cast<std::size_t>(c));
  }
};

// Options of the conformance stage.
struct ConformanceOptions {
  DecisionRule rule = DecisionRule::kIso14253;

  // Empty when valid (every rule is valid; kept for the stage pattern).
  [[nodiscard]] std::string Check() const { return {}; }
};

// The verdict for one toleranced characteristic.
struct CharacteristicVerdict {
  FormCharacteristic characteristic = FormCharacteristic::kPower;
  double limit_nm = 0.0;
  bool two_sided = false;
  std::optional<MeasuredValue> measured;  // empty: toleranced but not measured
  Verdict verdict;
  double margin_fringes = 0.0;  // margin at the tolerance wavelength
  double guarded_margin_fringes =
      0.0;  // guarded margin at the tolerance wavelength
};

// The verdict of a part against a tolerance.
struct ConformanceResult {
  Status status = Status::kOk;
  std::vector<std::string> messages;
  DecisionRule rule = DecisionRule::kIso14253;
  Conformance overall = Conformance::kIndeterminate;
  std::vector<CharacteristicVerdict>
      items;  // toleranced characteristics, in text order
};

// Judges `measured` against every toleranced characteristic of `tolerance`.
// A toleranced characteristic that was not measured is indeterminate (with a
// warning); a measured one that is not toleranced is ignored.
ConformanceResult EvaluateConformance(const FormTolerance& tolerance,
                                      const FormMeasurement& measured,
                                      const ConformanceOptions& options);

// {"decision_rule", "decision_rule_text", "verdict", "characteristics":
//  [{"symbol", "key", "limit_nm", "two_sided", "value_nm", "u95_nm",
//    "verdict", "margin_nm", "guarded_margin_nm", "margin_fringes",
//    "guarded_margin_fringes", "reason"}]}; non-finite numbers are null.
nlohmann::json ConformanceJson(const ConformanceResult& result);

}  // namespace figura
