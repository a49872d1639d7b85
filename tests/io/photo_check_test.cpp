// Tests of PhotoProblem/CheckPhoto: images that cannot hold fringes are
// named with their reason; anything with two different finite values passes.
#include "io/photo_check.h"

#include <gtest/gtest.h>

#include <limits>
#include <string>

#include "core/error.h"

namespace figura {
namespace {

Image Filled(int w, int h, float value, double full_scale, bool is_float) {
  Image image;
  image.pixels =
      cv::Mat(h, w, CV_32FC1, cv::Scalar(static_cast<double>(value)));
  image.info.path = "ow117/part.tif";
  image.info.width = w;
  image.info.height = h;
  image.info.full_scale = full_scale;
  image.info.is_float = is_float;
  return image;
}

bool Says(const std::string& text, const std::string& phrase) {
  return text.find(phrase) != std::string::npos;
}

TEST(PhotoCheck, TooSmall) {
  const std::string p = PhotoProblem(Filled(1, 1, 100.0F, 65535.0, false));
  EXPECT_TRUE(Says(p, "too small")) << p;
  EXPECT_TRUE(Says(p, "1 x 1")) << p;
  EXPECT_TRUE(
      Says(PhotoProblem(Filled(640, kMinPhotoSide - 1, 1.0F, 255.0, false)),
           "too small"));
}

TEST(PhotoCheck, NoFiniteValue) {
  const float nan = std::numeric_limits<float>::quiet_NaN();
  const float inf = std::numeric_limits<float>::infinity();
  EXPECT_TRUE(Says(PhotoProblem(Filled(64, 48, nan, 1.0, true)), "no finite"));
  Image mixed = Filled(64, 48, nan, 1.0, true);
  mixed.pixels.at<float>(3, 4) = inf;
  mixed.pixels.at<float>(5, 6) = -inf;
  EXPECT_TRUE(Says(PhotoProblem(mixed), "no finite"));
}

TEST(PhotoCheck, SaturatedAndUniform) {
  const std::string sat =
      PhotoProblem(Filled(64, 48, 65535.0F, 65535.0, false));
  EXPECT_TRUE(Says(sat, "saturated")) << sat;
  EXPECT_TRUE(Says(sat, "65535")) << sat;
  EXPECT_TRUE(
      Says(PhotoProblem(Filled(64, 48, 255.0F, 255.0, false)), "saturated"));
  const std::string flat =
      PhotoProblem(Filled(64, 48, 20000.0F, 65535.0, false));
  EXPECT_TRUE(Says(flat, "uniform")) << flat;
  // A float image is never "saturated": 1.0 everywhere is uniform.
  EXPECT_TRUE(Says(PhotoProblem(Filled(64, 48, 1.0F, 1.0, true)), "uniform"));
}

TEST(PhotoCheck, TwoValuesPassAndNaNIsIgnored) {
  Image image = Filled(64, 48, 20000.0F, 65535.0, false);
  image.pixels.at<float>(10, 10) = 20001.0F;
  EXPECT_EQ(PhotoProblem(image), "");
  EXPECT_NO_THROW(CheckPhoto(image));
  image.pixels.at<float>(0, 0) = std::numeric_limits<float>::quiet_NaN();
  EXPECT_EQ(PhotoProblem(image), "");
}

TEST(PhotoCheck, CheckThrowsOneLineNamingTheFile) {
  try {
    CheckPhoto(Filled(64, 48, 7.0F, 255.0, false));
    FAIL() << "no exception";
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_EQ(what.rfind("ow117/part.tif: ", 0), 0U) << what;
    EXPECT_EQ(what.find('\n'), std::string::npos);
  }
}

}  // namespace
}  // namespace figura
