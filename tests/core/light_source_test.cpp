#include "core/light_source.h"

#include <gtest/gtest.h>

#include "core/error.h"

namespace figura {
namespace {

// Each value equals ../shared/references.md, "Wavelengths (standard air)".
TEST(SourceTable, WavelengthsMatchTheReferences) {
  const SourceTable& t = SourceTable::Default();
  struct Row {
    const char* name;
    double nm;
    const char* source;
  };
  const Row rows[] = {
      {"sodium", 589.2938, "RP Photonics, standard spectral lines: Na D doublet mean"},
      {"sodium-d1", 589.5924, "NIST ASD via HyperPhysics"},
      {"sodium-d2", 588.9950, "NIST ASD via HyperPhysics"},
      {"helium-d", 587.5618, "RP Photonics; ISO 7944"},
      {"mercury-e", 546.074, "RP Photonics; ISO 7944"},
      {"cadmium-red", 643.8469, "RP Photonics (Cd C')"},
      {"helium-neon", 632.816, "CIPM 2007 vacuum value converted to air [derived]"},
  };
  for (const Row& r : rows) {
    const LightSource* s = t.Find(r.name);
    ASSERT_NE(s, nullptr) << r.name;
    EXPECT_NEAR(s->wavelength.nm(), r.nm, 1e-9) << r.name << " (" << r.source << ")";
    EXPECT_FALSE(s->source.empty()) << r.name;
    EXPECT_GT(s->uncertainty.nm(), 0.0) << r.name;
  }
}

TEST(ResolveWavelength, LengthOrName) {
  const SourceTable& t = SourceTable::Default();
  EXPECT_NEAR(ResolveWavelength("546.07nm", t).value.nm(), 546.07, 1e-9);
  const Wavelength w = ResolveWavelength("Mercury-E", t);
  EXPECT_EQ(w.source_name, "mercury-e");
  EXPECT_NEAR(w.value.nm(), 546.074, 1e-9);
  EXPECT_THROW(ResolveWavelength("krypton", t), InputError);
  EXPECT_THROW(ResolveWavelength("546.07", t), InputError);
  EXPECT_THROW(ResolveWavelength("5um", t), InputError);  // outside 200..2000 nm
}

TEST(SourceTable, RefusesEntriesWithoutASource) {
  EXPECT_THROW(SourceTable::Parse("[x]\nwavelength = 500nm\n", "t.ini"), InputError);
  EXPECT_THROW(SourceTable::Parse("[x]\nwavelength = 500\nsource = s\n", "t.ini"), InputError);
  const SourceTable ok = SourceTable::Parse(
      "[x]\nwavelength = 500nm\nlines = 499nm:1, 501nm:0.5\nsource = s\n", "t.ini");
  ASSERT_EQ(ok.sources().size(), 1U);
  EXPECT_EQ(ok.sources()[0].lines.size(), 2U);
}

}  // namespace
}  // namespace figura
