// The media stack of an interference gap (upper medium, gap, lower medium),
// the viewing mode, and the phase-shift rules that follow from them.
// Normal incidence, real (non-absorbing) indices throughout.
#pragma once

#include <complex>
#include <string>
#include <string_view>

namespace figura {

// Light is seen reflected back through the upper medium, or transmitted
// through the whole stack.
enum class View { kReflected, kTransmitted };

// Parses "reflected" / "transmitted" (case-insensitive, surrounding blanks
// ignored). Throws InputError naming `what` (omitted when empty) and the
// accepted words.
View ParseView(std::string_view text, std::string_view what = "--view");
// "reflected" / "transmitted".
const char* ViewName(View view);

// Whether a zero gap (optical contact) looks dark or bright.
enum class FringeState { kDark, kBright };
// "dark" / "bright".
const char* FringeStateName(FringeState state);

// Highest refractive index accepted (no optical glass or contact fluid in the
// visible comes near; a typo such as 15 instead of 1.5 is caught).
inline constexpr double kMaxIndex = 5.0;

// Refractive indices (real, non-absorbing) of the three media, light entering
// from the upper medium. Default: air gap between two crown glasses (N-BK7,
// n_d = 1.5168, from the Schott catalogue [memory]).
struct MediaStack {
  double upper_index = 1.5168;
  double gap_index = 1.0;
  double lower_index = 1.5168;

  // An empty string when the stack is usable, otherwise a readable reason
  // naming the option (--upper-index, --gap-index, --lower-index): an index
  // that is not finite, below 1 or not below kMaxIndex; or a gap index equal
  // to a neighbour's, so that one of the two gap surfaces does not reflect
  // and no fringes form.
  [[nodiscard]] std::string Check() const;
};

// Fresnel amplitude reflection coefficient at normal incidence going from
// index n1 into n2: r = (n1 - n2)/(n1 + n2) (Hecht, Optics, sec. 4.6).
double FresnelR(double n1, double n2);
// Fresnel amplitude transmission coefficient at normal incidence:
// t = 2 n1/(n1 + n2) (Hecht, Optics, sec. 4.6).
double FresnelT(double n1, double n2);
// Intensity reflectance at normal incidence, ((n1-n2)/(n1+n2))^2 (Hecht,
// Optics, sec. 4.6).
double FresnelReflectance(double n1, double n2);

// Phase change (radians) on reflection going from n_from towards n_to: pi
// when n_to > n_from (external reflection, r < 0), 0 otherwise (Hecht,
// Optics, sec. 4.6).
double ReflectionPhase(double n_from, double n_to);

// Exact multiple-beam (Airy) response of the gap layer of thickness t at
// vacuum-equivalent wavelength lambda (both in metres, lambda in the same
// medium as the indices refer to, i.e. in air for indices relative to air):
//   r = (r12 + r23 e^{2i delta}) / (1 + r12 r23 e^{2i delta}),
//   t = t12 t23 e^{i delta} / (1 + r12 r23 e^{2i delta}),
//   delta = 2 pi n_gap t / lambda,
// R = |r|^2, T = (n_lower/n_upper) |t|^2, R + T = 1 (Born & Wolf, Principles
// of Optics, sec. 7.6.1; Macleod, Thin-Film Optical Filters, ch. 2).
// Requires wavelength_m > 0 and finite thickness (asserts).
struct LayerResponse {
  std::complex<double> r;
  std::complex<double> t;
  double reflectance = 0.0;
  double transmittance = 0.0;
};
LayerResponse AiryLayer(const MediaStack& stack, double thickness_m,
                        double wavelength_m);

// Intensity (R or T, fraction of the incident power) seen in `view` for gap
// thickness t (m) at wavelength lambda (m).
double LayerIntensity(const MediaStack& stack, View view, double thickness_m,
                      double wavelength_m);

// The fringe picture a stack gives in one view: contact state, visibility
// (Imax - Imin)/(Imax + Imin) of the exact Airy response over one period,
// and d in t_k = (k + d) lambda / (2 n_gap) for the intensity minima (d = 0
// or 1/2 from the half-wave rule at both reflections).
//
// With real indices R(delta) depends on cos(2 delta) only and is monotonic
// in it, so its extremes lie at delta = 0 (contact, R = ((r12 + r23)/(1 +
// r12 r23))^2) and delta = pi/2 (R = ((r12 - r23)/(1 - r12 r23))^2)
// (Born & Wolf, sec. 7.6.1). In reflection, the two reflections differing
// in phase by pi (r12 r23 < 0) put the minima at delta = k pi (d = 0, contact
// dark); equal phases (r12 r23 > 0) put them at delta = (k + 1/2) pi (d =
// 1/2, contact bright). Transmission is the complement (T = 1 - R): its
// minima lie at R's maxima, so d swaps. `contact` compares the intensity at
// t = 0 with the mid-range (Imax + Imin)/2.
struct FringeRule {
  FringeState contact = FringeState::kDark;
  double visibility = 0.0;
  double minimum_offset = 0.0;  // d, 0 or 0.5
  double contact_intensity = 0.0;
  double max_intensity = 0.0;
  double min_intensity = 0.0;
};
// Requires a stack that passes Check() (asserts the indices are finite).
FringeRule RuleFor(const MediaStack& stack, View view);

// Gap thickness (m) of the k-th intensity minimum, k = 0, 1, ...:
// t_k = (k + d) lambda / (2 n_gap), with d from RuleFor.
double MinimumGap(const MediaStack& stack, View view, int k,
                  double wavelength_m);

}  // namespace figura
