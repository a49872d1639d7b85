// The whole per-image ring analysis behind `figura rings`: ring detection
// (ring_detection.h) then the model fit (ring_fit.h), with the consistency
// checks between them, the result JSON of ../shared/design.md and the human
// summary. The measured-diameter mode (ring_diameters.h) shares the JSON
// and summary.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "fringe/ring_detection.h"
#include "fringe/ring_diameters.h"
#include "fringe/ring_fit.h"
#include "io/image.h"

namespace figura {

// AnalyseRings warns when fewer dark rings than this were fitted.
inline constexpr int kFewRings = 5;
// AnalyseRings warns when the fit's residual rms exceeds this (fringes);
// 1/20 fringe is well above what a spherical surface leaves (under 0.01 on
// the simulated photos of tests/fringe/ring_accuracy_test.cpp) [practice:
// lambda/20-class irregularity is visible in a fringe photo].
inline constexpr double kLargeResidualFringes = 0.05;
// Relative bias of R from the blur read in the photo above which the result
// warns (RingDetectionResult::blur_bias_rel): 0.01 %, a fifth of the
// issue's 0.05 % accuracy target on 16-bit photos.
inline constexpr double kBlurWarningRel = 1e-4;

// Settings of the analysis of one photograph.
struct RingsOptions {
  RingDetectionOptions detection;
  RingFitOptions fit;

  // An empty string when usable, otherwise a readable reason.
  [[nodiscard]] std::string Check() const;
};

// The outcome for one photograph (or one diameter file).
struct RingsResult {
  Status status = Status::kError;
  std::vector<std::string> messages;  // detection and fit messages, then checks
  bool from_diameters = false;
  RingDetectionResult detection;         // empty in the diameter mode
  std::vector<RingFitPoint> fit_points;  // the detection's points as fit input
  RingFitResult fit;
  // The centre state seen in the photo: the central pixels against the
  // first fringes around the fitted centre, else the detection's
  // (detection.centre_observed, from the mean profile's phase).
  FringeState centre_observed = FringeState::kDark;
  bool centre_disagrees =
      false;  // observed centre state differs from the fit's prediction
};

// The fit input of detected fringe points: order = index / 2 + d, d the
// minimum offset of the media rule (dark fringes at integer + d).
std::vector<RingFitPoint> FitPointsFrom(const RingDetectionResult& detection,
                                        const MediaStack& stack, View view);

// Detects and fits the rings of one image. Throws InputError for invalid
// options; unusable photographs give status kError with a reason, never a
// made-up radius.
RingsResult AnalyseRings(const Image& image, const RingsOptions& options);

// The measured-diameter mode as a RingsResult.
RingsResult AnalyseRingDiameters(const std::vector<RingDiameter>& rings,
                                 const RingFitOptions& options);

// Every setting used, defaults included (the `settings` block).
nlohmann::json RingsSettingsJson(const RingsOptions& options,
                                 bool from_diameters);

// The result object of design.md for one input: `input` is given by the
// caller (InputJson for an image; {path, sha256} for a diameter file).
nlohmann::json RingsJson(const RingsResult& result, const RingsOptions& options,
                         const nlohmann::json& input);

// A human summary (several lines, numbers with units and uncertainties,
// warnings) for standard output.
std::string RingsSummary(const RingsResult& result, const std::string& name);

}  // namespace figura
