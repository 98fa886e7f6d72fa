#include "zeeline/maps/field_vector.hpp"

#include <algorithm>
#include <cmath>

#include "zeeline/core/constants.hpp"

namespace zeeline {
namespace {
// hypot(x, y) as sqrt(x^2 + y^2) where neither square can overflow or underflow to no effect (within about an
// ulp of std::hypot, at a fraction of its cost); std::hypot elsewhere (and for NaN, Inf).
double Hypot(double x, double y) {
  const double m = std::max(std::fabs(x), std::fabs(y));
  return m > 1e-150 && m < 1e150 ? std::sqrt(x * x + y * y) : std::hypot(x, y);
}
}  // namespace

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
  v.field_gauss = Hypot(blos, bt);
  v.field_err_gauss =
      0.25 * Hypot(Hypot(l, t_hi) - Hypot(l, t_lo), Hypot(l_hi, bt) - Hypot(l_lo, bt));
  if (v.field_gauss > 0.0) {
    v.inclination_deg = std::atan2(bt, blos) * kRadToDeg;
    auto angle = [](double ll, double tt) { return std::atan2(tt, ll); };  // from the line-of-sight axis
    v.inclination_err_deg =
        0.25 * Hypot(angle(l, t_hi) - angle(l, t_lo), angle(l_lo, bt) - angle(l_hi, bt)) * kRadToDeg;
  } else {
    v.inclination_deg = v.inclination_err_deg = std::nan("");
  }
  return v;
}

}  // namespace zeeline
