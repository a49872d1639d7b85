// The media stack of an interference gap (upper medium, gap, lower medium),
// the viewing mode, and the phase-shift rules that follow from them.
// Normal incidence throughout.
#pragma once

#include <complex>
#include <string>
#include <string_view>

namespace figura {

// Light is seen reflected back through the upper medium, or transmitted
// through the whole stack.
enum class View { kReflected, kTransmitted };

// Parses "reflected" / "transmitted". Throws InputError naming `what`.
View ParseView(std::string_view text, std::string_view what = "--view");
// "reflected" / "transmitted".
const char* ViewName(View view);

// Whether a zero gap (optical contact) looks dark or bright.
enum class FringeState { kDark, kBright };
// "dark" / "bright".
const char* FringeStateName(FringeState state);

// Refractive indices (real, non-absorbing) of the three media, light entering
// from the upper medium. Default: air gap between two crown glasses (N-BK7,
// n_d = 1.5168, from the Schott catalogue [memory]).
struct MediaStack {
  double upper_index = 1.5168;
  double gap_index = 1.0;
  double lower_index = 1.5168;

  // An empty string when the stack is usable, otherwise a readable reason
  // (non-finite, below 1, or a gap that matches both neighbours so that no
  // fringes form).
  [[nodiscard]] std::string Check() const;
};

// Fresnel amplitude reflection coefficient at normal incidence going from
// index n1 into n2: r = (n1 - n2)/(n1 + n2) (Hecht, Optics, sec. 4.6).
double FresnelR(double n1, double n2);
// Fresnel amplitude transmission coefficient at normal incidence:
// t = 2 n1/(n1 + n2) (Hecht, Optics, sec. 4.6).
double FresnelT(double n1, double n2);
// Intensity reflectance at normal incidence, ((n1-n2)/(n1+n2))^2.
double FresnelReflectance(double n1, double n2);

// Phase change on reflection going from n_from towards n_to: pi when n_to >
// n_from (external reflection), 0 otherwise (Hecht, Optics, sec. 4.6).
double ReflectionPhase(double n_from, double n_to);

// Exact multiple-beam (Airy) response of the gap layer of thickness t at
// vacuum-equivalent wavelength lambda (both in metres, lambda in the same
// medium as the indices refer to, i.e. in air for indices relative to air):
//   r = (r12 + r23 e^{2i delta}) / (1 + r12 r23 e^{2i delta}),
//   t = t12 t23 e^{i delta} / (1 + r12 r23 e^{2i delta}),
//   delta = 2 pi n_gap t / lambda,
// R = |r|^2, T = (n_lower/n_upper) |t|^2, R + T = 1 (Born & Wolf, Principles
// of Optics, sec. 7.6.1; Macleod, Thin-Film Optical Filters, ch. 2).
struct LayerResponse {
  std::complex<double> r;
  std::complex<double> t;
  double reflectance = 0.0;
  double transmittance = 0.0;
};
LayerResponse AiryLayer(const MediaStack& stack, double thickness_m, double wavelength_m);

// Intensity (R or T) seen in `view` for gap thickness t.
double LayerIntensity(const MediaStack& stack, View view, double thickness_m,
                      double wavelength_m);

// The fringe picture a stack gives in one view: contact state, visibility
// (Imax - Imin)/(Imax + Imin) of the exact Airy response over one period,
// and d in t_k = (k + d) lambda / (2 n_gap) for the intensity minima (d = 0
// or 1/2 from the half-wave rule at both reflections).
struct FringeRule {
  FringeState contact = FringeState::kDark;
  double visibility = 0.0;
  double minimum_offset = 0.0;  // d, 0 or 0.5
  double contact_intensity = 0.0;
  double max_intensity = 0.0;
  double min_intensity = 0.0;
};
FringeRule RuleFor(const MediaStack& stack, View view);

// Gap thickness (m) of the k-th intensity minimum, k = 0, 1, ...:
// t_k = (k + d) lambda / (2 n_gap).
double MinimumGap(const MediaStack& stack, View view, int k, double wavelength_m);

}  // namespace figura
