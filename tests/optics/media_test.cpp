#include "optics/media.h"

#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <limits>
#include <numbers>
#include <random>

#include "check_record.h"
#include "core/error.h"

namespace figura {
namespace {

using figura::testing::CheckNear;

constexpr double kMercuryE =
    546.074e-9;  // references.md: RP Photonics; ISO 7944

// Independent check of the Airy layer: the characteristic-matrix method of
// Macleod, Thin-Film Optical Filters, ch. 2 (single layer, normal incidence,
// admittances equal to the indices in units of the free-space admittance):
//   [B; C] = [[cos d, i sin d / n1], [i n1 sin d, cos d]] [1; ns],
//   Y = C/B, r = (n0 - Y)/(n0 + Y), T = 4 n0 ns / |n0 B + C|^2.
struct MatrixResponse {
  double reflectance;
  double transmittance;
};
MatrixResponse CharacteristicMatrix(double n0, double n1, double ns, double t,
                                    double lambda) {
  const double d = 2.0 * std::numbers::pi * n1 * t / lambda;
  const std::complex<double> i(0.0, 1.0);
  const std::complex<double> b = std::cos(d) + i * std::sin(d) / n1 * ns;
  const std::complex<double> c = i * n1 * std::sin(d) + std::cos(d) * ns;
  const std::complex<double> y = c / b;
  const std::complex<double> r = (n0 - y) / (n0 + y);
  return {std::norm(r), 4.0 * n0 * ns / std::norm(n0 * b + c)};
}

TEST(Fresnel, CrownGlassInAir) {
  // 4.0 % for n = 1.5 in air [practice]; references.md.
  EXPECT_NEAR(FresnelReflectance(1.0, 1.5), 0.04, 1e-12);
  EXPECT_NEAR(FresnelReflectance(1.5, 1.0), 0.04, 1e-12);
  // 4.22 % for n = 1.5168 (N-BK7) [derived from Fresnel, Hecht, Optics
  // sec. 4.6].
  CheckNear("Fresnel reflectance, n = 1.5168",
            "[derived] Fresnel, Hecht, Optics", 0.0422,
            FresnelReflectance(1.0, 1.5168), 5e-5, "");
  // Amplitudes (Hecht, Optics sec. 4.6): r = (n1-n2)/(n1+n2), t = 2 n1/(n1+n2);
  // at normal incidence t = 1 + r.
  EXPECT_NEAR(FresnelR(1.0, 1.5), -0.2, 1e-15);
  EXPECT_NEAR(FresnelR(1.5, 1.0), 0.2, 1e-15);
  EXPECT_NEAR(FresnelT(1.0, 1.5), 0.8, 1e-15);
  EXPECT_NEAR(FresnelT(1.5, 1.0), 1.2, 1e-15);
  // Energy at one interface: R + (n2/n1) t^2 = 1 (Hecht sec. 4.6.2).
  EXPECT_NEAR(0.04 + 1.5 / 1.0 * 0.8 * 0.8, 1.0, 1e-12);
}

TEST(Fresnel, PhaseOnReflection) {
  // Half-wave loss on external reflection only (Hecht, Optics, sec. 4.6).
  EXPECT_DOUBLE_EQ(ReflectionPhase(1.0, 1.5168), std::numbers::pi);
  EXPECT_DOUBLE_EQ(ReflectionPhase(1.5168, 1.0), 0.0);
  EXPECT_DOUBLE_EQ(ReflectionPhase(1.62, 1.755), std::numbers::pi);
}

TEST(AiryLayer, QuarterWaveLayerMatchesHandbookFormula) {
  // R = ((n0 ns - n1^2)/(n0 ns + n1^2))^2 at t = lambda/(4 n1) (Hecht, Optics,
  // sec. 9.7.1; Macleod, Thin-Film Optical Filters, ch. 3).
  struct Set {
    double n0, n1, ns;
  };
  const Set sets[] = {{1.0, 1.38, 1.52},      // MgF2 on crown, in air
                      {1.5168, 1.0, 1.5168},  // air gap between crowns
                      {1.5168, 1.62, 1.755},  // contact fluid
                      {1.0, 2.35, 1.52},      // high-index layer
                      {1.7, 1.2, 3.5}};
  for (const Set& s : sets) {
    const MediaStack stack{s.n0, s.n1, s.ns};
    const double t = kMercuryE / (4.0 * s.n1);
    const double q = (s.n0 * s.ns - s.n1 * s.n1) / (s.n0 * s.ns + s.n1 * s.n1);
    EXPECT_NEAR(AiryLayer(stack, t, kMercuryE).reflectance, q * q, 1e-13)
        << s.n0 << "/" << s.n1 << "/" << s.ns;
    // Half-wave layer is absentee: R = ((n0-ns)/(n0+ns))^2 (Macleod ch. 2).
    EXPECT_NEAR(AiryLayer(stack, 2.0 * t, kMercuryE).reflectance,
                FresnelReflectance(s.n0, s.ns), 1e-13);
  }
}

TEST(AiryLayer, AgreesWithCharacteristicMatrixAndConservesEnergy) {
  std::mt19937 rng(20261202);  // fixed seed
  std::uniform_real_distribution<double> index(1.0, 3.0);
  std::uniform_real_distribution<double> gap(0.0, 3e-6);
  for (int i = 0; i < 200; ++i) {
    const MediaStack stack{index(rng), index(rng), index(rng)};
    const double t = gap(rng);
    const LayerResponse a = AiryLayer(stack, t, kMercuryE);
    const MatrixResponse m = CharacteristicMatrix(
        stack.upper_index, stack.gap_index, stack.lower_index, t, kMercuryE);
    EXPECT_NEAR(a.reflectance, m.reflectance, 1e-12);          // Macleod ch. 2
    EXPECT_NEAR(a.transmittance, m.transmittance, 1e-12);      // Macleod ch. 2
    EXPECT_NEAR(a.reflectance + a.transmittance, 1.0, 1e-12);  // lossless
    EXPECT_NEAR(LayerIntensity(stack, View::kReflected, t, kMercuryE),
                a.reflectance, 0.0);
    EXPECT_NEAR(LayerIntensity(stack, View::kTransmitted, t, kMercuryE),
                a.transmittance, 0.0);
  }
}

TEST(AiryLayer, TwoBeamApproximationAgreesToFourthOrder) {
  // Two-beam approximation (Hecht, Optics, sec. 9.4): r ~ r12 + t12 t21 r23
  // e^{2i delta}; the next beam is of order r12 r23^2, so the intensity
  // error is O(r^4). Halving the contrast must cut the error ~16x.
  auto worst_error = [](double dn) {
    const MediaStack stack{1.5, 1.5 - dn, 1.5};
    const double r12 = FresnelR(stack.upper_index, stack.gap_index);
    const double r23 = FresnelR(stack.gap_index, stack.lower_index);
    const double t12t21 = 1.0 - r12 * r12;  // Stokes relation t t' = 1 - r^2
    double worst = 0.0;
    for (int i = 0; i <= 100; ++i) {
      const double t = i * kMercuryE / (200.0 * stack.gap_index);  // one period
      const double delta =
          2.0 * std::numbers::pi * stack.gap_index * t / kMercuryE;
      const double two_beam =
          std::norm(r12 + t12t21 * r23 * std::polar(1.0, 2.0 * delta));
      worst = std::max(
          worst,
          std::abs(AiryLayer(stack, t, kMercuryE).reflectance - two_beam));
    }
    return std::pair{worst, std::abs(r12)};
  };
  const auto [e1, r1] = worst_error(0.2);
  const auto [e2, r2] = worst_error(0.1);
  EXPECT_LT(e1, 8.0 * std::pow(r1, 4));
  EXPECT_LT(e2, 8.0 * std::pow(r2, 4));
  EXPECT_NEAR(e1 / e2, std::pow(r1 / r2, 4), 0.15 * std::pow(r1 / r2, 4));
}

TEST(RuleFor, AirBetweenCrownGlasses) {
  // Newton's rings: contact dark in reflection, bright in transmission
  // (references.md, half-wave rule; Hecht, Optics, sec. 9.4).
  const MediaStack stack{1.5168, 1.0, 1.5168};
  const FringeRule r = RuleFor(stack, View::kReflected);
  EXPECT_EQ(r.contact, FringeState::kDark);
  EXPECT_EQ(r.minimum_offset, 0.0);
  EXPECT_NEAR(r.contact_intensity, 0.0, 1e-15);
  EXPECT_NEAR(r.visibility, 1.0, 1e-12);  // equal surfaces: full contrast
  const FringeRule t = RuleFor(stack, View::kTransmitted);
  EXPECT_EQ(t.contact, FringeState::kBright);
  EXPECT_EQ(t.minimum_offset, 0.5);
  EXPECT_NEAR(t.contact_intensity, 1.0, 1e-15);
}

TEST(RuleFor, TransmittedVisibilityOfFourPercentSurfaces) {
  // V = 2R/(1+R^2) for two equal surfaces of reflectance R (references.md
  // [derived]); R = 4 % (n = 1.5 [practice]) gives ~0.08.
  const MediaStack stack{1.5, 1.0, 1.5};
  const double r = 0.04;
  const FringeRule t = RuleFor(stack, View::kTransmitted);
  EXPECT_NEAR(t.visibility, 2.0 * r / (1.0 + r * r), 1e-12);
  EXPECT_NEAR(t.visibility, 0.08, 0.001);
}

TEST(RuleFor, ContactFluidBetweenCrownAndFlint) {
  // Fluid 1.62 between 1.5168 and 1.755: both reflections external, equal
  // phase, contact bright in reflection (half-wave rule, Hecht sec. 4.6).
  const MediaStack stack{1.5168, 1.62, 1.755};
  const FringeRule r = RuleFor(stack, View::kReflected);
  EXPECT_EQ(r.contact, FringeState::kBright);
  EXPECT_EQ(r.minimum_offset, 0.5);
  EXPECT_NEAR(r.contact_intensity, FresnelReflectance(1.5168, 1.755), 1e-15);
  const FringeRule t = RuleFor(stack, View::kTransmitted);
  EXPECT_EQ(t.contact, FringeState::kDark);
  EXPECT_EQ(t.minimum_offset, 0.0);
}

TEST(RuleFor, ExtremesMatchFineSampling) {
  // The analytic extremes (delta = 0, pi/2) equal a fine sampling of the
  // exact response over one period (Born & Wolf sec. 7.6.1).
  std::mt19937 rng(7);  // fixed seed
  std::uniform_real_distribution<double> index(1.0, 2.5);
  for (int i = 0; i < 50; ++i) {
    const MediaStack stack{index(rng), index(rng), index(rng)};
    for (View view : {View::kReflected, View::kTransmitted}) {
      double lo = 1e9;
      double hi = -1e9;
      double t_lo = 0.0;
      constexpr int kSteps = 2000;
      const double period = kMercuryE / (2.0 * stack.gap_index);
      for (int k = 0; k < kSteps; ++k) {
        const double t = k * period / kSteps;
        const double v = LayerIntensity(stack, view, t, kMercuryE);
        if (v < lo) {
          lo = v;
          t_lo = t;
        }
        hi = std::max(hi, v);
      }
      const FringeRule rule = RuleFor(stack, view);
      EXPECT_NEAR(rule.min_intensity, lo, 1e-12);
      EXPECT_NEAR(rule.max_intensity, hi, 1e-12);
      EXPECT_NEAR(t_lo, MinimumGap(stack, view, 0, kMercuryE), period / kSteps);
    }
  }
}

TEST(MinimumGap, Values) {
  // t_k = (k + d) lambda / (2 n_gap) (references.md, Newton's rings).
  const MediaStack air{1.5168, 1.0, 1.5168};
  EXPECT_DOUBLE_EQ(MinimumGap(air, View::kReflected, 0, kMercuryE), 0.0);
  EXPECT_NEAR(MinimumGap(air, View::kReflected, 1, kMercuryE), 273.037e-9,
              1e-15);
  EXPECT_NEAR(MinimumGap(air, View::kReflected, 3, kMercuryE), 819.111e-9,
              1e-15);
  EXPECT_NEAR(MinimumGap(air, View::kTransmitted, 0, kMercuryE), 136.5185e-9,
              1e-15);
  EXPECT_NEAR(MinimumGap(air, View::kTransmitted, 2, kMercuryE), 682.5925e-9,
              1e-15);
  const MediaStack fluid{1.5168, 1.62, 1.755};
  EXPECT_NEAR(MinimumGap(fluid, View::kReflected, 0, kMercuryE),
              546.074e-9 / (4 * 1.62), 1e-15);
  EXPECT_DOUBLE_EQ(MinimumGap(fluid, View::kTransmitted, 0, kMercuryE), 0.0);
}

TEST(MediaStack, Check) {
  EXPECT_EQ(MediaStack{}.Check(), "");
  EXPECT_EQ((MediaStack{1.5168, 1.62, 1.755}.Check()), "");
  EXPECT_NE((MediaStack{0.9, 1.0, 1.5}.Check()).find("--upper-index"),
            std::string::npos);
  EXPECT_NE((MediaStack{1.5, std::nan(""), 1.5}.Check()).find("--gap-index"),
            std::string::npos);
  EXPECT_NE(
      (MediaStack{1.5, 1.0, std::numeric_limits<double>::infinity()}.Check())
          .find("--lower-index"),
      std::string::npos);
  EXPECT_NE((MediaStack{1.5, 1.0, 15.0}.Check()).find("--lower-index"),
            std::string::npos);
  EXPECT_NE((MediaStack{1.5, 1.5, 1.5}.Check()).find("both"),
            std::string::npos);
  EXPECT_NE((MediaStack{1.5, 1.5, 1.7}.Check()).find("no fringes"),
            std::string::npos);
  EXPECT_NE((MediaStack{1.7, 1.5, 1.5}.Check()).find("no fringes"),
            std::string::npos);
}

TEST(ParseView, WordsAndErrors) {
  EXPECT_EQ(ParseView("reflected"), View::kReflected);
  EXPECT_EQ(ParseView(" Transmitted "), View::kTransmitted);
  EXPECT_STREQ(ViewName(View::kTransmitted), "transmitted");
  EXPECT_STREQ(FringeStateName(FringeState::kBright), "bright");
  try {
    ParseView("sideways");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("--view"), std::string::npos) << m;
    EXPECT_NE(m.find("reflected or transmitted"), std::string::npos) << m;
  }
}

}  // namespace
}  // namespace figura
