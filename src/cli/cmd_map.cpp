// `figura map IMAGE...`: surface maps from open (carrier) or closed fringes.
// Parses and validates the options, then calls the library
// (surface/surface_map.h) per image and writes the summary, JSON, the height
// map (32-bit float TIFF in nm, NaN outside) and the false-colour picture.
// One image gives one JSON object; several give an array in input order.
#include <filesystem>
#include <iostream>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "cli/command.h"
#include "cli/options.h"
#include "cli/photo_input.h"
#include "core/error.h"
#include "io/image.h"
#include "io/image_writer.h"
#include "io/result_json.h"
#include "report/surface_picture.h"
#include "surface/surface_map.h"

namespace figura::cli {
namespace {

constexpr const char* kUsage = "IMAGE... --wavelength W [options]";

// The height map in nm as float, NaN outside the valid area.
cv::Mat HeightNm(const MapResult& r) {
  cv::Mat nm;
  r.height_m.convertTo(nm, CV_32F, 1e9);
  return nm;
}

int Run(const std::vector<std::string>& args) {
  po::options_description desc("map options");
  MapOptions options;
  std::vector<std::string> images;
  std::string json_path, height_path, picture_path, contact, thin_side;
  std::string mode = "auto", aperture_centre, aperture_diameter;
  // clang-format off
  desc.add_options()
      ("image", po::value(&images)->multitoken(), "fringe photographs (TIFF, PNG, JPEG, BMP)")
      ("wavelength", po::value<Wavelength>(&options.wavelength)->required(),
       "test wavelength in air: a length (587.56nm) or a source name from config/sources.ini")
      ("view", po::value<View>(&options.view)->default_value(View::kReflected, "reflected"),
       "reflected or transmitted light")
      ("contact", po::value(&contact),
       "closed fringes: where the surfaces touch (press test), centre or edge; "
       "sets the sign (centre assumed when absent)")
      ("thin-side", po::value(&thin_side),
       "carrier fringes: the side of the photo where the gap is thinnest (press test), "
       "left, right, top or bottom; sets the sign (left assumed when absent)")
      ("terms", po::value<int>(&options.max_order)->default_value(options.max_order),
       "highest Zernike radial order fitted (2..12)")
      ("mode", po::value(&mode)->default_value("auto"),
       "auto (carrier when the spectrum shows one, else closed), carrier or closed")
      ("pixel-pitch", po::value<Length>(),
       "object-side size of one pixel, e.g. 60um (optional: mm axes and sizes)")
      ("aperture-centre", po::value(&aperture_centre),
       "clear aperture centre X,Y in pixels (detected when absent)")
      ("aperture-diameter", po::value(&aperture_diameter),
       "clear aperture diameter: pixels (a bare number) or a length with --pixel-pitch")
      ("aperture-fraction",
       po::value<double>(&options.aperture_fraction)->default_value(options.aperture_fraction),
       "fraction of the aperture radius evaluated")
      ("json", po::value(&json_path), "write the result JSON to PATH ('-' for standard output)")
      ("height", po::value(&height_path),
       "write the height map (gap, nm) as a 32-bit float TIFF, NaN outside the aperture")
      ("picture", po::value(&picture_path),
       "write a false-colour picture (PNG) with a colour bar and two profiles");
  // clang-format on
  AddMediaOptions(desc, &options.stack);
  po::positional_options_description positional;
  positional.add("image", -1);
  po::variables_map vm;
  if (!ParseCommand("map", kUsage, args, desc, positional, &vm, std::cout))
    return kExitOk;

  if (images.empty()) throw InputError("no input: give one or more images");
  options.mode = ParseMapMode(mode, "--mode");
  if (!contact.empty()) {
    options.contact = ParseContact(contact, "--contact");
    options.contact_given = true;
  }
  if (!thin_side.empty()) {
    options.thin_side = ParseThinSide(thin_side, "--thin-side");
    options.thin_side_given = true;
  }
  if (vm.count("pixel-pitch") != 0U) {
    options.pixel_pitch_m = vm["pixel-pitch"].as<Length>().metres;
  }
  if (!aperture_centre.empty()) {
    options.aperture_centre_px =
        ToPoint(ParsePixelPoint(aperture_centre, "--aperture-centre"));
  }
  if (!aperture_diameter.empty()) {
    options.aperture_diameter_px =
        ParsePixelsOrLength(aperture_diameter, "--aperture-diameter")
            .Pixels(options.pixel_pitch_m, "--aperture-diameter",
                    "--pixel-pitch");
  }
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);

  const int n = static_cast<int>(images.size());
  int exit_code = kExitOk;
  nlohmann::json all = nlohmann::json::array();
  std::ostream& out = json_path == "-" ? std::cerr : std::cout;
  for (const std::string& path : images) {
    const std::optional<Image> photo =
        LoadPhoto("map", path, MapSettingsJson(options), &all, &exit_code);
    if (!photo) continue;
    const Image& image = *photo;
    const MapResult result = AnalyseMap(image, options);
    out << MapSummary(result, options, path);
    all.push_back(MapJson(result, options, InputJson(image.info)));
    if (result.status == Status::kError) {
      std::cerr << "figura map: error: " << path << ": "
                << (result.messages.empty() ? "analysis failed"
                                            : result.messages.back())
                << "\n";
      exit_code = kExitInput;
      continue;
    }
    if (!height_path.empty()) {
      WriteImage(PerInputPath(height_path, path, n), HeightNm(result));
    }
    if (!picture_path.empty()) {
      SurfacePictureOptions po_picture;
      if (options.pixel_pitch_m)
        po_picture.pixel_pitch_m = *options.pixel_pitch_m;
      const std::string title =
          std::filesystem::path(path).filename().string() + " - gap map (" +
          MapModeName(result.mode) + " fringes), piston and tilt removed";
      WriteSurfacePicture(PerInputPath(picture_path, path, n), result.height_m,
                          result.unreliable, result.aperture_px,
                          options.wavelength.value.metres, title, po_picture);
    }
  }
  if (!json_path.empty()) WriteJson(json_path, n == 1 ? all.front() : all);
  return exit_code;
}

const Registrar kRegistrar(
    {"map",
     "surface map from carrier or closed fringes: height map, Zernike terms, "
     "PV, RMS, power, irregularity (ISO 10110-5 A, B, C)",
     &Run});

}  // namespace
}  // namespace figura::cli
