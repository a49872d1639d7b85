// Job files: the contract keys map onto the ring options exactly as the
// command-line options of `figura rings` do; bad and unknown keys are
// refused with their line.
#include "inspect/job_file.h"

#include <gtest/gtest.h>

#include <string>

#include "core/error.h"
#include "core/ini.h"

namespace figura {
namespace {

constexpr const char* kContractJob =
    "; an invented lot\n"
    "analysis = rings\n"
    "wavelength = 546.07nm\n"
    "pixel-pitch = 32um\n"
    "upper-index = 1.5168\n"
    "gap-index = 1.0\n"
    "lower-index = 1.5168\n"
    "reference-radius = -100mm\n"
    "contact = centre\n"
    "tolerance = 3/4(2)\n"
    "lot = L-0001\n"
    "operator = QX\n";

JobOptions Parse(const std::string& text) {
  return ParseJob(IniFile::Parse(text, "job.ini"), ".");
}

// The message of the InputError thrown by parsing `text`.
std::string ErrorOf(const std::string& text) {
  try {
    Parse(text);
  } catch (const InputError& e) {
    return e.what();
  }
  return "(no error)";
}

TEST(JobFile, ContractKeys) {
  const JobOptions job = Parse(kContractJob);
  EXPECT_EQ(job.analysis, Analysis::kRings);
  EXPECT_DOUBLE_EQ(job.rings.fit.wavelength.value.nm(), 546.07);
  EXPECT_DOUBLE_EQ(job.rings.fit.pixel_pitch.um(), 32.0);
  EXPECT_DOUBLE_EQ(job.rings.fit.stack.upper_index, 1.5168);
  EXPECT_DOUBLE_EQ(job.rings.fit.stack.gap_index, 1.0);
  ASSERT_TRUE(job.rings.fit.reference_radius.has_value());
  EXPECT_DOUBLE_EQ(job.rings.fit.reference_radius->mm(), -100.0);
  EXPECT_EQ(job.rings.fit.contact, Contact::kCentre);
  EXPECT_EQ(job.lot, "L-0001");
  EXPECT_EQ(job.operator_name, "QX");
  // ISO 10110-5: 3/A(B): A = 4 fringes power, B = 2 fringes irregularity;
  // no wavelength in the text, so the job's test wavelength applies and one
  // fringe is lambda/2 of surface (DIN ISO 10110-5:2016, abstract).
  const ToleranceLimit& a = job.tolerance.LimitOf(FormCharacteristic::kPower);
  const ToleranceLimit& b =
      job.tolerance.LimitOf(FormCharacteristic::kIrregularity);
  EXPECT_TRUE(a.toleranced);
  EXPECT_DOUBLE_EQ(a.fringes, 4.0);
  EXPECT_NEAR(a.nm, 4.0 * 546.07 / 2.0, 1e-9);
  EXPECT_DOUBLE_EQ(b.fringes, 2.0);
  EXPECT_EQ(job.decision_rule, DecisionRule::kIso14253);
}

TEST(JobFile, DefaultsEqualTheRingsCommandDefaults) {
  // Keys not given keep the library defaults that `figura rings` also uses.
  const JobOptions job = Parse(
      "wavelength = mercury-e\npixel-pitch = 10um\ntolerance = 3/1(0.5)\n");
  const RingsOptions defaults;
  EXPECT_EQ(job.rings.detection.sectors, defaults.detection.sectors);
  EXPECT_EQ(job.rings.fit.outlier_threshold, defaults.fit.outlier_threshold);
  EXPECT_EQ(job.rings.fit.view, View::kReflected);
  EXPECT_FALSE(job.rings.fit.reference_radius.has_value());
  // mercury e, 546.074 nm in air (references.md, NIST ASD).
  EXPECT_NEAR(job.rings.fit.wavelength.value.nm(), 546.074, 1e-3);
}

TEST(JobFile, UnknownKeyNamesKeyAndLine) {
  const std::string m = ErrorOf(std::string(kContractJob) + "colour = red\n");
  EXPECT_NE(m.find("job.ini:13"), std::string::npos) << m;
  EXPECT_NE(m.find("unknown key 'colour'"), std::string::npos) << m;
}

TEST(JobFile, BadValueNamesLineAndKey) {
  const std::string m =
      ErrorOf("wavelength = 546.07nm\npixel-pitch = 32\ntolerance = 3/4(2)\n");
  EXPECT_NE(m.find("job.ini:2: pixel-pitch"), std::string::npos) << m;
  EXPECT_NE(m.find("no unit"), std::string::npos) << m;
  const std::string t =
      ErrorOf("wavelength = 546.07nm\npixel-pitch = 32um\ntolerance = 3/4(2\n");
  EXPECT_NE(t.find("job.ini:3: tolerance"), std::string::npos) << t;
}

// A whole-number key far beyond int is refused with its line and key (it
// was converted to int unchecked: undefined behaviour, found by
// job_file_fuzz).
TEST(JobFile, HugeWholeNumberIsRefused) {
  const std::string m = ErrorOf(std::string(kContractJob) + "sectors = 1e30\n");
  EXPECT_NE(m.find("job.ini:13: sectors"), std::string::npos) << m;
  EXPECT_NE(m.find("whole number"), std::string::npos) << m;
}

TEST(JobFile, RequiredKeys) {
  EXPECT_NE(ErrorOf("pixel-pitch = 32um\ntolerance = 3/4\n")
                .find("wavelength is required"),
            std::string::npos);
  EXPECT_NE(ErrorOf("wavelength = 546.07nm\npixel-pitch = 32um\n")
                .find("tolerance is required"),
            std::string::npos);
}

TEST(JobFile, SectionsAreRefused) {
  const std::string s = ErrorOf("[rings]\nwavelength = 546.07nm\n");
  EXPECT_NE(s.find("no sections"), std::string::npos) << s;
}

TEST(JobFile, MapTakesTheMapKeys) {
  const JobOptions job = Parse(
      "analysis = map\nwavelength = 632.8nm\npixel-pitch = 32um\n"
      "terms = 6\nthin-side = top\ntolerance = 3/-(1/0.5)\n");
  EXPECT_EQ(job.analysis, Analysis::kMap);
  EXPECT_EQ(job.map.max_order, 6);
  EXPECT_TRUE(job.map.thin_side_given);
  EXPECT_EQ(job.map.thin_side, ThinSide::kTop);
  // The tolerance's fringes are at the job's test wavelength (ISO 10110-5:
  // one fringe = lambda/2 of surface): B = 1 fringe = 316.4 nm.
  EXPECT_NEAR(job.tolerance.LimitOf(FormCharacteristic::kIrregularity).nm,
              316.4, 1e-9);
  // A ring-only key is unknown for a map.
  const std::string m = ErrorOf(
      "analysis = map\nwavelength = 632.8nm\nreference-radius = -100mm\n"
      "tolerance = 3/1\n");
  EXPECT_NE(m.find("job.ini:3: unknown key 'reference-radius'"),
            std::string::npos)
      << m;
}

TEST(JobFile, TestDiameterSetsTheEvaluatedDiameter) {
  const JobOptions job =
      Parse(std::string(kContractJob) + "test-diameter = 12mm\n");
  ASSERT_TRUE(job.rings.fit.aperture_diameter.has_value());
  EXPECT_DOUBLE_EQ(job.rings.fit.aperture_diameter->mm(), 12.0);
  EXPECT_FALSE(job.rings.detection.aperture_diameter_px.has_value());
}

TEST(JobFile, SettingsHashFollowsMeasurementSettingsOnly) {
  const JobOptions a = Parse(kContractJob);
  std::string other_operator = kContractJob;
  other_operator.replace(other_operator.find("QX"), 2, "ZZ");
  std::string other_pitch = kContractJob;
  other_pitch.replace(other_pitch.find("32um"), 4, "33um");
  EXPECT_EQ(JobSettingsSha256(a), JobSettingsSha256(Parse(other_operator)));
  EXPECT_NE(JobSettingsSha256(a), JobSettingsSha256(Parse(other_pitch)));
  EXPECT_EQ(JobSettingsSha256(a).size(), 64U);
}

}  // namespace
}  // namespace figura
