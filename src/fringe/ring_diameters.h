// Measured-diameter mode: ring diameters measured by hand (travelling
// microscope, reticle) in a CSV file, fitted with the same ring model as the
// photographs (no centre, no astigmatism).
//
// CSV format: a header line `order,diameter,kind`, then one ring per line,
// e.g. `12,31.2mm,dark`. `order` is a whole number counted from the contact
// point: dark ring m has gap (m + d) lambda / (2 n_gap) and bright ring m
// has (m + d + 1/2) lambda / (2 n_gap), d from the media rule (0 for the
// usual glass-air-glass stack in reflected light, where the central spot is
// dark ring 0 and the first dark ring is order 1). `diameter` is a length
// with its unit; `kind` is dark or bright. Blank lines and lines starting
// with '#' are ignored.
#pragma once

#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "core/quantity.h"
#include "fringe/ring_fit.h"
#include "optics/media.h"

namespace figura {

// One measured ring.
struct RingDiameter {
  int order = 0;
  Length diameter;
  FringeState kind = FringeState::kDark;
  int line = 0;  // 1-based line in the file, for messages
};

// Parses the CSV text; `origin` names the file in messages. Throws
// InputError "origin:line: problem" on a bad header, a bad field, a
// negative order, a non-positive diameter, or no rows.
std::vector<RingDiameter> ParseRingDiameters(std::string_view text,
                                             const std::string& origin);

// Reads and parses a CSV file. Throws InputError naming the file.
std::vector<RingDiameter> LoadRingDiameters(const std::filesystem::path& path);

// Length unit of the fit points of the diameter mode: rings sit on the x
// axis at x = D/2 in units of 1 um ("pixels" of 1 um), centre (0, 0).
inline constexpr double kDiameterUnitM = 1e-6;

// The fit input of the rings: order = m + d (+ 1/2 for bright), one sector
// per row, equal radial weights.
std::vector<RingFitPoint> DiameterFitPoints(
    const std::vector<RingDiameter>& rings, const MediaStack& stack, View view);

// Fits r^2 = (lambda R / n_gap)(m + e) (exact sag terms included) to the
// rings: with three or more rings a weighted least-squares fit with R, e and
// their uncertainties from the residual scatter; with two rings the
// difference method exactly, R = (r2^2 - r1^2) n_gap / (lambda (m2 - m1)),
// no uncertainty; with one ring R = r^2 n_gap / (lambda (m + d)) assuming
// perfect contact (e = 0), no uncertainty. The pixel pitch of `options` is
// not used. Throws InputError for invalid options.
RingFitResult FitRingDiameters(const std::vector<RingDiameter>& rings,
                               const RingFitOptions& options);

}  // namespace figura
