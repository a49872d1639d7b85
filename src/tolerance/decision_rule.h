// Deciding conformance of one measured value with one limit, taking its
// measurement uncertainty into account (ISO 14253-1 decision rule), or by the
// value alone ("simple acceptance").
//
// ISO 14253-1 reading used here:
//   - conformance is proven when the value with its expanded uncertainty U
//     (coverage about 95 %) lies wholly inside the specification zone:
//     |v| + U <= A for a ± limit, v + U <= L for an upper limit;
//   - nonconformance is proven when it lies wholly outside:
//     |v| - U > A, v - U > L;
//   - otherwise the result is indeterminate.
// On the limit: the limit itself belongs to the specification zone (a drawing
// limit means "not exceeding"; ISO 10110-5's "RMSi < D" is read the same way,
// our reading). So a value exactly on the limit with U = 0 passes, and with
// U > 0 it is indeterminate. "Exactly" allows a relative difference of 1e-9,
// so that rounding in a unit conversion (fringes to nm) does not flip a
// verdict [practice].
#pragma once

#include <span>
#include <string>
#include <string_view>

namespace figura {

// How a verdict is reached.
enum class DecisionRule {
  kIso14253,  // guarded by the expanded uncertainty (ISO 14253-1)
  kSimple,    // value inside the limit passes, uncertainty ignored
};

// Spelling in options, reports and JSON: "iso14253-1", "simple".
const char* DecisionRuleName(DecisionRule rule);

// One sentence for reports saying how the rule decides.
std::string DecisionRuleDescription(DecisionRule rule);

// Parses "iso14253-1" (also "iso14253", "iso-14253-1", "guarded") or
// "simple". Throws InputError naming `what` and the accepted names.
DecisionRule ParseDecisionRule(std::string_view text,
                               std::string_view what = "--decision-rule");

// Relative difference within which a value counts as on the limit.
inline constexpr double kOnLimitRelative = 1e-9;

// The kind of a limit.
enum class LimitKind {
  kTwoSided,  // ±value: |measured| is compared (ISO 10110-5 A)
  kUpper,     // at most value (ISO 10110-5 B, C and the RMS forms)
};

// A limit (non-negative, in the unit of the measured value).
struct Limit {
  double value = 0.0;
  LimitKind kind = LimitKind::kUpper;
};

// Outcome of a decision.
enum class Conformance { kPass, kFail, kIndeterminate };

// Spelling in reports and JSON: "pass", "fail", "indeterminate".
const char* ConformanceName(Conformance c);

// A verdict with its margins, in the unit of the value; positive inside.
struct Verdict {
  Conformance conformance = Conformance::kIndeterminate;
  double margin =
      0.0;  // limit - v (two-sided: limit - |v|); NaN without a value
  double guarded_margin = 0.0;  // margin - U95; NaN when U95 is unknown
  std::string reason;           // one line for reports
};

// Decides `value` (signed for a two-sided limit) with expanded uncertainty
// `u95` (>= 0, or NaN when unknown) against `limit` by `rule` (ISO 14253-1
// zones as described at the top of this file). A NaN value is indeterminate
// under both rules; an unknown U95 makes the ISO 14253-1 rule indeterminate.
Verdict Decide(double value, double u95, Limit limit, DecisionRule rule);

// Combines verdicts: any fail -> fail; else any indeterminate ->
// indeterminate; else pass. No verdicts at all: indeterminate.
Conformance Combine(std::span<const Conformance> verdicts);

}  // namespace figura
