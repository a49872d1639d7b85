#include "fringe/ring_diameters.h"

#include <charconv>
#include <set>
#include <string>

#include "core/error.h"
#include "core/text_file.h"

namespace figura {
namespace {

constexpr double kUnitM = kDiameterUnitM;

std::vector<std::string_view> SplitCommas(std::string_view line) {
  std::vector<std::string_view> fields;
  std::size_t start = 0;
  while (true) {
    const std::size_t comma = line.find(',', start);
    fields.push_back(Trim(line.substr(start, comma == std::string_view::npos
                                                 ? std::string_view::npos
                                                 : comma - start)));
    if (comma == std::string_view::npos) break;
    start = comma + 1;
  }
  return fields;
}

std::string Lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) {
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  }
  return out;
}

}  // namespace

std::vector<RingDiameter> ParseRingDiameters(std::string_view text,
                                             const std::string& origin) {
  std::vector<RingDiameter> rows;
  bool header = false;
  int line_no = 0;
  std::size_t pos = 0;
  while (pos <= text.size()) {
    const std::size_t eol = text.find('\n', pos);
    const std::string_view raw =
        text.substr(pos, eol == std::string_view::npos ? std::string_view::npos
                                                       : eol - pos);
    pos = eol == std::string_view::npos ? text.size() + 1 : eol + 1;
    ++line_no;
    const std::string_view line = Trim(raw);
    if (line.empty() || line.front() == '#') continue;
    const std::string where = origin + ":" + std::to_string(line_no) + ": ";
    const std::vector<std::string_view> f = SplitCommas(line);
    if (!header) {
      if (f.size() != 3 || Lower(f[0]) != "order" ||
          Lower(f[1]) != "diameter" || Lower(f[2]) != "kind") {
        throw InputError(where + "expected the header 'order,diameter,kind'");
      }
      header = true;
      continue;
    }
    if (f.size() != 3) {
      throw InputError(where +
                       "expected 3 fields 'order,diameter,kind', found " +
                       std::to_string(f.size()));
    }
    RingDiameter row;
    row.line = line_no;
    const auto [ptr, ec] =
        std::from_chars(f[0].data(), f[0].data() + f[0].size(), row.order);
    if (ec != std::errc() || ptr != f[0].data() + f[0].size() ||
        row.order < 0) {
      throw InputError(where + "order '" + std::string(f[0]) +
                       "' is not a whole number >= 0");
    }
    row.diameter = ParseLength(f[1], where + "diameter");
    if (!(row.diameter.metres > 0.0)) {
      throw InputError(where + "diameter '" + std::string(f[1]) +
                       "' must be positive");
    }
    const std::string kind = Lower(f[2]);
    if (kind == "dark") {
      row.kind = FringeState::kDark;
    } else if (kind == "bright") {
      row.kind = FringeState::kBright;
    } else {
      throw InputError(where + "kind '" + std::string(f[2]) +
                       "' must be dark or bright");
    }
    rows.push_back(row);
  }
  if (!header)
    throw InputError(origin +
                     ": empty; expected the header 'order,diameter,kind'");
  if (rows.empty()) throw InputError(origin + ": no rings after the header");
  return rows;
}

std::vector<RingDiameter> LoadRingDiameters(const std::filesystem::path& path) {
  return ParseRingDiameters(ReadTextFile(path), path.string());
}

std::vector<RingFitPoint> DiameterFitPoints(
    const std::vector<RingDiameter>& rings, const MediaStack& stack,
    View view) {
  const double d = MinimumOffset(stack, view);
  std::vector<RingFitPoint> points;
  int sector = 0;
  for (const RingDiameter& ring : rings) {
    RingFitPoint p;
    p.x_px = 0.5 * ring.diameter.metres / kUnitM;
    p.y_px = 0.0;
    p.sigma_px = 1.0;
    p.order = ring.order + d + (ring.kind == FringeState::kBright ? 0.5 : 0.0);
    p.sector = sector++;
    points.push_back(p);
  }
  return points;
}

RingFitResult FitRingDiameters(const std::vector<RingDiameter>& rings,
                               const RingFitOptions& options) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  RingFitOptions o = options;
  o.pixel_pitch = Length::Metres(kUnitM);
  o.pixel_pitch_u = Length::Metres(0.0);
  o.point_sigmas_known = false;
  const std::vector<RingFitPoint> points =
      DiameterFitPoints(rings, options.stack, options.view);
  std::set<double> orders;
  for (const RingFitPoint& p : points) orders.insert(p.order);
  const RingModel model =
      orders.size() >= 2 ? RingModel::kIsotropic : RingModel::kNoOffset;
  RingFitResult fit = FitRings(points, o, cv::Point2d(0.0, 0.0), model);
  if (model == RingModel::kNoOffset && fit.status != Status::kError) {
    fit.messages.push_back(
        "one ring order only: R assumes perfect contact (order offset e = 0); "
        "measure "
        "more rings for a fitted offset and an uncertainty");
    fit.status = Status::kWarning;
  } else if (fit.status != Status::kError && !fit.has_uncertainty) {
    fit.messages.push_back(
        "two rings: R from the difference method exactly; a third ring is "
        "needed for an "
        "uncertainty");
    fit.status = Status::kWarning;
  }
  // The result carries the user's pitch, not the internal unit.
  fit.centre_px = {0.0, 0.0};
  return fit;
}

}  // namespace figura
