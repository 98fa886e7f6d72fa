// |B|, inclination and their errors from B_LOS and B_T (field_vector.hpp).
#include <algorithm>
#include <cmath>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/maps/field_vector.hpp"

namespace zeeline {
namespace {

constexpr double kExactRelTol = 1e-15;     // one rounding of sqrt(9 + 16) and of atan2 (correctly rounded here)
// The 2-sigma spread of |B| equals linear propagation to second order in sigma/value (the header): at
// sigma/value ~ 3e-3 the quarter spread differs from it by ~1e-5 relative.
constexpr double kLinearRelTol = 1e-4;
// Two forms of the same angle differences, each within a few 1e-16 rad of the exact one; the differences here
// are >= 1e-4 rad, so the forms agree to ~1e-12 relative.
constexpr double kSpreadRelTol = 1e-11;

TEST(FieldVector, ThreeFourFiveTriangle) {
  const FieldVector v = ComposeFieldVector(3.0, 0.0, 4.0, 0.0, 0.0);
  EXPECT_CLOSE(v.field_gauss, 5.0, kExactRelTol);
  // atan2(4, 3) = 53.130102354155978703 deg (the 3-4-5 triangle's larger acute angle, from memory).
  EXPECT_CLOSE(v.inclination_deg, 53.130102354155978703, kExactRelTol);
}

TEST(FieldVector, HugeAndTinyValuesDoNotOverflowOrUnderflow) {
  // Squares of these would overflow (1e400) or underflow to 0 (1e-400): |B| must still be 5e200 and 5e-200.
  EXPECT_CLOSE(ComposeFieldVector(3e200, 0.0, 4e200, 0.0, 0.0).field_gauss, 5e200, kExactRelTol);
  EXPECT_CLOSE(ComposeFieldVector(3e-200, 0.0, 4e-200, 0.0, 0.0).field_gauss, 5e-200, kExactRelTol);
  EXPECT_TRUE(std::isnan(ComposeFieldVector(0.0, 1.0, 0.0, 1.0, 0.0).inclination_deg));  // |B| = 0
}

TEST(FieldVector, ErrorsReduceToLinearPropagationAtHighSignal) {
  // B_LOS = 300 +- 1 G, B_T = 400 G with sigma(B_T^2) = 400 G^2, i.e. sigma(B_T) = 400 / (2 * 400) = 0.5 G.
  const double l = 300.0, sl = 1.0, t = 400.0, sq = 400.0, st = sq / (2.0 * t);
  const FieldVector v = ComposeFieldVector(l, sl, t, 0.0, sq);
  const double b = std::hypot(l, t);
  // d|B| = (l dl + t dt) / |B|;  d(incl) = (l dt - t dl) / |B|^2 (first-order propagation, textbook)
  EXPECT_CLOSE(v.field_err_gauss, std::hypot(l * sl, t * st) / b, kLinearRelTol);
  EXPECT_CLOSE(v.inclination_err_deg, std::hypot(l * st, t * sl) / (b * b) * 180.0 / M_PI, kLinearRelTol);
}

// The inclination error is a quarter of the angle spread over the 2-sigma ranges (the header); written out
// here with four separate atan2 calls, it must agree with the library's one-atan2-per-difference form,
// including the corners where a range reaches 0 (a point on an axis or at the origin).
TEST(FieldVector, InclinationSpreadMatchesTheFourAngleDefinition) {
  auto reference = [](double l, double sl, double t, double st) {
    const double lo = std::fabs(l), l_lo = std::max(lo - 2.0 * sl, 0.0), l_hi = lo + 2.0 * sl;
    const double t_lo = std::max(t - 2.0 * st, 0.0), t_hi = t + 2.0 * st;
    const double a = std::atan2(t_hi, lo) - std::atan2(t_lo, lo), b = std::atan2(t, l_lo) - std::atan2(t, l_hi);
    return 0.25 * std::hypot(a, b) * 180.0 / M_PI;
  };
  const double cases[][4] = {{300.0, 5.0, 400.0, 7.0},  {-300.0, 5.0, 400.0, 7.0}, {0.0, 5.0, 400.0, 7.0},
                             {300.0, 5.0, 0.0, 7.0},    {300.0, 200.0, 3.0, 7.0},  {0.0, 5.0, 3.0, 7.0},
                             {1e-3, 1e-4, 2e-3, 1e-4},  {2e3, 0.5, 1.0, 0.1},     {1e200, 1e199, 1e200, 1e199}};
  for (const auto& c : cases) {
    const FieldVector v = ComposeFieldVector(c[0], c[1], c[2], c[3], 0.0);
    EXPECT_CLOSE(v.inclination_err_deg, reference(c[0], c[1], c[2], c[3]), kSpreadRelTol)
        << c[0] << " " << c[1] << " " << c[2] << " " << c[3];
  }
}

}  // namespace
}  // namespace zeeline
