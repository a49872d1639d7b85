#include "tolerance/decision_rule.h"

#include <algorithm>
#include <cassert>
#include <cctype>
#include <cmath>
#include <limits>
#include <sstream>

#include "core/error.h"

namespace figura {
namespace {

std::string Lower(std::string_view text) {
  std::string out;
  for (const char c : text)
    out.push_back(
        static_cast<char>(std::tolower(static_cast<unsigned char>(c))));
  return out;
}

std::string Number(double v) {
  std::ostringstream out;
  out.precision(6);
  out << v;
  return out.str();
}

}  // namespace

const char* DecisionRuleName(DecisionRule rule) {
  switch (rule) {
    case DecisionRule::kIso14253:
      return "iso14253-1";
    case DecisionRule::kSimple:
      return "simple";
  }
  return "iso14253-1";
}

std::string DecisionRuleDescription(DecisionRule rule) {
  switch (rule) {
    case DecisionRule::kIso14253:
      return "ISO 14253-1: pass when the value plus its expanded uncertainty "
             "U95 is within the "
             "limit, fail when the value minus U95 is beyond it, otherwise "
             "indeterminate; the "
             "limit itself counts as inside";
    case DecisionRule::kSimple:
      return "simple acceptance: pass when the value is within the limit (the "
             "limit itself "
             "counts as inside), uncertainty not taken into account";
  }
  return {};
}

DecisionRule ParseDecisionRule(std::string_view text, std::string_view what) {
  const std::string t = Lower(text);
  if (t == "iso14253-1" || t == "iso14253" || t == "iso-14253-1" ||
      t == "guarded") {
    return DecisionRule::kIso14253;
  }
  if (t == "simple") return DecisionRule::kSimple;
  throw InputError(std::string(what) + ": unknown decision rule '" +
                   std::string(text) + "'; accepted: iso14253-1, simple");
}

const char* ConformanceName(Conformance c) {
  switch (c) {
    case Conformance::kPass:
      return "pass";
    case Conformance::kFail:
      return "fail";
    case Conformance::kIndeterminate:
      return "indeterminate";
  }
  return "indeterminate";
}

Verdict Decide(double value, double u95, Limit limit, DecisionRule rule) {
  assert(std::isfinite(limit.value) && limit.value >= 0.0);
  assert(!(u95 < 0.0));  // NaN (unknown) is allowed
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  Verdict v;
  if (!std::isfinite(value)) {
    v.conformance = Conformance::kIndeterminate;
    v.margin = kNaN;
    v.guarded_margin = kNaN;
    v.reason = "no measured value";
    return v;
  }
  const double deviation =
      limit.kind == LimitKind::kTwoSided ? std::fabs(value) : value;
  v.margin = limit.value - deviation;
  const bool u_known = std::isfinite(u95);
  v.guarded_margin = u_known ? v.margin - u95 : kNaN;
  // On the limit within a relative 1e-9 counts as on it (see the header).
  const double slack =
      kOnLimitRelative * std::max(limit.value, std::fabs(deviation));
  const std::string shown =
      limit.kind == LimitKind::kTwoSided ? "|value| " : "value ";
  const std::string bound =
      (limit.kind == LimitKind::kTwoSided ? "±" : "") + Number(limit.value);
  if (rule == DecisionRule::kSimple) {
    const bool inside = v.margin >= -slack;
    v.conformance = inside ? Conformance::kPass : Conformance::kFail;
    v.reason = shown + Number(deviation) + (inside ? " within " : " beyond ") +
               "limit " + bound + " (simple acceptance)";
    return v;
  }
  if (!u_known) {
    v.conformance = Conformance::kIndeterminate;
    v.reason =
        "uncertainty unknown: conformance cannot be proven (ISO 14253-1)";
    return v;
  }
  if (v.margin - u95 >= -slack) {
    v.conformance = Conformance::kPass;
    v.reason = shown + Number(deviation) + " + U95 " + Number(u95) +
               " within limit " + bound;
  } else if (v.margin + u95 < -slack) {
    v.conformance = Conformance::kFail;
    v.reason = shown + Number(deviation) + " - U95 " + Number(u95) +
               " beyond limit " + bound;
  } else {
    v.conformance = Conformance::kIndeterminate;
    v.reason = shown + Number(deviation) + " ± U95 " + Number(u95) +
               " straddles limit " + bound;
  }
  return v;
}

Conformance Combine(std::span<const Conformance> verdicts) {
  if (verdicts.empty()) return Conformance::kIndeterminate;
  if (std::find(verdicts.begin(), verdicts.end(), Conformance::kFail) !=
      verdicts.end()) {
    return Conformance::kFail;
  }
  if (std::find(verdicts.begin(), verdicts.end(),
                Conformance::kIndeterminate) != verdicts.end()) {
    return Conformance::kIndeterminate;
  }
  return Conformance::kPass;
}

}  // namespace figura
