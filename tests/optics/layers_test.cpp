#include "optics/layers.h"

#include <gtest/gtest.h>

#include <numbers>

#include "check_record.h"
#include "core/error.h"

namespace figura {
namespace {

TEST(AnalyseLayers, CrownAirCrownDefaults) {
  const LayersOptions options;  // N-BK7 / air / N-BK7 at mercury e
  ASSERT_EQ(options.Check(), "");
  // Default wavelength: mercury e, 546.074 nm (references.md; ISO 7944).
  EXPECT_NEAR(options.wavelength.value.nm(), 546.074, 1e-9);
  const LayersResult r = AnalyseLayers(options);
  EXPECT_EQ(r.status, Status::kOk);
  // Fresnel amplitudes (Hecht, Optics, sec. 4.6): (1.5168-1)/(2.5168).
  EXPECT_NEAR(r.r_upper, 0.5168 / 2.5168, 1e-15);
  EXPECT_NEAR(r.r_lower, -0.5168 / 2.5168, 1e-15);
  EXPECT_NEAR(r.t_upper, 2 * 1.5168 / 2.5168, 1e-15);
  EXPECT_NEAR(r.t_lower, 2.0 / 2.5168, 1e-15);
  EXPECT_NEAR(r.reflectance_upper, 0.0422,
              5e-5);  // 4.22 % [derived], references.md
  // Half-wave rule: internal then external reflection differ by pi, contact
  // dark in reflection and bright in transmission (references.md).
  EXPECT_DOUBLE_EQ(r.reflected.first.phase_rad, 0.0);
  EXPECT_DOUBLE_EQ(r.reflected.second.phase_rad, std::numbers::pi);
  EXPECT_DOUBLE_EQ(r.reflected.phase_difference_rad, std::numbers::pi);
  EXPECT_DOUBLE_EQ(r.transmitted.phase_difference_rad, 0.0);
  EXPECT_EQ(r.reflected.rule.contact, FringeState::kDark);
  EXPECT_EQ(r.transmitted.rule.contact, FringeState::kBright);
  // Transmitted visibility 2R/(1+R^2) for two equal surfaces (references.md
  // [derived]).
  const double rr = r.reflectance_upper;
  figura::testing::CheckNear(
      "transmitted fringe visibility, n = 1.5168 on n = 1.5168",
      "[derived] 2R/(1+R^2), references.md", 2 * rr / (1 + rr * rr),
      r.transmitted.rule.visibility, 1e-12, "");
  ASSERT_EQ(r.reflected.minimum_gaps_m.size(), 5U);
  EXPECT_NEAR(r.reflected.minimum_gaps_m[2] * 1e9, 546.074,
              1e-9);  // k lambda / 2
  EXPECT_NEAR(r.transmitted.minimum_gaps_m[0] * 1e9, 546.074 / 4, 1e-9);
}

TEST(AnalyseLayers, ContactFluid) {
  LayersOptions options;
  options.stack = {1.5168, 1.62, 1.755};
  const LayersResult r = AnalyseLayers(options);
  // Both reflections external (pi each): contact bright in reflection
  // (half-wave rule, Hecht sec. 4.6).
  EXPECT_DOUBLE_EQ(r.reflected.phase_difference_rad, 0.0);
  EXPECT_EQ(r.reflected.rule.contact, FringeState::kBright);
  EXPECT_EQ(r.transmitted.rule.contact, FringeState::kDark);
  EXPECT_NEAR(r.reflected.minimum_gaps_m[0], 546.074e-9 / (4 * 1.62), 1e-18);
  // Reflectances of the fluid surfaces (Fresnel): low, but unequal, so
  // visibility below 1.
  EXPECT_LT(r.reflected.rule.visibility, 1.0);
  EXPECT_GT(r.reflected.rule.visibility, 0.5);
}

TEST(AnalyseLayers, NearMatchWarns) {
  LayersOptions options;
  options.stack = {1.5168, 1.5169, 1.5170};
  const LayersResult r = AnalyseLayers(options);
  EXPECT_EQ(r.status, Status::kOk)
      << "equal tiny steps still give good reflected contrast";
  options.stack = {1.0, 1.5, 1.5001};
  const LayersResult w = AnalyseLayers(options);
  EXPECT_EQ(w.status, Status::kWarning);
  ASSERT_EQ(w.messages.size(), 1U);
}

TEST(AnalyseLayers, BadOptionsThrow) {
  LayersOptions options;
  options.stack.gap_index = 0.5;
  EXPECT_NE(options.Check().find("--gap-index"), std::string::npos);
  EXPECT_THROW(AnalyseLayers(options), InputError);
  options.stack.gap_index = 1.0;
  options.minimum_count = 0;
  EXPECT_NE(options.Check(), "");
}

}  // namespace
}  // namespace figura
