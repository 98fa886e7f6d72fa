#include "zeeline/polarimetry/mueller.hpp"

#include <cmath>
#include <stdexcept>
#include <string>

namespace zeeline::polarimetry {
namespace {
constexpr double kDeg = 3.14159265358979323846 / 180.0;
}

Mueller LinearPolariser(double axis_deg) { return LinearPolariser(axis_deg, 1.0, 0.0); }

Mueller LinearPolariser(double axis_deg, double k_parallel, double k_perpendicular) {
  if (!(k_perpendicular >= 0.0 && k_perpendicular <= k_parallel && k_parallel <= 1.0))
    throw std::invalid_argument("polariser transmittances k1 = " + std::to_string(k_parallel) +
                                ", k2 = " + std::to_string(k_perpendicular) + ": need 0 <= k2 <= k1 <= 1");
  const double c = std::cos(2.0 * axis_deg * kDeg), s = std::sin(2.0 * axis_deg * kDeg);
  const double sum = k_parallel + k_perpendicular, diff = k_parallel - k_perpendicular;
  const double r = std::sqrt(k_parallel * k_perpendicular);
  Mueller m;
  m << sum, diff * c, diff * s, 0,  //
      diff * c, sum * c * c + 2 * r * s * s, (sum - 2 * r) * c * s, 0,  //
      diff * s, (sum - 2 * r) * c * s, sum * s * s + 2 * r * c * c, 0,  //
      0, 0, 0, 2 * r;
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

Mueller Rotator(double rotation_deg) { return FrameRotation(-rotation_deg); }

Mueller FrameRotation(double angle_deg) {
  const double c = std::cos(2.0 * angle_deg * kDeg), s = std::sin(2.0 * angle_deg * kDeg);
  Mueller m;
  m << 1, 0, 0, 0,  //
      0, c, s, 0,  //
      0, -s, c, 0,  //
      0, 0, 0, 1;
  return m;
}

Mueller PartialDepolariser(double linear_factor, double circular_factor) {
  for (double f : {linear_factor, circular_factor})
    if (!(f >= 0.0 && f <= 1.0))
      throw std::invalid_argument("depolariser factor " + std::to_string(f) + ": need 0 <= factor <= 1");
  return Eigen::Vector4d(1.0, linear_factor, linear_factor, circular_factor).asDiagonal();
}

Mueller ComposeInLightOrder(const std::vector<Mueller>& elements) {
  Mueller m = Mueller::Identity();
  for (const Mueller& e : elements) m = e * m;
  return m;
}

}  // namespace zeeline::polarimetry
