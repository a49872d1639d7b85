#include "tolerance/conformance.h"

#include <cmath>

#include "io/result_json.h"

namespace figura {

ConformanceResult EvaluateConformance(const FormTolerance& tolerance,
                                      const FormMeasurement& measured,
                                      const ConformanceOptions& options) {
  ConformanceResult r;
  r.rule = options.rule;
  std::vector<Conformance> verdicts;
  for (const FormCharacteristic c : AllCharacteristics()) {
    const ToleranceLimit& l = tolerance.LimitOf(c);
    if (!l.toleranced) continue;
    const CharacteristicInfo& info = CharacteristicInfoOf(c);
    CharacteristicVerdict item;
    item.characteristic = c;
    item.limit_nm = l.nm;
    item.two_sided = info.two_sided;
    item.measured = measured.Get(c);
    const Limit limit{
        l.nm, info.two_sided ? LimitKind::kTwoSided : LimitKind::kUpper};
    if (item.measured) {
      item.verdict = Decide(item.measured->value_nm, item.measured->u95_nm,
                            limit, options.rule);
    } else {
      item.verdict = Decide(std::numeric_limits<double>::quiet_NaN(), 0.0,
                            limit, options.rule);
      item.verdict.reason = "toleranced but not measured";
      r.status = Status::kWarning;
      r.messages.push_back(
          std::string(info.symbol) + " (" + info.description +
          ") is toleranced but was not measured: indeterminate");
    }
    item.margin_fringes = item.verdict.margin / tolerance.NmPerFringe();
    item.guarded_margin_fringes =
        item.verdict.guarded_margin / tolerance.NmPerFringe();
    verdicts.push_back(item.verdict.conformance);
    r.items.push_back(item);
  }
  r.overall = Combine(verdicts);
  return r;
}

nlohmann::json ConformanceJson(const ConformanceResult& result) {
  nlohmann::json items = nlohmann::json::array();
  for (const CharacteristicVerdict& item : result.items) {
    const CharacteristicInfo& info = CharacteristicInfoOf(item.characteristic);
    const double nan = std::numeric_limits<double>::quiet_NaN();
    items.push_back(
        {{"symbol", info.symbol},
         {"key", info.key},
         {"limit_nm", item.limit_nm},
         {"two_sided", item.two_sided},
         {"value_nm",
          FiniteOrNull(item.measured ? item.measured->value_nm : nan)},
         {"u95_nm", FiniteOrNull(item.measured ? item.measured->u95_nm : nan)},
         {"verdict", ConformanceName(item.verdict.conformance)},
         {"margin_nm", FiniteOrNull(item.verdict.margin)},
         {"guarded_margin_nm", FiniteOrNull(item.verdict.guarded_margin)},
         {"margin_fringes", FiniteOrNull(item.margin_fringes)},
         {"guarded_margin_fringes", FiniteOrNull(item.guarded_margin_fringes)},
         {"reason", item.verdict.reason}});
  }
  return {{"decision_rule", DecisionRuleName(result.rule)},
          {"decision_rule_text", DecisionRuleDescription(result.rule)},
          {"verdict", ConformanceName(result.overall)},
          {"characteristics", items}};
}

}  // namespace figura
