// Tests of PngIsComplete against the chunk layout of the PNG specification
// (ISO/IEC 15948:2004 / W3C PNG, section 5.3: 4-byte big-endian length,
// 4-byte type, data, 4-byte CRC; the datastream ends with IEND).
#include "io/image_header.h"

#include <gtest/gtest.h>

#include <string>

#include "io/byte_source.h"
#include "io/image_writer.h"

namespace figura {
namespace {

bool Complete(const std::string& bytes) {
  return PngIsComplete(MemorySource("t.png", bytes));
}

std::string SmallPng() {
  cv::Mat grey(23, 37, CV_8UC1);
  for (int y = 0; y < grey.rows; ++y)
    for (int x = 0; x < grey.cols; ++x)
      grey.at<std::uint8_t>(y, x) = static_cast<std::uint8_t>(x * 7 + y * 13);
  return EncodeImage("t.png", grey);
}

TEST(PngIsComplete, WholeFileAndEveryCut) {
  const std::string png = SmallPng();
  ASSERT_GT(png.size(), 57U);
  EXPECT_TRUE(Complete(png));
  // The last 12 bytes are IEND: length 0, "IEND", CRC AE 42 60 82 (the
  // CRC-32 of "IEND", fixed by the spec's algorithm).
  EXPECT_EQ(png.substr(png.size() - 8), std::string("IEND\xAE\x42\x60\x82", 8));
  for (std::size_t n = 8; n < png.size(); ++n) {
    EXPECT_FALSE(Complete(png.substr(0, n))) << n;
  }
  // Bytes after IEND do not matter.
  EXPECT_TRUE(Complete(png + "trailing"));
}

TEST(PngIsComplete, ImpossibleChunkLength) {
  std::string png = SmallPng();
  // The IHDR length (bytes 8..11) set to 2^31 + 13: beyond the spec's limit.
  png[8] = '\x80';
  EXPECT_FALSE(Complete(png));
  png[8] = '\x7F';  // a length the file cannot hold
  EXPECT_FALSE(Complete(png));
}

}  // namespace
}  // namespace figura
