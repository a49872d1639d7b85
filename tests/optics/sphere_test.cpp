#include "optics/sphere.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "check_record.h"
#include "core/error.h"
#include "optics/media.h"

namespace figura {
namespace {

using figura::testing::CheckNear;

constexpr double kInf = std::numeric_limits<double>::infinity();

TEST(SphereSag, WorkedValue) {
  // R = 100 mm, D = 50 mm: s = 100 - sqrt(100^2 - 25^2) = 3.1754 mm
  // (references.md [derived]).
  CheckNear("sag of R 100 mm over D 50 mm",
            "[derived] s = R - sqrt(R^2 - D^2/4)", 3.1754,
            SphereSag(0.100, 0.025) * 1e3, 5e-5, "mm");
  // Sign follows R (convex positive as seen from the gap).
  EXPECT_NEAR(SphereSag(-0.100, 0.025) * 1e3, -3.1754, 5e-5);
  // A hemisphere's sag is its radius [practice].
  EXPECT_NEAR(SphereSag(0.010, 0.010), 0.010, 1e-15);
  EXPECT_EQ(SphereSag(kInf, 0.025), 0.0);
  EXPECT_EQ(SphereSag(-kInf, 0.025), 0.0);
}

TEST(SphereSag, LongRadiusHasNoCancellation) {
  // s = r^2/(2R) + r^4/(8R^3) + O(r^6/R^5): binomial series of the exact sag
  // R - sqrt(R^2 - r^2) [practice: elementary algebra].
  const double big_r = 1.0e4;
  const double r = 0.01;
  const double series =
      r * r / (2 * big_r) + std::pow(r, 4) / (8 * std::pow(big_r, 3));
  EXPECT_NEAR(SphereSag(big_r, r) / series, 1.0, 4e-15);
}

TEST(RadiusFromSag, InvertsSag) {
  for (double radius : {0.012, 0.1, 3.7, -0.05, -250.0}) {
    for (double h : {0.001, 0.004, 0.0099}) {
      EXPECT_NEAR(RadiusFromSag(SphereSag(radius, h), h) / radius, 1.0, 1e-12)
          << radius << " " << h;
    }
  }
  EXPECT_EQ(RadiusFromSag(0.0, 0.01), kInf);
}

TEST(TestPlate, SaaymanExampleExactVersusSmallSag) {
  // R = 100 mm, D = 30 mm, N = 2, lambda = 546.07 nm: dR ~ 4 N lambda R^2 /
  // D^2 = 48.5 um (Saayman, "Tutorial on Test Plates", OPTI 515), while the
  // exact sag gives N = 2.033 for that dR (references.md [derived]; the
  // 2.033 is for the unrounded dR = 48.540 um: the rounded 48.5 um gives
  // 2.0317).
  const double lambda = 546.07e-9;
  const double dr = ApproxRadiusDifference(2.0, 0.100, 0.030, lambda);
  CheckNear("test-plate dR for N = 2, D 30 mm, R 100 mm",
            "Saayman, Tutorial on Test Plates (OPTI 515)", 48.5, dr * 1e6, 0.05,
            "um");
  EXPECT_NEAR(FringesBetweenSpheres(0.100, 0.100 + dr, 0.030, lambda), 2.033,
              5e-4);
  EXPECT_NEAR(FringesBetweenSpheres(0.100, 0.100 + 48.5e-6, 0.030, lambda),
              2.0317, 5e-4);
  // Order does not matter; a gap fluid multiplies the count by its index
  // (one fringe = half a wavelength in the gap medium, design.md).
  EXPECT_NEAR(FringesBetweenSpheres(0.100 + dr, 0.100, 0.030, lambda), 2.033,
              5e-4);
  EXPECT_NEAR(FringesBetweenSpheres(0.100, 0.100 + dr, 0.030, lambda, 1.5) /
                  FringesBetweenSpheres(0.100, 0.100 + dr, 0.030, lambda),
              1.5, 1e-12);
  // For a slow part the exact count follows the Taylor expansion of the sag,
  // N = N0 (1 + 3 h^2/(4 R^2)) / (1 + dR/R) [derived: s = h^2/(2R) +
  // h^4/(8R^3) + ...]: R = 1 m, D = 30 mm.
  const double slow = ApproxRadiusDifference(2.0, 1.0, 0.030, lambda);
  const double h = 0.015;
  EXPECT_NEAR(FringesBetweenSpheres(1.0, 1.0 + slow, 0.030, lambda),
              2.0 * (1.0 + 0.75 * h * h) / (1.0 + slow), 1e-5);
}

TEST(SphereGap, SignConvention) {
  const double h = 0.015;
  // A plate that fits a +100 mm convex part is -100 mm (sphere.h): no gap.
  EXPECT_NEAR(SphereGap(0.100, -0.100, h), 0.0, 1e-18);
  // On a flat: Newton's rings, gap = sag of the part.
  EXPECT_EQ(SphereGap(0.100, kInf, h), SphereSag(0.100, h));
  // Part steeper than the concave plate: contact at the centre, gap opens
  // outward (references.md, press test [practice]).
  EXPECT_GT(SphereGap(0.099, -0.100, h), 0.0);
  // Part flatter: the gap formula goes negative (contact at the edge).
  EXPECT_LT(SphereGap(0.101, -0.100, h), 0.0);
  // Concave part on a convex plate: same relation mirrored.
  EXPECT_NEAR(SphereGap(-0.100, 0.100, h), 0.0, 1e-18);
  // The Saayman case as a gap: |gap| in fringes is the same 2.033.
  const double lambda = 546.07e-9;
  const double dr = ApproxRadiusDifference(2.0, 0.100, 0.030, lambda);
  EXPECT_NEAR(std::abs(GapFringes(SphereGap(0.100 + dr, -0.100, h), lambda)),
              2.033, 5e-4);
}

TEST(SphereGap, NewtonRingsWorkedExamples) {
  // Lens on a flat in air, dark rings in reflection at gap t_k = k lambda/2
  // (MinimumGap), then R from the exact sag.
  const MediaStack air{1.5168, 1.0, 1.5168};
  // lambda = 500 nm, 10th dark ring diameter 5.00 mm -> R = 1.25 m
  // (textbook problem, references.md "Worked examples").
  const double t10 = MinimumGap(air, View::kReflected, 10, 500e-9);
  EXPECT_NEAR(RadiusFromSag(t10, 2.5e-3), 1.25, 1e-5);
  // lambda = 648 nm, 12th dark ring radius 1.56 cm -> R = 31.3 m (J. S.
  // Walker, Physics).
  const double t12 = MinimumGap(air, View::kReflected, 12, 648e-9);
  EXPECT_NEAR(RadiusFromSag(t12, 1.56e-2), 31.3, 0.05);
  // And the forward direction: the gap at that ring is t12.
  EXPECT_NEAR(SphereGap(RadiusFromSag(t12, 1.56e-2), kInf, 1.56e-2), t12,
              1e-18);
}

TEST(PartRadiusFromSagDifference, InvertsSphereGap) {
  const double d = 0.030;
  for (double plate : {-0.100, -0.250, 0.080, kInf, -kInf}) {
    for (double part : {0.0995, 0.1, 0.1003, 0.5, -0.3}) {
      if (std::isfinite(plate) && std::abs(plate) < 0.5 * d) continue;
      const double gap = SphereGap(part, plate, 0.5 * d);
      EXPECT_NEAR(PartRadiusFromSagDifference(plate, d, gap) / part, 1.0, 1e-9)
          << plate << " " << part;
    }
  }
  // A perfect fit returns the plate's mirror.
  EXPECT_NEAR(PartRadiusFromSagDifference(-0.100, d, 0.0), 0.100, 1e-14);
  // Zero total sag on a flat is a flat part.
  EXPECT_EQ(PartRadiusFromSagDifference(kInf, d, 0.0), kInf);
}

}  // namespace
}  // namespace figura

namespace figura {
namespace {

TEST(Contact, ParsesBothSpellingsAndRefusesOthers) {
  EXPECT_EQ(ParseContact("centre"), Contact::kCentre);
  EXPECT_EQ(ParseContact(" center "), Contact::kCentre);
  EXPECT_EQ(ParseContact("edge"), Contact::kEdge);
  EXPECT_STREQ(ContactName(Contact::kEdge), "edge");
  EXPECT_THROW(ParseContact("middle"), InputError);
}

}  // namespace
}  // namespace figura
