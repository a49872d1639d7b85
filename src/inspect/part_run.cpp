#include "inspect/part_run.h"

#include <cmath>
#include <limits>

#include "core/error.h"
#include "core/sha256.h"
#include "io/image.h"
#include "io/photo_check.h"
#include "io/result_json.h"
#include "report/ring_overlay.h"
#include "report/surface_picture.h"

namespace figura {
namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

double Num(const nlohmann::json& j, const char* key) {
  if (!j.is_object()) return kNan;
  const auto it = j.find(key);
  return it != j.end() && it->is_number() ? it->get<double>() : kNan;
}

}  // namespace

FormMeasurement RingsFormMeasurement(const RingsResult& result,
                                     const RingsOptions& options) {
  FormMeasurement m;
  if (result.status == Status::kError) return m;
  const RingFitResult& f = result.fit;
  // One fringe = lambda / (2 n_gap) of gap (ring_fit.h model).
  const double nm_per_fringe =
      options.fit.wavelength.value.nm() / (2.0 * options.fit.stack.gap_index);
  const double k = f.coverage_factor;
  MeasuredValue power;
  power.value_nm = f.power_fringes * nm_per_fringe;
  power.u95_nm =
      f.has_uncertainty ? k * f.power_u_fringes * nm_per_fringe : kNan;
  m.Set(FormCharacteristic::kPower, power);
  if (!result.from_diameters) {
    MeasuredValue irregularity;
    irregularity.value_nm = std::abs(f.astigmatism_fringes) * nm_per_fringe;
    irregularity.u95_nm =
        f.has_uncertainty ? k * f.astigmatism_u_fringes * nm_per_fringe : kNan;
    m.Set(FormCharacteristic::kIrregularity, irregularity);
  }
  return m;
}

FormMeasurement MapFormMeasurement(const MapResult& result) {
  FormMeasurement m;
  if (result.status == Status::kError) return m;
  const FormMetrics& f = result.metrics;
  m.Set(FormCharacteristic::kPower,
        {f.power_m * 1e9, kMapCoverageFactor * f.power_u_m * 1e9});
  m.Set(FormCharacteristic::kIrregularity, {f.irregularity_m * 1e9, kNan});
  m.Set(FormCharacteristic::kRsi, {f.rsi_m * 1e9, kNan});
  m.Set(FormCharacteristic::kRmsTotal, {f.rmst_m * 1e9, kNan});
  m.Set(FormCharacteristic::kRmsIrregularity, {f.rmsi_m * 1e9, kNan});
  m.Set(FormCharacteristic::kRmsNonSymmetric, {f.rmsa_m * 1e9, kNan});
  return m;
}

JobOptions PartJob(const JobOptions& job, const PartIdentity& id) {
  JobOptions part_job = job;
  if (id.contact) {
    part_job.rings.fit.contact = *id.contact;
    part_job.map.contact = *id.contact;
    part_job.map.contact_given = true;
  }
  return part_job;
}

PartOutcome InspectPart(const std::string& file, const PartIdentity& id,
                        const JobOptions& lot_job,
                        const std::string& date_utc) {
  const JobOptions job = PartJob(lot_job, id);
  PartOutcome out;
  nlohmann::json& j = out.result;
  Image image;
  bool loaded = false;
  try {
    image = LoadImage(file);
    CheckPhoto(image);
    loaded = true;
  } catch (const InputError& e) {
    nlohmann::json input = {{"path", file}};
    try {
      // A readable file that is no photograph keeps its hash, so that a
      // rerun knows it unchanged.
      input["sha256"] = Sha256File(file);
    } catch (const InputError&) {
      input["sha256"] = nullptr;
    }
    j = InputErrorJson(input, job.AnalysisSettingsJson(), e.what());
  }
  FormMeasurement measured;
  if (loaded && job.analysis == Analysis::kMap) {
    MapResult map;
    try {
      map = AnalyseMap(image, job.map);
    } catch (const InputError& e) {
      map = MapResult{};
      map.status = Status::kError;
      map.messages = {e.what()};
    }
    j = MapJson(map, job.map, InputJson(image.info));
    if (map.status != Status::kError && !map.height_m.empty()) {
      try {
        SurfacePictureOptions po;
        if (job.map.pixel_pitch_m) po.pixel_pitch_m = *job.map.pixel_pitch_m;
        out.picture = RenderSurfacePicture(
            map.height_m, map.unreliable, map.aperture_px,
            job.map.wavelength.value.metres,
            id.part + " - gap map, piston and tilt removed", po);
      } catch (const InputError&) {
        out.picture = cv::Mat();  // the report then shows no picture
      }
    }
    measured = MapFormMeasurement(map);
  } else if (loaded) {
    try {
      out.rings = AnalyseRings(image, job.rings);
    } catch (const InputError& e) {
      out.rings = RingsResult{};
      out.rings.status = Status::kError;
      out.rings.messages = {e.what()};
    }
    j = RingsJson(out.rings, job.rings, InputJson(image.info));
    out.picture = RenderRingOverlay(image, out.rings);
    measured = RingsFormMeasurement(out.rings, job.rings);
  }
  j["analysis"] = AnalysisName(job.analysis);
  j["part"] = {{"lot", job.lot},
               {"part", id.part},
               {"serial", id.serial},
               {"notes", id.notes},
               {"contact", id.contact ? nlohmann::json(ContactName(*id.contact))
                                      : nlohmann::json(nullptr)},
               {"operator", job.operator_name},
               {"date", date_utc}};
  j["tolerance"] = FormToleranceJson(job.tolerance);
  j["job_settings_sha256"] = JobSettingsSha256(job);
  const bool error = j["status"].value("state", "error") == "error";
  if (!error) {
    ConformanceOptions copt;
    copt.rule = job.decision_rule;
    const ConformanceResult c =
        EvaluateConformance(job.tolerance, measured, copt);
    j["conformance"] = ConformanceJson(c);
    if (!c.messages.empty()) j["conformance"]["messages"] = c.messages;
    j["conformance"]["measurement_note"] =
        job.analysis == Analysis::kMap
            ? "A, B, C and RMS forms from the surface map (ISO 14999-4 "
              "reading, surface/form_metrics.h); only A carries an "
              "uncertainty"
            : "A = power_fringes against the reference over the evaluated "
              "diameter; B = |astigmatism_fringes| (the ring fit measures no "
              "higher-order irregularity); C and RMS forms are not measured "
              "from rings";
  }
  out.row = RowFromPartResult(j, file);
  return out;
}

LotRow RowFromPartResult(const nlohmann::json& r, const std::string& file) {
  LotRow row;
  row.file = file;
  const nlohmann::json part = r.value("part", nlohmann::json::object());
  row.part = part.value("part", "");
  row.serial = part.value("serial", "");
  row.notes = part.value("notes", "");
  const nlohmann::json input = r.value("input", nlohmann::json::object());
  row.input_sha256 = StringOr(input, "sha256");
  const nlohmann::json status = r.value("status", nlohmann::json::object());
  const std::string state = status.value("state", "error");
  row.status = state;
  const nlohmann::json messages =
      status.value("messages", nlohmann::json::array());
  if (state == "error") {
    row.message = messages.empty() ? "analysis failed"
                                   : messages.back().get<std::string>();
    return row;
  }
  if (!messages.empty()) row.message = messages.front().get<std::string>();
  const nlohmann::json conformance =
      r.value("conformance", nlohmann::json::object());
  row.verdict = conformance.value("verdict", "indeterminate");
  const double k = r.value("coverage_factor", 2.0);
  for (const LotColumn& col : LotColumns(r.value("analysis", "rings"))) {
    row.values[col.key] = Num(r, col.key.c_str());
  }
  row.values["power_u95_fringes"] = k * Num(r, "power_u_fringes");
  row.values["astigmatism_u95_fringes"] = k * Num(r, "astigmatism_u_fringes");
  for (const nlohmann::json& c :
       conformance.value("characteristics", nlohmann::json::array())) {
    const std::string key = c.value("key", "");
    if (key == "power" || key == "irregularity") {
      row.values[key + "_margin_fringes"] = Num(c, "margin_fringes");
    }
  }
  if (row.verdict != "pass") {
    // The reason of the first characteristic that is not a pass.
    for (const nlohmann::json& c :
         conformance.value("characteristics", nlohmann::json::array())) {
      if (c.value("verdict", "") != "pass") {
        const std::string warning = row.message;
        row.message = c.value("symbol", "") + ": " + c.value("reason", "");
        if (!warning.empty()) row.message += "; " + warning;
        break;
      }
    }
  }
  return row;
}

}  // namespace figura
