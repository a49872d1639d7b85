// The `figura tolerance` stage: parse an ISO 10110-5 form tolerance and say
// in plain words what it asks of the part at the bench.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/light_source.h"
#include "tolerance/decision_rule.h"
#include "tolerance/form_tolerance.h"

namespace figura {

// Options of the tolerance stage.
struct ToleranceOptions {
  std::string text;                      // the tolerance as on the drawing
  std::optional<Wavelength> wavelength;  // used where the text states none
  DecisionRule rule = DecisionRule::kIso14253;  // named in the explanation

  // Empty when valid, else a readable message (empty text, wavelength out of
  // 200 nm .. 2000 nm).
  [[nodiscard]] std::string Check() const;
};

// Result of the tolerance stage.
struct ToleranceResult {
  Status status = Status::kOk;
  std::vector<std::string> messages;  // notes and warnings, one line each
  FormTolerance tolerance;
  std::string explanation;  // several lines, ends with a newline
};

// Parses and explains `options.text`. Throws InputError when Check() fails
// and ToleranceSyntaxError (an InputError) on malformed text. Warnings: the
// default wavelength was assumed (fringes without a stated wavelength, which
// ISO 10110-5:2015 no longer allows [memory]); --wavelength differs from the
// stated one; a zero limit.
ToleranceResult ExplainTolerance(const ToleranceOptions& options);

// {"text", "wavelength", "decision_rule"}: every setting used, defaults
// included, for the result's `settings` block.
nlohmann::json ToleranceSettingsJson(const ToleranceOptions& options);

// Formats a number with up to `digits` significant digits, no trailing zeros
// ("273.035", "0.5", "1000").
std::string FormatValue(double value, int digits = 6);

}  // namespace figura
