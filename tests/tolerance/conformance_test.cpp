#include "tolerance/conformance.h"

#include <gtest/gtest.h>

namespace figura {
namespace {

// A tolerance at λ = 632.8 nm: one fringe = 316.4 nm [derived from DIN ISO
// 10110-5:2016, fringe = λ/2], so A = ±632.8 nm, B = 316.4 nm, C = 158.2 nm,
// RMSi = 31.64 nm.
FormTolerance Tol() {
  return ParseFormTolerance("3/2(1/0.5) RMSi < 0.1; λ = 632.8 nm");
}

TEST(EvaluateConformance, AllInsidePasses) {
  FormMeasurement m;
  m.Set(FormCharacteristic::kPower,
        {-600.0, 20.0});  // signed: |−600| + 20 <= 632.8
  m.Set(FormCharacteristic::kIrregularity, {200.0, 30.0});
  m.Set(FormCharacteristic::kRsi, {100.0, 10.0});
  m.Set(FormCharacteristic::kRmsIrregularity, {20.0, 2.0});
  m.Set(FormCharacteristic::kRmsTotal,
        {5000.0, 1.0});  // not toleranced: ignored
  const ConformanceResult r = EvaluateConformance(Tol(), m, {});
  EXPECT_EQ(r.overall, Conformance::kPass);
  ASSERT_EQ(r.items.size(), 4U);
  EXPECT_EQ(r.items[0].characteristic, FormCharacteristic::kPower);
  EXPECT_NEAR(r.items[0].limit_nm, 632.8, 1e-9);
  EXPECT_NEAR(r.items[0].verdict.margin, 32.8, 1e-9);
  EXPECT_NEAR(r.items[0].verdict.guarded_margin, 12.8, 1e-9);
  EXPECT_NEAR(r.items[0].margin_fringes, 32.8 / 316.4, 1e-12);
  EXPECT_NEAR(r.items[1].verdict.margin, 116.4, 1e-9);
  EXPECT_EQ(r.status, Status::kOk);
}

TEST(EvaluateConformance, IndeterminateAndFailCombine) {
  FormMeasurement m;
  m.Set(FormCharacteristic::kPower, {620.0, 20.0});         // straddles ±632.8
  m.Set(FormCharacteristic::kIrregularity, {200.0, 30.0});  // pass
  m.Set(FormCharacteristic::kRsi, {100.0, 10.0});           // pass
  m.Set(FormCharacteristic::kRmsIrregularity, {20.0, 2.0});  // pass
  EXPECT_EQ(EvaluateConformance(Tol(), m, {}).overall,
            Conformance::kIndeterminate);
  // Simple acceptance decides the same numbers by value alone.
  EXPECT_EQ(EvaluateConformance(Tol(), m, {DecisionRule::kSimple}).overall,
            Conformance::kPass);
  m.Set(FormCharacteristic::kRmsIrregularity, {40.0, 2.0});  // fail: 38 > 31.64
  const ConformanceResult r = EvaluateConformance(Tol(), m, {});
  EXPECT_EQ(r.overall, Conformance::kFail);
  EXPECT_EQ(r.items[3].verdict.conformance, Conformance::kFail);
  EXPECT_LT(r.items[3].verdict.margin, 0.0);
  const nlohmann::json j = ConformanceJson(r);
  EXPECT_EQ(j["verdict"], "fail");
  EXPECT_EQ(j["decision_rule"], "iso14253-1");
  EXPECT_EQ(j["characteristics"][0]["verdict"], "indeterminate");
  EXPECT_EQ(j["characteristics"].size(), 4U);
}

TEST(EvaluateConformance, TolerancedButNotMeasuredIsIndeterminate) {
  FormMeasurement m;
  m.Set(FormCharacteristic::kPower, {0.0, 10.0});
  const ConformanceResult r = EvaluateConformance(Tol(), m, {});
  EXPECT_EQ(r.overall, Conformance::kIndeterminate);
  EXPECT_EQ(r.status, Status::kWarning);
  EXPECT_EQ(r.messages.size(), 3U);
  EXPECT_TRUE(ConformanceJson(r)["characteristics"][1]["value_nm"].is_null());
}

}  // namespace
}  // namespace figura
