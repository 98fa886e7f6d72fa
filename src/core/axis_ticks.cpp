#include "core/axis_ticks.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace zeeline {

double NiceTickStep(double span, int target) {
  if (!(span > 0.0)) return 1.0;
  const double raw = span / target;
  const double mag = std::pow(10.0, std::floor(std::log10(raw)));
  const double f = raw / mag;
  return (f < 1.5 ? 1.0 : f < 3.5 ? 2.0 : f < 7.5 ? 5.0 : 10.0) * mag;
}

std::string TickLabel(double v, double step) {
  char buf[32];
  if (std::fabs(v) < step * 1e-6) v = 0.0;
  const double a = std::max(std::fabs(v), step);
  if (a >= 1e5 || a < 1e-3) {
    std::snprintf(buf, sizeof buf, "%.2g", v);
  } else {
    const int decimals = std::max(0, static_cast<int>(-std::floor(std::log10(step) + 1e-9)));
    std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  }
  return buf;
}

}  // namespace zeeline
