#include "report/axis_ticks.h"

#include <cmath>
#include <cstdio>

namespace figura {

std::string TickLabel(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4g", v);
  return buf;
}

std::vector<double> NiceTicks(double lo, double hi) {
  std::vector<double> ticks;
  const double span = hi - lo;
  if (!(span > 0.0) || !std::isfinite(span)) return ticks;
  const double raw = span / 5.0;
  const double decade = std::pow(10.0, std::floor(std::log10(raw)));
  double step = decade;
  for (const double m : {1.0, 2.0, 5.0, 10.0}) {
    step = m * decade;
    if (step >= raw) break;
  }
  for (double v = std::ceil(lo / step) * step; v <= hi + 1e-9 * step;
       v += step) {
    ticks.push_back(std::abs(v) < 1e-9 * step ? 0.0 : v);
  }
  return ticks;
}

}  // namespace figura
