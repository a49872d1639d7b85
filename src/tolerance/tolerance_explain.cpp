#include "tolerance/tolerance_explain.h"

#include <cmath>
#include <sstream>

namespace figura {

std::string FormatValue(double value, int digits) {
  std::ostringstream out;
  out.precision(digits);
  out << value;
  return out.str();
}

std::string ToleranceOptions::Check() const {
  if (Trim(text).empty())
    return "the tolerance text is empty; e.g. figura tolerance '3/2(0.5)'";
  if (wavelength) {
    const double nm = wavelength->value.nm();
    if (!(nm >= 200.0 && nm <= 2000.0)) {
      return "--wavelength " + FormatValue(nm) +
             " nm is outside 200 nm .. 2000 nm, the range of tabulated air "
             "wavelengths";
    }
  }
  return {};
}

namespace {

std::string WavelengthLine(const FormTolerance& t,
                           const std::optional<Wavelength>& option) {
  std::string line =
      "test wavelength: λ = " + FormatValue(t.wavelength_nm) + " nm";
  switch (t.wavelength_origin) {
    case WavelengthOrigin::kStated:
      line += " (stated in the tolerance)";
      break;
    case WavelengthOrigin::kOption:
      line += " (from --wavelength";
      if (option && !option->source_name.empty())
        line += ", " + option->source_name;
      line += "; the tolerance states none)";
      break;
    case WavelengthOrigin::kDefault:
      line +=
          " (default: the tolerance states none; 546.07 nm is the reference "
          "wavelength of "
          "ISO 10110-5:1996/2007 [from memory, check the standard])";
      break;
  }
  return line;
}

std::string LimitLine(const FormTolerance& t, FormCharacteristic c) {
  const CharacteristicInfo& info = CharacteristicInfoOf(c);
  const ToleranceLimit& l = t.LimitOf(c);
  std::string head = std::string(info.symbol);
  head.resize(6, ' ');
  head += std::string(info.description) + ": ";
  if (!l.toleranced) {
    if (c == FormCharacteristic::kPower && l.dash) {
      return head +
             "not toleranced here (dash: the radius tolerance is given as a "
             "dimension "
             "on the drawing)";
    }
    return head + (l.dash ? "not toleranced (dash)" : "not toleranced");
  }
  const std::string pm = info.two_sided ? "±" : "";
  const std::string fringes =
      pm + FormatValue(l.fringes) +
      (FormatValue(l.fringes) == "1" ? " fringe" : " fringes");
  const std::string nm = pm + FormatValue(l.nm) + " nm";
  const std::string values =
      l.written_in_nm ? nm + " = " + fringes : fringes + " = " + nm;
  if (info.two_sided) {
    return head + "within " + values +
           " (two-sided: the measured sagitta deviation may be "
           "either sign)";
  }
  return head + "at most " + values;
}

}  // namespace

ToleranceResult ExplainTolerance(const ToleranceOptions& options) {
  const std::string problem = options.Check();
  if (!problem.empty()) throw InputError(problem);
  ToleranceResult r;
  r.tolerance = ParseFormTolerance(options.text, options.wavelength);
  const FormTolerance& t = r.tolerance;

  bool fringes_written = false;
  for (const FormCharacteristic c : AllCharacteristics()) {
    const ToleranceLimit& l = t.LimitOf(c);
    if (l.toleranced && !l.written_in_nm) fringes_written = true;
    if (l.toleranced && l.nm == 0.0) {
      r.status = Status::kWarning;
      r.messages.push_back(
          std::string(CharacteristicInfoOf(c).symbol) +
          " is zero: no real measurement can be proven to meet it");
    }
  }
  if (t.wavelength_origin == WavelengthOrigin::kDefault && fringes_written) {
    r.status = Status::kWarning;
    r.messages.push_back(
        "fringes without a stated wavelength: 546.07 nm assumed (ISO "
        "10110-5:1996/2007 "
        "reference wavelength [from memory]); the 2015 edition allows fringes "
        "only with the test "
        "wavelength stated");
  }
  if (t.wavelength_origin == WavelengthOrigin::kStated && options.wavelength &&
      std::fabs(options.wavelength->value.nm() - t.wavelength_nm) > 1e-6) {
    r.status = Status::kWarning;
    r.messages.push_back(
        "--wavelength " + FormatValue(options.wavelength->value.nm()) +
        " nm differs from the wavelength stated in the tolerance (" +
        FormatValue(t.wavelength_nm) +
        " nm); the stated one defines the limits, the other is the bench "
        "wavelength");
  }

  std::ostringstream out;
  out << "ISO 10110-5 surface form tolerance: " << t.text << "\n";
  out << WavelengthLine(t, options.wavelength) << "\n";
  out << "one fringe = λ/2 = " << FormatValue(t.NmPerFringe())
      << " nm of surface (DIN ISO 10110-5:2016: one fringe spacing is half the "
         "test "
         "wavelength)\n";
  for (const FormCharacteristic c : AllCharacteristics())
    out << LimitLine(t, c) << "\n";
  if (t.wavelength_origin == WavelengthOrigin::kStated && options.wavelength &&
      std::fabs(options.wavelength->value.nm() - t.wavelength_nm) > 1e-6) {
    const double bench_nm_per_fringe = options.wavelength->value.nm() / 2.0;
    out << "at the bench wavelength "
        << FormatValue(options.wavelength->value.nm())
        << " nm (one fringe = " << FormatValue(bench_nm_per_fringe) << " nm):";
    for (const FormCharacteristic c : AllCharacteristics()) {
      const ToleranceLimit& l = t.LimitOf(c);
      if (!l.toleranced) continue;
      out << " " << CharacteristicInfoOf(c).symbol << " "
          << (CharacteristicInfoOf(c).two_sided ? "±" : "")
          << FormatValue(l.nm / bench_nm_per_fringe) << " fringes;";
    }
    out << "\n";
  }
  bool rms_in_fringes = false;
  for (const FormCharacteristic c :
       {FormCharacteristic::kRmsTotal, FormCharacteristic::kRmsIrregularity,
        FormCharacteristic::kRmsNonSymmetric}) {
    if (t.LimitOf(c).toleranced && !t.LimitOf(c).written_in_nm)
      rms_in_fringes = true;
  }
  if (rms_in_fringes) {
    out << "RMS values written without a unit are read in fringes, like A, B "
           "and C (our "
           "reading; write nm to leave no doubt)\n";
  }
  out << "limits in nm are of surface height; A is a ± limit on the signed "
         "sagitta "
         "deviation, B, C and the RMS values are upper limits\n";
  out << "decision rule: " << DecisionRuleName(options.rule) << " ("
      << DecisionRuleDescription(options.rule) << ")\n";
  for (const std::string& m : r.messages) out << "note: " << m << "\n";
  r.explanation = out.str();
  return r;
}

nlohmann::json ToleranceSettingsJson(const ToleranceOptions& options) {
  nlohmann::json wavelength = nullptr;
  if (options.wavelength) {
    wavelength = {{"value_nm", options.wavelength->value.nm()},
                  {"source_name", options.wavelength->source_name}};
  }
  return {{"text", options.text},
          {"wavelength", wavelength},
          {"decision_rule", DecisionRuleName(options.rule)},
          {"default_wavelength_nm", kDefaultTestWavelengthNm}};
}

}  // namespace figura
