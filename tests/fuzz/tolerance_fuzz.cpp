// libFuzzer target: the ISO 10110-5 form tolerance parser
// (tolerance/form_tolerance.h), with and without a fallback wavelength.
// Properties of an accepted text, from the header's contract: at least one
// characteristic is limited; limits are finite and not negative; the nm
// value is the fringe value times λ/2 (one fringe = λ/2 of surface, DIN ISO
// 10110-5:2016 abstract); λ lies in 200 nm .. 2000 nm; columns point into
// the text; the JSON of the tolerance can be written as the program writes
// result JSON (invalid UTF-8 replaced, io/result_json.cpp).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "core/light_source.h"
#include "core/quantity.h"
#include "fuzz_util.h"
#include "tolerance/form_tolerance.h"

namespace {

void CheckTolerance(const figura::FormTolerance& t, std::string_view text) {
  using figura::fuzz::Require;
  Require(t.text == text, "text not kept unchanged");
  Require(t.wavelength_nm >= 200.0 && t.wavelength_nm <= 2000.0,
          "wavelength outside 200..2000 nm");
  const int columns = figura::CharacterColumn(text, text.size());
  bool any = false;
  for (const figura::FormCharacteristic c : figura::AllCharacteristics()) {
    const figura::ToleranceLimit& limit = t.LimitOf(c);
    if (!limit.toleranced) continue;
    any = true;
    Require(std::isfinite(limit.fringes) && std::isfinite(limit.nm),
            "non-finite limit");
    Require(limit.fringes >= 0.0 && limit.nm >= 0.0, "negative limit");
    Require(std::fabs(limit.nm - limit.fringes * t.NmPerFringe()) <=
                1e-9 * std::fabs(limit.nm) + 1e-300,
            "limit in nm is not fringes * lambda/2");
    Require(limit.column >= 1 && limit.column <= columns,
            "limit column outside the text");
  }
  Require(any, "accepted a tolerance that limits nothing");
  const std::string json = figura::FormToleranceJson(t).dump(
      2, ' ', false, nlohmann::json::error_handler_t::replace);
  Require(!json.empty(), "empty JSON");
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data,
                                      std::size_t size) {
  const std::string_view text = figura::fuzz::AsText(data, size);
  figura::fuzz::RefuseOnlyWithInputError(
      [&] { CheckTolerance(figura::ParseFormTolerance(text), text); });
  figura::fuzz::RefuseOnlyWithInputError([&] {
    figura::Wavelength fallback;
    fallback.value = figura::Length::Nanometres(632.8);
    const figura::FormTolerance t = figura::ParseFormTolerance(text, fallback);
    CheckTolerance(t, text);
    figura::fuzz::Require(
        t.wavelength_origin != figura::WavelengthOrigin::kDefault,
        "fallback wavelength ignored");
  });
  return 0;
}
