#include "sim/gap_file.h"

#include <cctype>
#include <cmath>
#include <functional>
#include <map>
#include <string_view>
#include <tuple>

#include "core/error.h"
#include "core/quantity.h"

namespace figura {

namespace {

std::string Lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) {
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  }
  return out;
}

// A length, or "flat" (infinity).
double ParseRadius(std::string_view text, std::string_view what) {
  if (Lower(Trim(text)) == "flat") return GapOptions::kFlat;
  return ParseLength(text, what).metres;
}

// A tilt: a length (gap change over the aperture radius) or a slope with
// rad/mrad/urad (µrad), converted with the aperture radius.
double ParseTilt(std::string_view text, std::string_view what,
                 double aperture_radius_m) {
  const std::string t = Lower(Trim(text));
  struct Unit {
    const char* suffix;
    double scale;
  };
  for (const Unit u : {Unit{"urad", 1e-6}, Unit{"\xC2\xB5rad", 1e-6},
                       Unit{"mrad", 1e-3}, Unit{"rad", 1.0}}) {
    const std::string_view s(u.suffix);
    if (t.size() > s.size() && t.ends_with(s)) {
      const double slope = ParseNumber(
          Trim(std::string_view(t).substr(0, t.size() - s.size())), what);
      return slope * u.scale * aperture_radius_m;
    }
  }
  return ParseLength(text, what).metres;
}

using Setter =
    std::function<void(const std::string& value, const std::string& what)>;

}  // namespace

SimulationOptions ParseGapFile(const IniFile& ini) {
  SimulationOptions o;
  o.origin = ini.origin();
  o.wavelength = ResolveWavelength("mercury-e", SourceTable::Default(), "");
  // Values that depend on others are applied after the first sweep.
  std::string tilt_x;
  std::string tilt_y;
  std::string diameter;
  const IniEntry* tilt_x_entry = nullptr;
  const IniEntry* tilt_y_entry = nullptr;
  const IniEntry* diameter_entry = nullptr;

  const std::
      map<std::string, std::map<std::string, Setter>>
          keys = {{"gap",
                   {{"part-radius",
                     [&](const std::string& v, const std::string& w) {
                       o.gap.part_radius_m = ParseRadius(v, w);
                     }},
                    {"plate-radius",
                     [&](const std::string& v, const std::string& w) {
                       o.gap.plate_radius_m = ParseRadius(v, w);
                     }},
                    {"contact",
                     [&](const std::string& v, const std::string& w) {
                       o.gap.contact = ParseContact(Lower(Trim(v)), w);
                     }},
                    {"contact-offset",
                     [&](const std::string& v, const std::string& w) {
                       o.gap.contact_offset_m = ParseLength(v, w).metres;
                     }},
                    {"contact-x",
                     [&](const std::string& v, const std::string& w) {
                       o.gap.contact_x_m = ParseLength(v, w).metres;
                     }},
                    {"contact-y",
                     [&](const std::string& v, const std::string& w) {
                       o.gap.contact_y_m = ParseLength(v, w).metres;
                     }},
                    {"tilt-x", [&](const std::string& v,
                                   const std::string& /*w*/) { tilt_x = v; }},
                    {"tilt-y", [&](const std::string& v,
                                   const std::string& /*w*/) { tilt_y = v; }}}},
                  {"media",
                   {{"upper-index",
                     [&](const std::string& v, const std::string& w) {
                       o.stack.upper_index = ParseNumber(v, w);
                     }},
                    {"gap-index",
                     [&](const std::string& v, const std::string& w) {
                       o.stack.gap_index = ParseNumber(v, w);
                     }},
                    {"lower-index",
                     [&](const std::string& v, const std::string& w) {
                       o.stack.lower_index = ParseNumber(v, w);
                     }},
                    {"view",
                     [&](const std::string& v, const std::string& w) {
                       o.view = ParseView(v, w);
                     }}}},
                  {"light",
                   {{"wavelength",
                     [&](const std::string& v, const std::string& w) {
                       o.wavelength =
                           ResolveWavelength(v, SourceTable::Default(), w);
                     }},
                    {"bandwidth",
                     [&](const std::string& v, const std::string& w) {
                       o.bandwidth_m = ParseLength(v, w).metres;
                     }}}},
                  {"aperture",
                   {{"diameter",
                     [&](const std::string& v, const std::string& /*w*/) {
                       diameter = v;
                     }},
                    {"centre-x-px",
                     [&](const std::string& v, const std::string& w) {
                       o.centre_x_px = ParseNumber(v, w);
                     }},
                    {"centre-y-px",
                     [&](const std::string& v, const std::string& w) {
                       o.centre_y_px = ParseNumber(v, w);
                     }}}},
                  {"camera",
                   {{"width-px",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.width_px = ParseWholeNumber(v, w);
                     }},
                    {"height-px",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.height_px = ParseWholeNumber(v, w);
                     }},
                    {"pixel-pitch",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.pixel_pitch_m = ParseLength(v, w).metres;
                     }},
                    {"blur-sigma-px",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.blur_sigma_px = ParseNumber(v, w);
                     }},
                    {"falloff",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.falloff = ParseNumber(v, w);
                     }},
                    {"background",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.background = ParseNumber(v, w);
                     }},
                    {"surround",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.surround = ParseNumber(v, w);
                     }},
                    {"exposure",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.exposure = ParseNumber(v, w);
                     }},
                    {"full-well",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.full_well_e = ParseNumber(v, w);
                     }},
                    {"read-noise",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.read_noise_e = ParseNumber(v, w);
                     }},
                    {"gamma",
                     [&](const std::string& v,
                         const std::string&
                             w) { o.camera.gamma = ParseNumber(v, w); }},
                    {"bit-depth",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.bit_depth = ParseWholeNumber(v, w);
                     }},
                    {"jpeg-quality",
                     [&](const std::string& v, const std::string& w) {
                       o.camera.jpeg_quality = ParseWholeNumber(v, w);
                     }},
                    {"seed", [&](const std::string& v, const std::string& w) {
                       const double s = ParseNumber(v, w);
                       if (s < 0 || s != std::floor(s) || s > 9.0e15) {
                         throw InputError(
                             w + ": expected a whole number 0 .. 9e15");
                       }
                       o.seed = static_cast<std::uint64_t>(s);
                     }}}}};

  for (const IniEntry& e : ini.entries()) {
    const std::string where = ini.Where(e);
    const std::string what = "[" + e.section + "] " + e.key;
    if (e.section == "zernike") {
      std::string_view k = e.key;
      int j = -1;
      if (k.size() >= 2 && (k[0] == 'z' || k[0] == 'Z') &&
          k.find_first_not_of("0123456789", 1) == std::string_view::npos &&
          k.size() <= 4) {
        j = std::stoi(std::string(k.substr(1)));
      }
      if (j < 0 || j >= ZernikeCount(ZernikePolynomial::kMaxOrder)) {
        throw InputError(
            where + what + ": expected zJ with J the ISO 24157 index 0 .. " +
            std::to_string(ZernikeCount(ZernikePolynomial::kMaxOrder) - 1));
      }
      try {
        const double c = ParseLength(e.value, what).metres;
        if (o.gap.zernike_m.size() <= static_cast<std::size_t>(j)) {
          o.gap.zernike_m.resize(static_cast<std::size_t>(j) + 1, 0.0);
        }
        o.gap.zernike_m[static_cast<std::size_t>(j)] = c;
      } catch (const InputError& err) {
        throw InputError(where + err.what());
      }
      continue;
    }
    const auto section = keys.find(e.section);
    if (section == keys.end()) {
      throw InputError(
          where + "unknown section [" + e.section +
          "]; known: gap, zernike, media, light, aperture, camera");
    }
    const auto setter = section->second.find(e.key);
    if (setter == section->second.end()) {
      std::string known;
      for (const auto& [name, unused] : section->second) {
        known += (known.empty() ? "" : ", ") + name;
      }
      throw InputError(where + "unknown key '" + e.key + "' in [" + e.section +
                       "]; known: " + known);
    }
    if (e.key == "tilt-x") tilt_x_entry = &e;
    if (e.key == "tilt-y") tilt_y_entry = &e;
    if (e.key == "diameter") diameter_entry = &e;
    try {
      setter->second(e.value, what);
    } catch (const InputError& err) {
      throw InputError(where + err.what());
    }
  }

  // The aperture diameter may be given in pixels of the (now known) pitch.
  if (diameter_entry != nullptr) {
    const std::string d = Lower(Trim(diameter));
    const std::string what = "[aperture] diameter";
    try {
      if (d.size() > 2 && d.ends_with("px")) {
        o.aperture_diameter_m =
            ParseNumber(Trim(std::string_view(d).substr(0, d.size() - 2)),
                        what) *
            o.camera.pixel_pitch_m;
      } else {
        o.aperture_diameter_m = ParseLength(d, what).metres;
      }
    } catch (const InputError& err) {
      throw InputError(ini.Where(*diameter_entry) + err.what());
    }
  }
  const double a = 0.5 * o.aperture_diameter_m;
  for (const auto& [entry, text, target] :
       {std::tuple{tilt_x_entry, &tilt_x, &o.gap.tilt_x_m},
        std::tuple{tilt_y_entry, &tilt_y, &o.gap.tilt_y_m}}) {
    if (entry == nullptr) continue;
    try {
      *target = ParseTilt(*text, "[gap] " + entry->key, a);
    } catch (const InputError& err) {
      throw InputError(ini.Where(*entry) + err.what());
    }
  }

  // Range checks: point at the line of the offending key when it is in the
  // file ("section.key: ..." from Check()).
  if (const std::string m = o.Check(); !m.empty()) {
    const std::size_t colon = m.find(": ");
    const std::string id = m.substr(0, colon);
    const std::size_t dot = id.find('.');
    const IniEntry* entry = nullptr;
    std::string text = m;
    if (dot != std::string::npos && colon != std::string::npos) {
      entry = ini.FindEntry(id.substr(0, dot), id.substr(dot + 1));
      text =
          "[" + id.substr(0, dot) + "] " + id.substr(dot + 1) + m.substr(colon);
    }
    throw InputError(
        (entry != nullptr ? ini.Where(*entry) : ini.origin() + ": ") + text);
  }
  return o;
}

SimulationOptions LoadGapFile(const std::filesystem::path& path) {
  return ParseGapFile(IniFile::Load(path));
}

}  // namespace figura
