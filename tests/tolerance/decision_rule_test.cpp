#include "tolerance/decision_rule.h"

#include <gtest/gtest.h>

#include <array>
#include <cmath>
#include <limits>

#include "core/error.h"

namespace figura {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr Conformance kPass = Conformance::kPass;
constexpr Conformance kFail = Conformance::kFail;
constexpr Conformance kInd = Conformance::kIndeterminate;

// ISO 14253-1 zones [memory: ISO 14253-1:2017, clauses on proving
// conformance and nonconformance]: conformance when v + U lies inside the
// specification zone, nonconformance when v - U lies outside, otherwise
// indeterminate. Our reading of "on the limit": the limit belongs to the
// specification zone, so v = L with U = 0 conforms and v = L with U > 0 is
// indeterminate (see decision_rule.h).
TEST(Decide, UpperLimitZonesIso14253) {
  const Limit upper{100.0, LimitKind::kUpper};
  struct Row {
    double v, u;
    Conformance expect;
  };
  const Row rows[] = {
      {99.0, 0.0, kPass},   // just inside, no uncertainty
      {100.0, 0.0, kPass},  // on the limit, no uncertainty: inside (our
                            // reading)
      {101.0, 0.0, kFail},  // just outside
      {99.0, 0.5, kPass},   // v + U = 99.5 inside
      {99.0, 1.0, kPass},   // v + U = 100 on the limit
      {99.0, 2.0, kInd},    // v + U = 101 straddles
      {100.0, 1.0, kInd},   // on the limit with uncertainty
      {101.0, 1.0, kInd},   // v - U = 100 on the limit: nonconformance not
                            // proven
      {101.0, 2.0, kInd},  {102.0, 1.0, kFail},  // v - U = 101 outside
      {0.0, 100.0, kPass},                       // 0 + 100 on the limit
      {0.0, 100.5, kInd},
  };
  for (const Row& r : rows) {
    SCOPED_TRACE(testing::Message() << "v=" << r.v << " U=" << r.u);
    const Verdict d = Decide(r.v, r.u, upper, DecisionRule::kIso14253);
    EXPECT_EQ(d.conformance, r.expect) << d.reason;
    EXPECT_DOUBLE_EQ(d.margin, 100.0 - r.v);
    EXPECT_DOUBLE_EQ(d.guarded_margin, 100.0 - r.v - r.u);
    EXPECT_FALSE(d.reason.empty());
  }
}

// ISO 10110-5 A is a ± limit on the signed sagitta deviation: |v| against A.
TEST(Decide, TwoSidedLimitUsesTheMagnitude) {
  const Limit pm{2.0, LimitKind::kTwoSided};
  struct Row {
    double v, u;
    Conformance expect;
  };
  const Row rows[] = {
      {-1.9, 0.0, kPass}, {1.9, 0.0, kPass},  {-2.0, 0.0, kPass},
      {2.0, 0.0, kPass},  {-2.1, 0.0, kFail}, {2.1, 0.0, kFail},
      {-1.5, 0.5, kPass}, {-1.5, 0.6, kInd},  {1.5, 0.6, kInd},
      {-2.5, 0.4, kFail}, {2.5, 0.5, kInd},   {-2.5, 0.5, kInd},
  };
  for (const Row& r : rows) {
    SCOPED_TRACE(testing::Message() << "v=" << r.v << " U=" << r.u);
    const Verdict d = Decide(r.v, r.u, pm, DecisionRule::kIso14253);
    EXPECT_EQ(d.conformance, r.expect) << d.reason;
    EXPECT_NEAR(d.margin, 2.0 - std::fabs(r.v), 1e-12);
    EXPECT_NEAR(d.guarded_margin, 2.0 - std::fabs(r.v) - r.u, 1e-12);
  }
  // The sign of the power does not change the verdict.
  EXPECT_EQ(Decide(-1.7, 0.4, pm, DecisionRule::kIso14253).conformance,
            Decide(1.7, 0.4, pm, DecisionRule::kIso14253).conformance);
}

// Simple acceptance [practice]: value inside the limit passes, U ignored.
TEST(Decide, SimpleAcceptanceIgnoresUncertainty) {
  const Limit upper{100.0, LimitKind::kUpper};
  EXPECT_EQ(Decide(99.0, 5.0, upper, DecisionRule::kSimple).conformance, kPass);
  EXPECT_EQ(Decide(100.0, 5.0, upper, DecisionRule::kSimple).conformance,
            kPass);
  EXPECT_EQ(Decide(100.5, 0.0, upper, DecisionRule::kSimple).conformance,
            kFail);
  EXPECT_EQ(Decide(101.0, kNaN, upper, DecisionRule::kSimple).conformance,
            kFail);
  EXPECT_EQ(Decide(99.0, kNaN, upper, DecisionRule::kSimple).conformance,
            kPass);
  const Verdict d = Decide(99.0, 5.0, upper, DecisionRule::kSimple);
  EXPECT_DOUBLE_EQ(d.margin, 1.0);
  EXPECT_DOUBLE_EQ(d.guarded_margin, -4.0);  // reported, not used
}

// A value on the limit up to conversion rounding (fringes -> nm) counts as
// on it: 1 fringe at 546 nm = 273 nm (DIN ISO 10110-5:2016), computed two
// ways.
TEST(Decide, OnTheLimitAllowsConversionRounding) {
  const Limit upper{1.0 * 546.0 / 2.0, LimitKind::kUpper};
  const double measured = 0.1 * 2730.0 * (1.0 + 3e-16);
  EXPECT_EQ(Decide(measured, 0.0, upper, DecisionRule::kIso14253).conformance,
            kPass);
  EXPECT_EQ(Decide(273.0 * (1 + 1e-12), 0.0, upper, DecisionRule::kIso14253)
                .conformance,
            kPass);
  EXPECT_EQ(Decide(273.0 * (1 + 1e-7), 0.0, upper, DecisionRule::kIso14253)
                .conformance,
            kFail);
  EXPECT_EQ(
      Decide(273.0 * (1 + 1e-7), 0.0, upper, DecisionRule::kSimple).conformance,
      kFail);
}

TEST(Decide, MissingValueOrUncertainty) {
  const Limit upper{1.0, LimitKind::kUpper};
  const Verdict none = Decide(kNaN, 0.1, upper, DecisionRule::kIso14253);
  EXPECT_EQ(none.conformance, kInd);
  EXPECT_TRUE(std::isnan(none.margin));
  EXPECT_EQ(Decide(kNaN, 0.1, upper, DecisionRule::kSimple).conformance, kInd);
  const Verdict no_u = Decide(0.1, kNaN, upper, DecisionRule::kIso14253);
  EXPECT_EQ(no_u.conformance,
            kInd);  // conformance cannot be proven (ISO 14253-1)
  EXPECT_DOUBLE_EQ(no_u.margin, 0.9);
  EXPECT_TRUE(std::isnan(no_u.guarded_margin));
}

TEST(Combine, AnyFailThenAnyIndeterminateElsePass) {
  const std::array<Conformance, 3> all_pass = {kPass, kPass, kPass};
  const std::array<Conformance, 3> one_ind = {kPass, kInd, kPass};
  const std::array<Conformance, 3> one_fail = {kInd, kPass, kFail};
  EXPECT_EQ(Combine(all_pass), kPass);
  EXPECT_EQ(Combine(one_ind), kInd);
  EXPECT_EQ(Combine(one_fail), kFail);
  EXPECT_EQ(Combine({}), kInd);
}

TEST(DecisionRule, NamesRoundTrip) {
  for (const DecisionRule r :
       {DecisionRule::kIso14253, DecisionRule::kSimple}) {
    EXPECT_EQ(ParseDecisionRule(DecisionRuleName(r)), r);
    EXPECT_FALSE(DecisionRuleDescription(r).empty());
  }
  EXPECT_EQ(ParseDecisionRule("ISO14253"), DecisionRule::kIso14253);
  EXPECT_THROW((void)ParseDecisionRule("lenient"), InputError);
  EXPECT_STREQ(ConformanceName(kInd), "indeterminate");
}

}  // namespace
}  // namespace figura
