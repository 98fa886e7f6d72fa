// |B|, inclination and their errors from B_LOS and B_T (field_vector.hpp).
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

}  // namespace
}  // namespace zeeline
