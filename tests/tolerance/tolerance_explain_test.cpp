#include "tolerance/tolerance_explain.h"

#include <gtest/gtest.h>

#include "core/error.h"

namespace figura {
namespace {

bool Has(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

TEST(ExplainTolerance, PlainWordsForTheBench) {
  ToleranceOptions o;
  o.text = "3/2(1/0.5) RMSi < 0.1; λ = 546 nm";
  const ToleranceResult r = ExplainTolerance(o);
  EXPECT_EQ(r.status, Status::kOk);
  const std::string& e = r.explanation;
  EXPECT_TRUE(Has(e, "λ = 546 nm (stated")) << e;
  // DIN ISO 10110-5:2016: one fringe = λ/2 = 273 nm at 546 nm.
  EXPECT_TRUE(Has(e, "one fringe = λ/2 = 273 nm")) << e;
  EXPECT_TRUE(Has(e, "power (sagitta deviation): within ±2 fringes = ±546 nm"))
      << e;
  EXPECT_TRUE(
      Has(e, "irregularity (peak-to-valley): at most 1 fringe = 273 nm"))
      << e;
  EXPECT_TRUE(Has(e, "at most 0.5 fringes = 136.5 nm")) << e;
  EXPECT_TRUE(Has(e, "RMSi  RMS irregularity: at most 0.1 fringes = 27.3 nm"))
      << e;
  EXPECT_TRUE(
      Has(e, "RMSt  RMS of the total surface deviation: not toleranced"))
      << e;
  EXPECT_TRUE(Has(e, "decision rule: iso14253-1")) << e;
}

// [memory: ISO 10110-5:1996/2007] default 546.07 nm; the explanation says
// it is a default and where it comes from.
TEST(ExplainTolerance, DefaultWavelengthIsFlagged) {
  ToleranceOptions o;
  o.text = "3/-(0.5)";
  o.rule = DecisionRule::kSimple;
  const ToleranceResult r = ExplainTolerance(o);
  EXPECT_EQ(r.status, Status::kWarning);
  EXPECT_TRUE(Has(r.explanation, "546.07 nm (default")) << r.explanation;
  EXPECT_TRUE(Has(r.explanation, "ISO 10110-5:1996/2007")) << r.explanation;
  EXPECT_TRUE(Has(r.explanation, "dash: the radius tolerance"))
      << r.explanation;
  EXPECT_TRUE(Has(r.explanation, "decision rule: simple")) << r.explanation;
  ASSERT_EQ(r.messages.size(), 1U);
}

TEST(ExplainTolerance, BenchWavelengthDifferentFromTheDrawing) {
  ToleranceOptions o;
  o.text = "3/-(1); λ = 546 nm";
  Wavelength w;
  w.value = Length::Nanometres(632.8);
  o.wavelength = w;
  const ToleranceResult r = ExplainTolerance(o);
  EXPECT_EQ(r.status, Status::kWarning);
  EXPECT_DOUBLE_EQ(r.tolerance.wavelength_nm, 546.0);
  // 273 nm of surface at the bench: 273 / 316.4 fringes [derived].
  EXPECT_TRUE(
      Has(r.explanation, "B " + FormatValue(273.0 / 316.4) + " fringes"))
      << r.explanation;
}

TEST(ToleranceOptions, CheckRejectsEmptyTextAndBadWavelength) {
  ToleranceOptions o;
  EXPECT_FALSE(o.Check().empty());
  EXPECT_THROW((void)ExplainTolerance(o), InputError);
  o.text = "3/1(1)";
  EXPECT_TRUE(o.Check().empty());
  Wavelength w;
  w.value = Length::Nanometres(50.0);
  o.wavelength = w;
  EXPECT_FALSE(o.Check().empty());
}

TEST(ToleranceSettingsJson, RecordsEverySetting) {
  ToleranceOptions o;
  o.text = "3/1(1)";
  const nlohmann::json j = ToleranceSettingsJson(o);
  EXPECT_EQ(j["text"], "3/1(1)");
  EXPECT_TRUE(j["wavelength"].is_null());
  EXPECT_EQ(j["decision_rule"], "iso14253-1");
  EXPECT_DOUBLE_EQ(j["default_wavelength_nm"].get<double>(), 546.07);
}

}  // namespace
}  // namespace figura
