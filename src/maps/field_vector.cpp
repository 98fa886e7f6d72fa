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
    // The two angle differences atan2(t_hi, l) - atan2(t_lo, l) and atan2(bt, l_lo) - atan2(bt, l_hi) (angles
    // from the line-of-sight axis), each as one atan2 of the two points' cross and dot products: for points
    // of the closed first quadrant, atan2(y1, x1) - atan2(y2, x2) = atan2(x2 y1 - x1 y2, x1 x2 + y1 y2) in
    // [-90, 90] deg (exact identity, and free of the cancellation of the difference). Not where a point is at
    // the origin (atan2(0, 0) = 0 by convention), nor for values whose products could overflow or underflow.
    auto plain = [](double x) { return x == 0.0 || (x > 1e-150 && x < 1e150); };
    const bool products = plain(l) && plain(l_lo) && plain(l_hi) && plain(bt) && plain(t_lo) && plain(t_hi);
    auto angle = [](double ll, double tt) { return std::atan2(tt, ll); };
    const double d_trans = products && (l > 0.0 || t_lo > 0.0) ? std::atan2(l * (t_hi - t_lo), l * l + t_hi * t_lo)
                                                               : angle(l, t_hi) - angle(l, t_lo);
    const double d_los = products && bt > 0.0 ? std::atan2(bt * (l_hi - l_lo), l_lo * l_hi + bt * bt)
                                              : angle(l_lo, bt) - angle(l_hi, bt);
    v.inclination_err_deg = 0.25 * Hypot(d_trans, d_los) * kRadToDeg;
  } else {
    v.inclination_deg = v.inclination_err_deg = std::nan("");
  }
  return v;
}

}  // namespace zeeline
