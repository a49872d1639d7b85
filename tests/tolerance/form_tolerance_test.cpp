#include "tolerance/form_tolerance.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "check_record.h"
#include "core/light_source.h"

namespace figura {
namespace {

using figura::testing::CheckNear;

const ToleranceLimit& L(const FormTolerance& t, FormCharacteristic c) {
  return t.LimitOf(c);
}

// DIN ISO 10110-5:2016, abstract: one fringe spacing is half the test
// wavelength of surface; its example "3/-(1); λ = 546 nm" means B = 273 nm.
TEST(ParseFormTolerance, WorkedExampleFromTheStandardAbstract) {
  const FormTolerance t = ParseFormTolerance("3/-(1); λ = 546 nm");
  EXPECT_EQ(t.wavelength_origin, WavelengthOrigin::kStated);
  EXPECT_DOUBLE_EQ(t.wavelength_nm, 546.0);
  EXPECT_FALSE(L(t, FormCharacteristic::kPower).toleranced);
  EXPECT_TRUE(L(t, FormCharacteristic::kPower).dash);
  ASSERT_TRUE(L(t, FormCharacteristic::kIrregularity).toleranced);
  EXPECT_DOUBLE_EQ(L(t, FormCharacteristic::kIrregularity).fringes, 1.0);
  CheckNear("B of 3/-(1) at 546 nm",
            "DIN ISO 10110-5:2016 abstract (fringe = lambda/2)", 273.0,
            L(t, FormCharacteristic::kIrregularity).nm, 1e-12, "nm");
  EXPECT_FALSE(L(t, FormCharacteristic::kRsi).toleranced);
  EXPECT_EQ(t.text, "3/-(1); λ = 546 nm");
}

// [derived] from DIN ISO 10110-5:2016: at λ = 632.8 nm one fringe = 316.4 nm.
TEST(ParseFormTolerance, HeliumNeonFringeIsHalfTheWavelength) {
  const FormTolerance t = ParseFormTolerance("3/1(1)  lambda=632.8nm");
  EXPECT_NEAR(t.NmPerFringe(), 316.4, 1e-12);
  EXPECT_NEAR(L(t, FormCharacteristic::kPower).nm, 316.4, 1e-12);
  EXPECT_NEAR(L(t, FormCharacteristic::kIrregularity).nm, 316.4, 1e-12);
}

// [memory: ISO 10110-5:1996/2007] reference wavelength 546.07 nm where the
// drawing states none.
TEST(ParseFormTolerance, DefaultWavelengthIs54607nm) {
  const FormTolerance t = ParseFormTolerance("3/5(1)");
  EXPECT_EQ(t.wavelength_origin, WavelengthOrigin::kDefault);
  EXPECT_DOUBLE_EQ(t.wavelength_nm, 546.07);
  EXPECT_NEAR(L(t, FormCharacteristic::kPower).nm, 5 * 273.035, 1e-9);
  EXPECT_NEAR(L(t, FormCharacteristic::kIrregularity).nm, 273.035, 1e-9);
  EXPECT_STREQ(WavelengthOriginName(t.wavelength_origin), "default");
}

TEST(ParseFormTolerance, OptionWavelengthOnlyWhereTheTextStatesNone) {
  Wavelength w;
  w.value = Length::Nanometres(632.8);
  const FormTolerance a = ParseFormTolerance("3/2(0.5)", w);
  EXPECT_EQ(a.wavelength_origin, WavelengthOrigin::kOption);
  EXPECT_NEAR(L(a, FormCharacteristic::kIrregularity).nm, 0.5 * 316.4,
              1e-9);  // [derived]
  const FormTolerance b = ParseFormTolerance("3/2(0.5); λ = 546 nm", w);
  EXPECT_EQ(b.wavelength_origin, WavelengthOrigin::kStated);
  EXPECT_NEAR(L(b, FormCharacteristic::kIrregularity).nm, 136.5,
              1e-9);  // DIN ISO 10110-5:2016
}

// Forms seen on drawings [practice]; the 3/A(B/C) RMSx layout as quoted in
// ../shared/references.md (ISO 10110-5).
TEST(ParseFormTolerance, DrawingForms) {
  struct Row {
    const char* text;
    double a, b, c, rms_t, rms_i, rms_a;  // fringes; -1: not toleranced
    double wavelength_nm;
  };
  const Row rows[] = {
      {"3/5(1)", 5, 1, -1, -1, -1, -1, 546.07},
      {"3/-(0.5)", -1, 0.5, -1, -1, -1, -1, 546.07},
      {"3/2(0.5/0.2)", 2, 0.5, 0.2, -1, -1, -1, 546.07},
      {"3/4(2)", 4, 2, -1, -1, -1, -1, 546.07},
      {"3/0.5(0.25) RMSi < 0.05; λ = 632.8 nm", 0.5, 0.25, -1, -1, 0.05, -1,
       632.8},
      {"3/-(-/0.1)", -1, -1, 0.1, -1, -1, -1, 546.07},
      {"3/1(0.5/-)", 1, 0.5, -1, -1, -1, -1, 546.07},
      {"3/3(1/0.5) RMSt < 0.3; RMSi < 0.1; RMSa < 0.05; λ = 632.8 nm", 3, 1,
       0.5, 0.3, 0.1, 0.05, 632.8},
      {"3/-(-) RMSi < 0.1", -1, -1, -1, -1, 0.1, -1, 546.07},
      {"3/2", 2, -1, -1, -1, -1, -1, 546.07},
      {" 3 / 2 ( 0,5 / 0,2 ) ; λ=0.6328µm ; ", 2, 0.5, 0.2, -1, -1, -1, 632.8},
      {"3/2(1) rmsi <= 0.1;LAMBDA = 587.56 nm", 2, 1, -1, -1, 0.1, -1, 587.56},
      {"3/2(1) RMSa ≤ .05", 2, 1, -1, -1, -1, 0.05, 546.07},
  };
  for (const Row& r : rows) {
    SCOPED_TRACE(r.text);
    const FormTolerance t = ParseFormTolerance(r.text);
    EXPECT_NEAR(t.wavelength_nm, r.wavelength_nm, 1e-9);
    const double expect[] = {r.a, r.b, r.c, r.rms_t, r.rms_i, r.rms_a};
    for (const FormCharacteristic c : AllCharacteristics()) {
      const double e = expect[static_cast<int>(c)];
      SCOPED_TRACE(CharacteristicInfoOf(c).symbol);
      ASSERT_EQ(L(t, c).toleranced, e >= 0);
      if (e >= 0) {
        EXPECT_NEAR(L(t, c).fringes, e, 1e-12);
        EXPECT_NEAR(L(t, c).nm, e * r.wavelength_nm / 2,
                    1e-9);  // DIN ISO 10110-5:2016
      }
    }
  }
}

// Since the 2015 edition nanometres are the preferred unit (ISO 10110-5,
// ../shared/references.md); a value with a unit converts to fringes at λ/2.
TEST(ParseFormTolerance, LimitsWrittenInNanometres) {
  const FormTolerance t =
      ParseFormTolerance("3/1000 nm(273nm/0.1um) RMSi < 20 nm; λ = 546 nm");
  EXPECT_TRUE(L(t, FormCharacteristic::kPower).written_in_nm);
  EXPECT_NEAR(L(t, FormCharacteristic::kPower).nm, 1000, 1e-12);
  EXPECT_NEAR(L(t, FormCharacteristic::kPower).fringes, 1000 / 273.0, 1e-12);
  EXPECT_NEAR(L(t, FormCharacteristic::kIrregularity).fringes, 1.0,
              1e-12);  // DIN ISO 10110-5:2016
  EXPECT_NEAR(L(t, FormCharacteristic::kRsi).nm, 100, 1e-9);
  EXPECT_NEAR(L(t, FormCharacteristic::kRmsIrregularity).nm, 20, 1e-12);
  EXPECT_FALSE(L(t, FormCharacteristic::kRmsTotal).toleranced);
}

TEST(ParseFormTolerance, ColumnsOfValues) {
  const FormTolerance t = ParseFormTolerance("3/2(0.5/0.2) RMSi < 0.1");
  EXPECT_EQ(L(t, FormCharacteristic::kPower).column, 3);
  EXPECT_EQ(L(t, FormCharacteristic::kIrregularity).column, 5);
  EXPECT_EQ(L(t, FormCharacteristic::kRsi).column, 9);
  EXPECT_EQ(L(t, FormCharacteristic::kRmsIrregularity).column, 21);
}

// Malformed inputs, each with the column the message must point at (1-based,
// in characters: λ and µ count as one).
TEST(ParseFormTolerance, MalformedTextPointsAtTheColumn) {
  struct Row {
    const char* text;
    int column;
    const char* words;  // a part of the message
  };
  const Row rows[] = {
      {"", 1, "empty"},
      {"5(1)", 1, "code number '3/'"},        // missing "3/"
      {"2/0.5(1)", 1, "not a surface form"},  // other ISO 10110 code number
      {"3 2(1)", 3, "expected '/'"},
      {"3/x(1)", 3, "expected a number for A"},     // bad number
      {"3/1.2.3(1)", 3, "malformed number for A"},  // bad number
      {"3/2(0..5)", 5, "malformed number for B"},
      {"3/2(0.5", 4, "unclosed parenthesis"},  // unclosed
      {"3/2(0.5/0.2", 4, "unclosed parenthesis"},
      {"3/2()", 5, "empty parentheses"},
      {"3/2(1;", 6, "expected ')'"},
      {"3/2(1/0.5/0.1)", 10, "expected ')'"},
      {"3/2(1) RMSx < 0.1", 8, "unknown RMS form 'RMSx'"},  // unknown RMS key
      {"3/2(1) RMS < 0.1", 8, "unknown RMS form"},
      {"3/2(1) RMSi = 0.1", 13, "expected '<'"},
      {"3/2(1) RMSi < 0.1; RMSi < 0.2", 20, "given twice"},
      {"3/-2(1)", 3, "A (power) cannot be negative"},  // negative limits
      {"3/2(-1)", 5, "B (irregularity) cannot be negative"},
      {"3/2(1/-0.5)", 7, "cannot be negative"},
      {"3/2(1) RMSi < -0.1", 15, "RMSi cannot be negative"},
      {"3/+2(1)", 3, "without a sign"},
      {"3/2(1); λ = 546", 13, "needs a unit"},  // wavelength without unit
      {"3/2(1); lambda = 546", 18, "needs a unit"},
      {"3/2(1); λ = 100 nm", 13,
       "outside 200 nm .. 2000 nm"},  // wavelength out of range
      {"3/2(1); λ = 2.5 um", 13, "outside 200 nm .. 2000 nm"},
      {"3/2(1); λ = 546 nm; λ = 633 nm", 21, "given twice"},
      {"3/2(1); λ 546 nm", 11, "expected '='"},
      {"3/2(1) xyz", 8, "unexpected text"},  // trailing junk
      {"3/2(1))", 7, "unexpected text"},
      {"3/2(1) RMSi < 0.1 RMSt < 0.2", 19, "expected ';'"},
      {"3/2 fringes(1)", 5, "unknown unit 'fringes'"},
      {"3/2(1mm)", 6, "unknown unit 'mm'"},
      {"3/-(-/-)", 1, "limits nothing"},
      {"3/-", 1, "limits nothing"},
  };
  for (const Row& r : rows) {
    SCOPED_TRACE(r.text);
    try {
      (void)ParseFormTolerance(r.text);
      ADD_FAILURE() << "no error";
    } catch (const ToleranceSyntaxError& e) {
      EXPECT_EQ(e.Column(), r.column) << e.what();
      EXPECT_NE(e.Problem().find(r.words), std::string::npos) << e.Problem();
    }
  }
}

// Found by tolerance_fuzz (tests/fuzz/corpus/tolerance_fuzz/
// regress-limit-overflows-in-nm): a limit finite as written but infinite in
// the other unit (1e306 fringes x 273 nm, 2e306 um x 1000) was accepted with
// an infinite limit; DBL_MAX = 1.797e308 (IEEE 754 binary64).
TEST(ParseFormTolerance, LimitThatOverflowsInTheOtherUnitIsRefused) {
  const std::string huge_fringes = "1" + std::string(306, '0');
  const std::string huge_um = "2" + std::string(306, '0') + "um";
  struct Row {
    std::string text;
    int column;
    const char* words;
  };
  const Row rows[] = {
      {"3/" + huge_fringes + "(1)", 3, "A is too large"},
      {"3/1(1) RMSi < " + huge_fringes, 15, "RMSi is too large"},
      {"3/-(" + huge_um + ")", 5, "B is too large"},
  };
  for (const Row& r : rows) {
    SCOPED_TRACE(r.text);
    try {
      (void)ParseFormTolerance(r.text);
      ADD_FAILURE() << "no error";
    } catch (const ToleranceSyntaxError& e) {
      EXPECT_EQ(e.Column(), r.column) << e.what();
      EXPECT_NE(e.Problem().find(r.words), std::string::npos) << e.Problem();
    }
  }
  // One power of ten less stays finite and is accepted: 1e305 x 273.035 nm.
  const FormTolerance t =
      ParseFormTolerance("3/1(1) RMSi < 1" + std::string(305, '0'));
  EXPECT_TRUE(
      std::isfinite(t.LimitOf(FormCharacteristic::kRmsIrregularity).nm));
}

TEST(ToleranceSyntaxError, PrintsTheTextAndACaretUnderTheColumn) {
  try {
    (void)ParseFormTolerance("3/2(1); λ = 546");
    FAIL() << "no error";
  } catch (const InputError& e) {  // the CLI catches it as an InputError
    const std::string what = e.what();
    const std::string expected =
        "tolerance text: the wavelength needs a unit, e.g. λ = 546.07 nm "
        "(column 13)\n"
        "  3/2(1); λ = 546\n"
        "              ^";
    EXPECT_EQ(what, expected);
  }
}

TEST(CharacterColumn, CountsCharactersNotBytes) {
  const std::string s = "λ=µm";  // λ and µ are two bytes each in UTF-8
  EXPECT_EQ(CharacterColumn(s, 0), 1);
  EXPECT_EQ(CharacterColumn(s, 2), 2);
  EXPECT_EQ(CharacterColumn(s, 3), 3);
  EXPECT_EQ(CharacterColumn(s, 5), 4);
}

TEST(FormToleranceJson, LimitsInFringesAndNanometres) {
  const nlohmann::json j =
      FormToleranceJson(ParseFormTolerance("3/-(1/0.5); λ = 546 nm"));
  EXPECT_EQ(j["wavelength_origin"], "stated");
  EXPECT_DOUBLE_EQ(j["wavelength_nm"].get<double>(), 546.0);
  EXPECT_TRUE(j["limits"]["power"].is_null());
  EXPECT_DOUBLE_EQ(j["limits"]["irregularity"]["limit_fringes"].get<double>(),
                   1.0);
  EXPECT_NEAR(j["limits"]["irregularity"]["limit_nm"].get<double>(), 273.0,
              1e-12);  // DIN ISO 10110-5:2016
  EXPECT_NEAR(j["limits"]["rsi"]["limit_nm"].get<double>(), 136.5, 1e-12);
  EXPECT_EQ(j["limits"]["rsi"]["written_unit"], "fringes");
  EXPECT_FALSE(j["limits"]["rsi"]["two_sided"].get<bool>());
  EXPECT_TRUE(j["limits"]["rms_i"].is_null());
}

}  // namespace
}  // namespace figura
