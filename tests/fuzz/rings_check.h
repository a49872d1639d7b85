// Properties of a ring-analysis result shared by the fuzz targets that
// produce one (job_file_fuzz: measured diameters; ring_analysis_fuzz:
// photos): a result that is not an error carries finite numbers (issue 6:
// NaN/Inf never reach a report as a number), and its JSON and summary can
// be written as the program writes them (io/result_json.cpp replaces
// invalid UTF-8).
#pragma once

#include <cmath>
#include <nlohmann/json.hpp>
#include <string>

#include "fringe/ring_analysis.h"
#include "fuzz_util.h"

namespace figura::fuzz {

// Checks `result` and writes its JSON and summary (thrown exceptions escape:
// a finding).
inline void CheckRingsResult(const RingsResult& result,
                             const RingsOptions& options) {
  if (result.status != Status::kError) {
    const RingFitResult& fit = result.fit;
    Require(std::isfinite(fit.radius_m) && std::isfinite(fit.radius_u_m) &&
                std::isfinite(fit.radius_u95_m),
            "ring fit: non-finite radius or uncertainty in a usable result");
    Require(std::isfinite(fit.part_radius_m) &&
                std::isfinite(fit.part_radius_u_m) &&
                std::isfinite(fit.deviation_m),
            "ring fit: non-finite part radius or deviation in a usable result");
    Require(fit.radius_u_m >= 0.0, "ring fit: negative uncertainty");
  } else {
    Require(!result.messages.empty(), "error result without a reason");
  }
  const nlohmann::json input = {{"path", "fuzz"}, {"sha256", ""}};
  const std::string json =
      RingsJson(result, options, input)
          .dump(2, ' ', false, nlohmann::json::error_handler_t::replace);
  Require(!json.empty(), "empty result JSON");
  Require(!RingsSummary(result, "fuzz").empty(), "empty summary");
}

}  // namespace figura::fuzz
