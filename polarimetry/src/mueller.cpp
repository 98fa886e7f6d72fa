#include "zeeline/polarimetry/mueller.hpp"

#include <cmath>

namespace zeeline::polarimetry {
namespace {
constexpr double kDeg = 3.14159265358979323846 / 180.0;
}

Mueller LinearPolariser(double axis_deg) {
  const double c = std::cos(2.0 * axis_deg * kDeg), s = std::sin(2.0 * axis_deg * kDeg);
  Mueller m;
  m << 1, c, s, 0,  //
      c, c * c, c * s, 0,  //
      s, c * s, s * s, 0,  //
      0, 0, 0, 0;
  return 0.5 * m;
}

Mueller LinearRetarder(double fast_axis_deg, double retardance_deg) {
  const double c = std::cos(2.0 * fast_axis_deg * kDeg), s = std::sin(2.0 * fast_axis_deg * kDeg);
  const double cd = std::cos(retardance_deg * kDeg), sd = std::sin(retardance_deg * kDeg);
  Mueller m;
  m << 1, 0, 0, 0,  //
      0, c * c + s * s * cd, c * s * (1 - cd), -s * sd,  //
      0, c * s * (1 - cd), s * s + c * c * cd, c * sd,  //
      0, s * sd, -c * sd, cd;
  return m;
}

Mueller FrameRotation(double angle_deg) {
  const double c = std::cos(2.0 * angle_deg * kDeg), s = std::sin(2.0 * angle_deg * kDeg);
  Mueller m;
  m << 1, 0, 0, 0,  //
      0, c, s, 0,  //
      0, -s, c, 0,  //
      0, 0, 0, 1;
  return m;
}

}  // namespace zeeline::polarimetry
