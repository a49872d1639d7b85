#include "optics/media.h"

#include <algorithm>
#include <cassert>
#include <cctype>
#include <cmath>
#include <numbers>
#include <sstream>

#include "core/error.h"
#include "core/quantity.h"

namespace figura {

namespace {

// Index differences below this are treated as a matched interface.
constexpr double kIndexMatchTolerance = 1e-9;

std::string Lower(std::string_view text) {
  std::string s(text);
  std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) {
    return static_cast<char>(std::tolower(c));
  });
  return s;
}

std::string CheckIndex(double n, const char* option) {
  std::ostringstream out;
  if (!std::isfinite(n)) {
    out << option << ": the refractive index must be a finite number";
  } else if (n < 1.0) {
    out << option << ": refractive index " << n << " is below 1 (vacuum)";
  } else if (n >= kMaxIndex) {
    out << option << ": refractive index " << n << " is not below " << kMaxIndex
        << " (no optical glass or contact fluid comes near; a typo?)";
  }
  return out.str();
}

}  // namespace

View ParseView(std::string_view text, std::string_view what) {
  const std::string word = Lower(Trim(text));
  if (word == "reflected") return View::kReflected;
  if (word == "transmitted") return View::kTransmitted;
  std::ostringstream message;
  if (!what.empty()) message << what << ": ";
  message << "'" << text << "' is not a view; use reflected or transmitted";
  throw InputError(message.str());
}

const char* ViewName(View view) {
  return view == View::kReflected ? "reflected" : "transmitted";
}

const char* FringeStateName(FringeState state) {
  return state == FringeState::kDark ? "dark" : "bright";
}

std::string MediaStack::Check() const {
  for (const auto& [n, option] : {std::pair{upper_index, "--upper-index"},
                                  std::pair{gap_index, "--gap-index"},
                                  std::pair{lower_index, "--lower-index"}}) {
    std::string message = CheckIndex(n, option);
    if (!message.empty()) return message;
  }
  const bool upper_matched =
      std::abs(gap_index - upper_index) < kIndexMatchTolerance;
  const bool lower_matched =
      std::abs(gap_index - lower_index) < kIndexMatchTolerance;
  std::ostringstream out;
  if (upper_matched && lower_matched) {
    out << "--gap-index " << gap_index
        << " equals both --upper-index and --lower-index: no surface reflects, "
           "no fringes form";
  } else if (upper_matched) {
    out << "--gap-index " << gap_index
        << " equals --upper-index: only the lower gap surface reflects, no "
           "fringes form";
  } else if (lower_matched) {
    out << "--gap-index " << gap_index
        << " equals --lower-index: only the upper gap surface reflects, no "
           "fringes form";
  }
  return out.str();
}

double FresnelR(double n1, double n2) { return (n1 - n2) / (n1 + n2); }

double FresnelT(double n1, double n2) { return 2.0 * n1 / (n1 + n2); }

double FresnelReflectance(double n1, double n2) {
  const double r = FresnelR(n1, n2);
  return r * r;
}

double ReflectionPhase(double n_from, double n_to) {
  return n_to > n_from ? std::numbers::pi : 0.0;
}

LayerResponse AiryLayer(const MediaStack& stack, double thickness_m,
                        double wavelength_m) {
  assert(wavelength_m > 0.0 && std::isfinite(thickness_m));
  const double n1 = stack.upper_index;
  const double n2 = stack.gap_index;
  const double n3 = stack.lower_index;
  const double r12 = FresnelR(n1, n2);
  const double r23 = FresnelR(n2, n3);
  const double t12 = FresnelT(n1, n2);
  const double t23 = FresnelT(n2, n3);
  const double delta = 2.0 * std::numbers::pi * n2 * thickness_m / wavelength_m;
  const std::complex<double> e1 = std::polar(1.0, delta);
  const std::complex<double> e2 = e1 * e1;
  const std::complex<double> denominator = 1.0 + r12 * r23 * e2;
  LayerResponse out;
  out.r = (r12 + r23 * e2) / denominator;
  out.t = t12 * t23 * e1 / denominator;
  out.reflectance = std::norm(out.r);
  out.transmittance = n3 / n1 * std::norm(out.t);
  return out;
}

double LayerIntensity(const MediaStack& stack, View view, double thickness_m,
                      double wavelength_m) {
  const LayerResponse response = AiryLayer(stack, thickness_m, wavelength_m);
  return view == View::kReflected ? response.reflectance
                                  : response.transmittance;
}

FringeRule RuleFor(const MediaStack& stack, View view) {
  assert(std::isfinite(stack.upper_index) && std::isfinite(stack.gap_index) &&
         std::isfinite(stack.lower_index));
  // Any wavelength will do: the response depends on n_gap t / lambda only.
  constexpr double kLambda = 1.0;
  const double quarter = kLambda / (4.0 * stack.gap_index);  // delta = pi/2
  const double at_contact = LayerIntensity(stack, view, 0.0, kLambda);
  const double at_quarter = LayerIntensity(stack, view, quarter, kLambda);

  FringeRule rule;
  rule.contact_intensity = at_contact;
  rule.max_intensity = std::max(at_contact, at_quarter);
  rule.min_intensity = std::min(at_contact, at_quarter);
  const double sum = rule.max_intensity + rule.min_intensity;
  rule.visibility =
      sum > 0.0 ? (rule.max_intensity - rule.min_intensity) / sum : 0.0;
  rule.contact =
      at_contact < 0.5 * sum ? FringeState::kDark : FringeState::kBright;

  // Half-wave rule: the two reflections differ by pi when r12 r23 < 0.
  const double product = FresnelR(stack.upper_index, stack.gap_index) *
                         FresnelR(stack.gap_index, stack.lower_index);
  const bool reflected_minimum_at_contact = product < 0.0;
  const bool minimum_at_contact = view == View::kReflected
                                      ? reflected_minimum_at_contact
                                      : !reflected_minimum_at_contact;
  rule.minimum_offset = minimum_at_contact ? 0.0 : 0.5;
  return rule;
}

double MinimumGap(const MediaStack& stack, View view, int k,
                  double wavelength_m) {
  assert(k >= 0);
  const FringeRule rule = RuleFor(stack, view);
  return (k + rule.minimum_offset) * wavelength_m / (2.0 * stack.gap_index);
}

}  // namespace figura
