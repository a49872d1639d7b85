#include "core/ini.h"

#include <gtest/gtest.h>

#include "core/error.h"

namespace figura {
namespace {

TEST(IniFile, SectionsKeysAndLines) {
  const IniFile ini = IniFile::Parse("; c\na = 1\n[s]\nb = two words \n# c\nc=3", "x.ini");
  EXPECT_EQ(ini.Find("", "a").value(), "1");
  EXPECT_EQ(ini.Find("s", "b").value(), "two words");
  EXPECT_EQ(ini.FindEntry("s", "c")->line, 6);
  EXPECT_FALSE(ini.Find("s", "a").has_value());
}

TEST(IniFile, ErrorsNameFileAndLine) {
  try {
    IniFile::Parse("a = 1\nnonsense\n", "job.ini");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("job.ini:2"), std::string::npos) << e.what();
  }
  EXPECT_THROW(IniFile::Parse("a = 1\na = 2\n", "x"), InputError);
  EXPECT_THROW(IniFile::Parse("[broken\n", "x"), InputError);
  EXPECT_THROW(IniFile::Load("/nonexistent/file.ini"), InputError);
}

}  // namespace
}  // namespace figura
