// The shared JSON blocks: field names of ../shared/design.md, non-finite
// numbers as null (RFC 8259 section 6 has no NaN or Infinity), and writing.
#include "io/result_json.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "core/version.h"
#include "io_test_util.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

TEST(ResultJson, InputBlock) {
  ImageInfo info;
  info.path = "parts/lens_07.tif";
  info.format = "tiff";
  info.width = 4000;
  info.height = 3000;
  info.bit_depth = 16;
  info.channels = 1;
  info.sha256 = std::string(64, 'a');
  const nlohmann::json j = InputJson(info);
  EXPECT_EQ(j["path"], "parts/lens_07.tif");
  EXPECT_EQ(j["sha256"], info.sha256);
  EXPECT_EQ(j["width"], 4000);
  EXPECT_EQ(j["height"], 3000);
  EXPECT_EQ(j["bit_depth"], 16);
  EXPECT_EQ(j["channels"], 1);
  EXPECT_EQ(j["format"], "tiff");
  EXPECT_EQ(j["sample_format"], "uint");
  info.is_float = true;
  EXPECT_EQ(InputJson(info)["sample_format"], "float");
}

TEST(ResultJson, ToolAndStatus) {
  EXPECT_EQ(ToolJson()["name"], "figura");
  EXPECT_EQ(ToolJson()["version"], Version());
  const nlohmann::json s = StatusJson(Status::kWarning, {"low contrast"});
  EXPECT_EQ(s["state"], "warning");
  ASSERT_EQ(s["messages"].size(), 1U);
  EXPECT_EQ(s["messages"][0], "low contrast");
  EXPECT_EQ(StatusJson(Status::kOk, {})["messages"], nlohmann::json::array());
}

TEST(ResultJson, NonFiniteBecomesNull) {
  EXPECT_TRUE(FiniteOrNull(std::nan("")).is_null());
  EXPECT_TRUE(FiniteOrNull(std::numeric_limits<double>::infinity()).is_null());
  EXPECT_TRUE(FiniteOrNull(-std::numeric_limits<double>::infinity()).is_null());
  EXPECT_EQ(FiniteOrNull(-12.5).get<double>(), -12.5);
  EXPECT_EQ(FiniteOrNull(0.0).get<double>(), 0.0);
}

// A hash read back from a part file may be null (an unreadable input):
// StringOr gives "" instead of throwing nlohmann's type_error.302.
TEST(ResultJson, StringOrToleratesNullAndOtherTypes) {
  const nlohmann::json j = {{"sha256", nullptr}, {"n", 3}, {"s", "abc"}};
  EXPECT_EQ(StringOr(j, "sha256"), "");
  EXPECT_EQ(StringOr(j, "n"), "");
  EXPECT_EQ(StringOr(j, "missing"), "");
  EXPECT_EQ(StringOr(j, "s"), "abc");
  EXPECT_EQ(StringOr(nlohmann::json::array(), "s"), "");
  EXPECT_THROW((void)j.value("sha256", ""), nlohmann::json::type_error);
}

TEST(ResultJson, WritesFileAndStdout) {
  const fs::path dir = io_test::ScratchDir("result_json");
  const nlohmann::json value = {{"radius_of_curvature_mm", 51.68},
                                {"path", "a\xff.tif"}};
  const fs::path path = dir / "r.json";
  WriteJson(path.string(), value);
  const std::string text = io_test::ReadBytes(path);
  EXPECT_EQ(text.back(), '\n');
  EXPECT_NE(text.find("\n  \"radius_of_curvature_mm\": 51.68"),
            std::string::npos)
      << text;
  const nlohmann::json back = nlohmann::json::parse(text);
  EXPECT_EQ(back["radius_of_curvature_mm"].get<double>(), 51.68);
  EXPECT_THROW(WriteJson(path.string(), value, Overwrite::kRefuse),
               OutputError);
  testing::internal::CaptureStdout();
  WriteJson("-", {{"a", 1}});
  EXPECT_EQ(testing::internal::GetCapturedStdout(), "{\n  \"a\": 1\n}\n");
  EXPECT_TRUE(io_test::TempFiles(dir).empty());
}

}  // namespace
}  // namespace figura
