// One part of a lot: load the photograph, run the job's analysis, judge the
// measured form against the job's tolerance, and build the part result JSON
// (the analysis result of ../shared/design.md plus "analysis", "part",
// "tolerance", "conformance" and "job_settings_sha256") and its summary row.
#pragma once

#include <nlohmann/json.hpp>
#include <opencv2/core.hpp>
#include <string>

#include "fringe/ring_analysis.h"
#include "inspect/job_file.h"
#include "inspect/lot_summary.h"
#include "inspect/part_id.h"
#include "tolerance/conformance.h"

namespace figura {

// The measured form of a ring result in nm of surface, for the tolerance:
//   A (power)        = power_fringes of the fit: the gap change from the
//                      fringe centre to the edge of the evaluated (test)
//                      diameter against the reference (test plate or
//                      flat); one fringe = lambda / (2 n_gap) of gap;
//                      U95 = k * u(power);
//   B (irregularity) = |astigmatism_fringes|, the difference of the fringe
//                      counts along the principal axes: the test-plate
//                      reading of irregularity for a ring photograph
//                      [practice]; higher-order irregularity is not
//                      measured by the ring fit; U95 = k * u(astigmatism).
// C and the RMS forms are not measured (a toleranced one is indeterminate).
// Values without an uncertainty get NaN U95 (indeterminate under ISO
// 14253-1). Nothing is set for a result with status error.
FormMeasurement RingsFormMeasurement(const RingsResult& result,
                                     const RingsOptions& options);

// The measured form of a surface map in nm of surface (gap metres from
// surface/form_metrics.h): A = power_m with U95 = k * power_u_m (k = 2, GUM);
// B = irregularity_m, C = rsi_m, RMSt/RMSi/RMSa = rmst_m/rmsi_m/rmsa_m,
// these without an uncertainty (NaN U95: indeterminate under ISO 14253-1,
// decided by value under decision-rule = simple). Nothing is set for a
// result with status error.
FormMeasurement MapFormMeasurement(const MapResult& result);

// The outcome of one part.
struct PartOutcome {
  nlohmann::json result;  // the part result JSON
  LotRow row;
  cv::Mat picture;    // 8-bit BGR overlay for the report; empty on load errors
  RingsResult rings;  // analysis = rings (for the plot)
};

// The job as it applies to part `id`: the job itself, with the part's
// contact (manifest column contact) in place of the job's when given, for
// rings and map alike. A part's settings block and job_settings_sha256 come
// from this job.
JobOptions PartJob(const JobOptions& job, const PartIdentity& id);

// Inspects `file` (as given) for part `id` under PartJob(job, id): never throws
// for a bad photograph (an unreadable or unusable photo gives status error with
// the reason). `date_utc` is written as part.date (ISO 8601 UTC).
PartOutcome InspectPart(const std::string& file, const PartIdentity& id,
                        const JobOptions& job, const std::string& date_utc);

// The summary row of a part result JSON (fresh or read back on resume):
// status, verdict, first message, numbers by LotColumns(analysis), U95 as
// coverage_factor * the standard uncertainty, margins from the conformance
// block. File names are left empty for the caller.
LotRow RowFromPartResult(const nlohmann::json& result, const std::string& file);

}  // namespace figura
