// `figura rings IMAGE... | --diameters FILE`: Newton's-ring analysis. Parses
// and validates the options, then calls the library (fringe/ring_analysis.h)
// per input and writes the summary, JSON, overlay and plot. One image gives
// one JSON object; several give an array of objects in input order.
#include <filesystem>
#include <iostream>
#include <optional>
#include <string>
#include <vector>

#include "cli/command.h"
#include "cli/options.h"
#include "cli/photo_input.h"
#include "core/error.h"
#include "core/sha256.h"
#include "core/text_file.h"
#include "fringe/ring_analysis.h"
#include "io/image.h"
#include "io/result_json.h"
#include "report/ring_overlay.h"
#include "report/ring_plot.h"

namespace figura::cli {
namespace {

constexpr const char* kUsage =
    "IMAGE... --wavelength W --pixel-pitch P [options]\n"
    "       figura rings --diameters FILE --wavelength W [options]";

int Run(const std::vector<std::string>& args) {
  po::options_description desc("rings options");
  RingsOptions options;
  RingFitOptions& fit = options.fit;
  std::vector<std::string> images;
  std::string diameters, json_path, overlay_path, plot_path, contact = "centre";
  std::string aperture_centre, aperture_diameter;
  // clang-format off
  desc.add_options()
      ("image", po::value(&images)->multitoken(), "photographs of the rings (TIFF, PNG, JPEG, BMP)")
      ("diameters", po::value(&diameters),
       "measured-diameter mode: CSV with header order,diameter,kind (e.g. 12,31.2mm,dark)")
      ("wavelength", po::value<Wavelength>(&fit.wavelength)->required(),
       "test wavelength in air: a length (546.07nm) or a source name from config/sources.ini")
      ("pixel-pitch", po::value<Length>(&fit.pixel_pitch),
       "object-side size of one pixel, e.g. 12.5um (image mode, required)")
      ("pixel-pitch-u", po::value<Length>(&fit.pixel_pitch_u)->default_value(Length{}, "0um"),
       "standard uncertainty of the pixel pitch")
      ("view", po::value<View>(&fit.view)->default_value(View::kReflected, "reflected"),
       "reflected or transmitted light")
      ("reference-radius", po::value<Length>(),
       "test plate radius, signed as seen from the gap (a concave plate for a +100 mm "
       "convex part is -100mm); the part's radius is then reported")
      ("reference-radius-u", po::value<Length>(&fit.reference_radius_u)->default_value(Length{}, "0mm"),
       "standard uncertainty of the test plate radius")
      ("contact", po::value(&contact)->default_value("centre"),
       "where the surfaces touch: centre or edge")
      ("aperture-centre", po::value(&aperture_centre),
       "clear aperture centre X,Y in pixels (detected when absent)")
      ("aperture-diameter", po::value(&aperture_diameter),
       "clear aperture diameter: pixels (a bare number) or a length; with --diameters the "
       "evaluated diameter as a length")
      ("test-diameter", po::value<Length>(),
       "diameter over which sag, power and astigmatism are reported (the drawing's test "
       "region, e.g. 20mm); default: the evaluated aperture")
      ("sectors", po::value<int>(&options.detection.sectors)->default_value(options.detection.sectors),
       "azimuth sectors in which fringes are located")
      ("outlier-threshold",
       po::value<double>(&fit.outlier_threshold)->default_value(fit.outlier_threshold),
       "reject fringe points beyond this many robust standard deviations")
      ("json", po::value(&json_path), "write the result JSON to PATH ('-' for standard output)")
      ("overlay", po::value(&overlay_path), "write an overlay image (PNG) of the fringes and fit")
      ("plot", po::value(&plot_path), "write the r^2-versus-order plot (.svg or .png)");
  // clang-format on
  AddMediaOptions(desc, &fit.stack);
  po::positional_options_description positional;
  positional.add("image", -1);
  po::variables_map vm;
  if (!ParseCommand("rings", kUsage, args, desc, positional, &vm, std::cout))
    return kExitOk;

  if (vm.count("reference-radius") != 0U) {
    fit.reference_radius = vm["reference-radius"].as<Length>();
  }
  if (vm.count("test-diameter") != 0U) {
    fit.test_diameter = vm["test-diameter"].as<Length>();
  }
  fit.contact = ParseContact(contact, "--contact");
  const bool diameter_mode = !diameters.empty();
  if (diameter_mode && !images.empty()) {
    throw InputError("give either images or --diameters FILE, not both");
  }
  if (!diameter_mode && images.empty()) {
    throw InputError("no input: give one or more images, or --diameters FILE");
  }
  if (!diameter_mode) {
    if (vm.count("pixel-pitch") == 0U) {
      throw InputError(
          "--pixel-pitch is required for images (object-side size of one "
          "pixel)");
    }
  } else {
    fit.pixel_pitch = Length::Micrometres(1.0);  // unused in this mode
  }
  if (!aperture_centre.empty()) {
    options.detection.aperture_centre_px =
        ToPoint(ParsePixelPoint(aperture_centre, "--aperture-centre"));
  }
  if (!aperture_diameter.empty()) {
    const PixelsOrLength d =
        ParsePixelsOrLength(aperture_diameter, "--aperture-diameter");
    if (diameter_mode && !d.length) {
      throw InputError(
          "--aperture-diameter: with --diameters give a length, e.g. 25mm");
    }
    fit.aperture_diameter = d.ToLength(fit.pixel_pitch.metres);
    if (!diameter_mode) {
      options.detection.aperture_diameter_px = d.Pixels(
          fit.pixel_pitch.metres, "--aperture-diameter", "--pixel-pitch");
    }
  }
  if (std::string why = diameter_mode ? fit.Check() : options.Check();
      !why.empty()) {
    throw InputError(why);
  }

  int exit_code = kExitOk;
  if (diameter_mode) {
    const std::string text = ReadTextFile(diameters);
    const std::vector<RingDiameter> rings = ParseRingDiameters(text, diameters);
    const RingsResult result = AnalyseRingDiameters(rings, fit);
    std::ostream& out = json_path == "-" ? std::cerr : std::cout;
    out << RingsSummary(result, diameters);
    if (!json_path.empty()) {
      WriteJson(json_path,
                RingsJson(result, options,
                          {{"path", diameters}, {"sha256", Sha256Hex(text)}}));
    }
    if (!plot_path.empty() && result.status != Status::kError) {
      WriteRingPlot(plot_path, result, fit);
    }
    if (!overlay_path.empty())
      std::cerr << "figura rings: --overlay needs an image; ignored\n";
    if (result.status == Status::kError) {
      std::cerr << "figura rings: error: " << diameters << ": "
                << (result.messages.empty() ? "fit failed"
                                            : result.messages.back())
                << "\n";
      return kExitInput;
    }
    return kExitOk;
  }

  const int n = static_cast<int>(images.size());
  nlohmann::json all = nlohmann::json::array();
  std::ostream& out = json_path == "-" ? std::cerr : std::cout;
  for (const std::string& path : images) {
    const std::optional<Image> photo = LoadPhoto(
        "rings", path, RingsSettingsJson(options, false), &all, &exit_code);
    if (!photo) continue;
    const Image& image = *photo;
    const RingsResult result = AnalyseRings(image, options);
    out << RingsSummary(result, path);
    all.push_back(RingsJson(result, options, InputJson(image.info)));
    if (!overlay_path.empty())
      WriteRingOverlay(PerInputPath(overlay_path, path, n), image, result);
    if (!plot_path.empty() && result.status != Status::kError) {
      WriteRingPlot(PerInputPath(plot_path, path, n), result, fit);
    }
    if (result.status == Status::kError) {
      std::cerr << "figura rings: error: " << path << ": "
                << (result.messages.empty() ? "analysis failed"
                                            : result.messages.back())
                << "\n";
      exit_code = kExitInput;
    }
  }
  if (!json_path.empty()) WriteJson(json_path, n == 1 ? all.front() : all);
  return exit_code;
}

const Registrar kRegistrar(
    {"rings",
     "Newton's rings: radius of curvature with uncertainty, sag, power, "
     "astigmatism; part radius against a test plate",
     &Run});

}  // namespace
}  // namespace figura::cli
