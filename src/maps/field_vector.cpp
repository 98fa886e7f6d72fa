#include "zeeline/maps/field_vector.hpp"

#include <algorithm>
#include <cmath>

#include "zeeline/core/constants.hpp"

namespace zeeline {

FieldVector ComposeFieldVector(double blos, double blos_err, double bt, double bt_err, double bt_sq_err) {
  FieldVector v;
  constexpr double kRadToDeg = 180.0 / constants::kPi;
  double t_lo, t_hi;
  if (bt_sq_err > 0.0) {
    t_lo = std::sqrt(std::max(bt * bt - 2.0 * bt_sq_err, 0.0));
    t_hi = std::sqrt(bt * bt + 2.0 * bt_sq_err);
  } else {
    t_lo = std::max(bt - 2.0 * bt_err, 0.0);
    t_hi = bt + 2.0 * bt_err;
  }
  const double l = std::fabs(blos), l_lo = std::max(l - 2.0 * blos_err, 0.0), l_hi = l + 2.0 * blos_err;
  v.field_gauss = std::hypot(blos, bt);
  v.field_err_gauss =
      0.25 * std::hypot(std::hypot(l, t_hi) - std::hypot(l, t_lo), std::hypot(l_hi, bt) - std::hypot(l_lo, bt));
  if (v.field_gauss > 0.0) {
    v.inclination_deg = std::atan2(bt, blos) * kRadToDeg;
    auto angle = [](double ll, double tt) { return std::atan2(tt, ll); };  // from the line-of-sight axis
    v.inclination_err_deg =
        0.25 * std::hypot(angle(l, t_hi) - angle(l, t_lo), angle(l_lo, bt) - angle(l_hi, bt)) * kRadToDeg;
  } else {
    v.inclination_deg = v.inclination_err_deg = std::nan("");
  }
  return v;
}

}  // namespace zeeline
