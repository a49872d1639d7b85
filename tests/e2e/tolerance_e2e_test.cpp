// End-to-end: run the figura binary for `figura tolerance` on a good text
// (exit 0, explanation and JSON) and on malformed ones (exit 2, the text with
// a caret under the column).
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <array>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>

#include "e2e/e2e_util.h"

namespace {

using Result = figura::e2e::CommandOutcome;

// Runs `figura tolerance ARGS` (ARGS already quoted for the shell).
Result Tolerance(const std::string& args, const std::string& tag) {
  return figura::e2e::RunFigura("tolerance " + args, "tolerance_e2e_" + tag);
}

// DIN ISO 10110-5:2016, abstract: "3/-(1); λ = 546 nm" means B = 273 nm.
TEST(ToleranceE2e, WorkedExampleExplainedAndAsJson) {
  const Result text = Tolerance("'3/-(1); λ = 546 nm'", "good_text");
  ASSERT_EQ(text.exit_code, 0) << text.err;
  EXPECT_NE(text.out.find("at most 1 fringe = 273 nm"), std::string::npos)
      << text.out;
  EXPECT_NE(text.out.find("decision rule: iso14253-1"), std::string::npos)
      << text.out;

  const Result json = Tolerance("'3/-(1); λ = 546 nm' --json -", "good_json");
  ASSERT_EQ(json.exit_code, 0) << json.err;
  const nlohmann::json j = nlohmann::json::parse(json.out);
  EXPECT_NEAR(j.at("limits").at("irregularity").at("limit_nm").get<double>(),
              273.0, 1e-9);
  EXPECT_DOUBLE_EQ(
      j.at("limits").at("irregularity").at("limit_fringes").get<double>(), 1.0);
  EXPECT_TRUE(j.at("limits").at("power").is_null());
  EXPECT_DOUBLE_EQ(j.at("wavelength_nm").get<double>(), 546.0);
  EXPECT_EQ(j.at("wavelength_origin"), "stated");
  EXPECT_EQ(j.at("tool").at("name"), "figura");
  EXPECT_EQ(j.at("status").at("state"), "ok");
  EXPECT_EQ(j.at("settings").at("text"), "3/-(1); λ = 546 nm");
  EXPECT_EQ(j.at("settings").at("decision_rule"), "iso14253-1");
}

// [derived] at λ = 632.8 nm one fringe = 316.4 nm; a named source and the
// default wavelength (546.07 nm [memory: ISO 10110-5:1996/2007]).
TEST(ToleranceE2e, WavelengthFromOptionOrDefault) {
  const Result opt =
      Tolerance("'3/2(0.5)' --wavelength 632.8nm --json -", "option");
  ASSERT_EQ(opt.exit_code, 0) << opt.err;
  const nlohmann::json a = nlohmann::json::parse(opt.out);
  EXPECT_EQ(a.at("wavelength_origin"), "option");
  EXPECT_NEAR(a.at("limits").at("power").at("limit_nm").get<double>(), 632.8,
              1e-9);
  EXPECT_TRUE(a.at("limits").at("power").at("two_sided").get<bool>());

  const Result def = Tolerance("3/2 --decision-rule simple", "default");
  ASSERT_EQ(def.exit_code, 0) << def.err;
  EXPECT_NE(def.out.find("λ = 546.07 nm (default"), std::string::npos)
      << def.out;
  EXPECT_NE(def.out.find("±2 fringes = ±546.07 nm"), std::string::npos)
      << def.out;
  EXPECT_NE(def.out.find("decision rule: simple"), std::string::npos)
      << def.out;

  // The JSON goes to a file, the explanation to standard output.
  const std::filesystem::path out =
      std::filesystem::path(FIGURA_TEST_TMP) / "tolerance_e2e.json";
  std::filesystem::remove(out);
  const Result words = Tolerance(
      "'3/-(0.5) RMSi < 10 nm; λ = 632.8 nm' --json '" + out.string() + "'",
      "file");
  ASSERT_EQ(words.exit_code, 0) << words.err;
  EXPECT_NE(words.out.find("RMSi"), std::string::npos);
  std::ifstream in(out);
  const nlohmann::json w = nlohmann::json::parse(in);
  EXPECT_NEAR(w.at("limits").at("rms_i").at("limit_nm").get<double>(), 10.0,
              1e-12);
  EXPECT_NEAR(w.at("limits").at("rms_i").at("limit_fringes").get<double>(),
              10.0 / 316.4, 1e-12);
  EXPECT_EQ(w.at("limits").at("rms_i").at("written_unit"), "nm");
}

// A malformed text: exit 2, one message line naming the column, then the
// text and a caret under that column.
TEST(ToleranceE2e, MalformedTextGivesCaretAndExit2) {
  const Result bad = Tolerance("'3/2(0.5/0.2'", "unclosed");
  EXPECT_EQ(bad.exit_code, 2);
  EXPECT_TRUE(bad.out.empty()) << bad.out;
  const std::string expected =
      "figura tolerance: error: tolerance text: unclosed parenthesis: missing "
      "')' (column 4)\n"
      "  3/2(0.5/0.2\n"
      "     ^\n";
  EXPECT_EQ(bad.err, expected);

  const Result unit = Tolerance("'3/2(1); λ = 546'", "no_unit");
  EXPECT_EQ(unit.exit_code, 2);
  EXPECT_NE(unit.err.find("needs a unit"), std::string::npos) << unit.err;
  EXPECT_NE(unit.err.find("\n              ^"), std::string::npos)
      << unit.err;  // column 13

  EXPECT_EQ(Tolerance("", "empty").exit_code, 2);
  // Unquoted words: the shell split the text; ask for quotes.
  const Result split = Tolerance("'3/2(1)' RMSi '<' 0.1", "split");
  EXPECT_EQ(split.exit_code, 2);
  EXPECT_NE(split.err.find("put it in quotes"), std::string::npos) << split.err;
  EXPECT_EQ(Tolerance("'3/1(1)' --wavelength 546", "bare_wavelength").exit_code,
            2);
  EXPECT_EQ(Tolerance("'3/1(1)' --decision-rule lenient", "bad_rule").exit_code,
            2);
}

}  // namespace
