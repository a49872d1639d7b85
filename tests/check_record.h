// External checks that docs/validation.md lists. A test calls CheckNear
// instead of EXPECT_NEAR where it compares figura with a value from outside
// the project (a standard, a handbook, a worked example, a reference
// library); the check is asserted as usual and also recorded as a property
// of the test's result (GoogleTest RecordProperty), from which
// tools/validation_table.py builds the table of every check with its
// source, the expected value, our value, the tolerance and the test's name.
#pragma once

#include <gtest/gtest.h>

#include <cmath>
#include <sstream>
#include <string>
#include <string_view>

namespace figura::testing {

// Records one check (no assertion). `quantity` names what is compared (unique
// within a test), `source` where the expected value comes from (with
// [derived] / [memory] / [practice] marks as in ../shared/references.md),
// `unit` the unit of the three numbers.
inline void RecordCheck(std::string_view quantity, std::string_view source,
                        double expected, double ours, double tolerance,
                        std::string_view unit) {
  std::ostringstream value;
  value.precision(10);
  value << source << '\t' << expected << '\t' << ours << '\t' << tolerance
        << '\t' << unit;
  ::testing::Test::RecordProperty("check: " + std::string(quantity),
                                  value.str());
}

// EXPECT_NEAR(ours, expected, tolerance) plus RecordCheck.
inline void CheckNear(std::string_view quantity, std::string_view source,
                      double expected, double ours, double tolerance,
                      std::string_view unit) {
  RecordCheck(quantity, source, expected, ours, tolerance, unit);
  EXPECT_LE(std::abs(ours - expected), tolerance)
      << quantity << ": ours " << ours << " " << unit << ", expected "
      << expected << " +- " << tolerance << " (" << source << ")";
}

}  // namespace figura::testing
