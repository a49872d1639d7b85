#include "core/quantity.h"

#include <gtest/gtest.h>

#include <optional>
#include <string>

#include "core/error.h"

namespace figura {
namespace {

TEST(ParseLength, AcceptsTheUnitsOfTheIssue) {
  EXPECT_NEAR(ParseLength("589.29nm").nm(), 589.29, 1e-9);
  EXPECT_NEAR(ParseLength("0.58929 um").nm(), 589.29, 1e-9);
  EXPECT_NEAR(ParseLength("12.5\xC2\xB5m").um(), 12.5, 1e-12);  // micro sign
  EXPECT_NEAR(ParseLength("12.5\xCE\xBCm").um(), 12.5, 1e-12);  // Greek mu
  EXPECT_NEAR(ParseLength("8um").um(), 8.0, 1e-12);
  EXPECT_NEAR(ParseLength("100mm").mm(), 100.0, 1e-12);
  EXPECT_NEAR(ParseLength("1.2 m").metres, 1.2, 1e-15);
  EXPECT_NEAR(ParseLength("2.5cm").mm(), 25.0, 1e-12);
  EXPECT_NEAR(ParseLength("  -100mm ").mm(), -100.0, 1e-12);
  EXPECT_NEAR(ParseLength("+3e2nm").nm(), 300.0, 1e-9);
}

TEST(ParseLength, BareNumberNamesTheAcceptedUnits) {
  try {
    ParseLength("589.29", "--wavelength");
    FAIL() << "a bare number must be refused";
  } catch (const InputError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find("--wavelength"), std::string::npos) << msg;
    EXPECT_NE(msg.find("no unit"), std::string::npos) << msg;
    EXPECT_NE(msg.find("nm, um"), std::string::npos) << msg;
  }
}

TEST(ParseLength, RefusesNonsense) {
  EXPECT_THROW(ParseLength("12 furlongs"), InputError);
  EXPECT_THROW(ParseLength("nm"), InputError);
  EXPECT_THROW(ParseLength(""), InputError);
  EXPECT_THROW(ParseLength("1e999mm"), InputError);
  EXPECT_THROW(ParseLength("nan mm"), InputError);
  EXPECT_THROW(ParseLength("5 mmm"), InputError);
}

TEST(ParseNumber, PlainNumbersOnly) {
  EXPECT_DOUBLE_EQ(ParseNumber("1.5168"), 1.5168);
  EXPECT_THROW(ParseNumber("1.5x"), InputError);
  EXPECT_THROW(ParseNumber(""), InputError);
  EXPECT_THROW(ParseNumber("inf"), InputError);
}

// Whole numbers: fractions and magnitudes beyond int are refused before any
// conversion (a double beyond int converted to int is undefined behaviour,
// C++20 [conv.fpint]; found by job_file_fuzz with "terms = 2222...2.9").
TEST(ParseWholeNumber, WholeNumbersWithinIntOnly) {
  EXPECT_EQ(ParseWholeNumber(" 36 ", "sectors"), 36);
  EXPECT_EQ(ParseWholeNumber("-4"), -4);
  EXPECT_EQ(ParseWholeNumber("2e9"), 2000000000);
  for (const char* bad : {"3.5", "1e30", "-1e30", "2222222222222.9", "x"}) {
    try {
      ParseWholeNumber(bad, "terms");
      ADD_FAILURE() << bad << " was accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(std::string(e.what()).rfind("terms", 0), 0U) << e.what();
    }
  }
}

TEST(ParsePixelsOrLength, BareNumberIsPixelsAUnitIsALength) {
  const PixelsOrLength px = ParsePixelsOrLength(" 480 ", "--aperture-diameter");
  EXPECT_FALSE(px.length.has_value());
  EXPECT_DOUBLE_EQ(px.pixels, 480.0);
  // Pixels need no pitch; as a length they scale by it: 480 x 25 um = 12 mm.
  EXPECT_DOUBLE_EQ(px.Pixels(std::nullopt, "d", "--pixel-pitch"), 480.0);
  EXPECT_NEAR(px.ToLength(25e-6).mm(), 12.0, 1e-12);

  const PixelsOrLength mm = ParsePixelsOrLength("12 mm", "--aperture-diameter");
  ASSERT_TRUE(mm.length.has_value());
  EXPECT_NEAR(mm.length->mm(), 12.0, 1e-12);
  EXPECT_NEAR(mm.ToLength(25e-6).mm(), 12.0, 1e-12);
  EXPECT_NEAR(mm.Pixels(25e-6, "d", "--pixel-pitch"), 480.0, 1e-9);
  EXPECT_NEAR(ParsePixelsOrLength("12.5\xC2\xB5m", "d").length->um(), 12.5,
              1e-12);
}

TEST(ParsePixelsOrLength, ALengthWithoutPitchNamesBothOptions) {
  const PixelsOrLength mm = ParsePixelsOrLength("12mm", "--aperture-diameter");
  try {
    (void)mm.Pixels(std::nullopt, "--aperture-diameter", "--pixel-pitch");
    FAIL() << "a length without a pixel pitch must be refused";
  } catch (const InputError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find("--aperture-diameter"), std::string::npos) << msg;
    EXPECT_NE(msg.find("--pixel-pitch"), std::string::npos) << msg;
  }
}

TEST(ParsePixelsOrLength, NonsenseNamesTheOptionAndBothForms) {
  for (const char* text :
       {"wide", "", "480px", "12 furlongs", "inf", "nan mm", "1e999mm", "mm"}) {
    SCOPED_TRACE(text);
    try {
      (void)ParsePixelsOrLength(text, "--aperture-diameter");
      FAIL() << "must be refused";
    } catch (const InputError& e) {
      const std::string msg = e.what();
      EXPECT_EQ(msg.rfind("--aperture-diameter: ", 0), 0U) << msg;
      EXPECT_NE(msg.find("pixels"), std::string::npos) << msg;
      EXPECT_NE(msg.find("nm, um"), std::string::npos) << msg;
    }
  }
}

TEST(FormatLength, PicksAReadableUnit) {
  EXPECT_EQ(FormatLength(Length::Nanometres(589.2938)), "589.2938 nm");
  EXPECT_EQ(FormatLength(Length::Micrometres(8)), "8 um");
  EXPECT_EQ(FormatLength(Length::Millimetres(-100)), "-100 mm");
  EXPECT_EQ(FormatLength(Length{}), "0 mm");
  EXPECT_EQ(FormatLength(Length::Metres(1.2)), "1.2 m");
}

}  // namespace
}  // namespace figura
