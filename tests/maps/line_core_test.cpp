// The line-core shape (line_core.hpp): the inverse of R(u) = ln(2 + u) / (1 + u) against roots found
// independently, and the saturation and width read back from the model profile the header derives them from.
#include <algorithm>
#include <cmath>
#include <vector>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/maps/line_core.hpp"

namespace zeeline {
namespace {

// Roots of ln(2 + u) / (1 + u) = R at 30 digits: mpmath 1.3 (Debian python3-mpmath), findroot with the
// 'anderson' solver on [1e-9, 1000], printed to 20 digits.
constexpr double kRootRelTol = 1e-13;  // the inverse is full precision (~1e-15); margin for the libm log
// Round trip u -> R(u) -> u: R is flat at large u (dR/du ~ -ln(u)/u^2), so a last-bit error in R(u) moves the
// root by ~1e-16 R / |R'| ~ 1e-13 (1 + u) at u = 1000.
constexpr double kRoundTripRelTol = 1e-12;
// The model profile on a grid of w/100: the parabola through +-4 samples misses the quartic term of the core
// (~(4h/w)^2) and the half-depth crossing is interpolated linearly. Measured: u within 2.4e-3, w within 3e-4,
// S0 within 1.3e-3 of the continuum (eta0 = 0.5, where S0 = I_min - depth/u amplifies the error of u); margin 4x.
constexpr double kModelRelTol = 1e-2;
constexpr double kSourceAbsTol = 5e-3;  // of the continuum S0 + S1

TEST(LineCore, SaturationInvertsTheCoreShapeRatioAtIndependentRoots) {
  const struct {
    double ratio, u;
  } kRoots[] = {{0.69, 0.016388371055760977117}, {0.6, 0.57900813602525266144}, {0.5, 1.512862417252339354},
                {0.3, 5.8818941751259617042},   {0.1, 35.149504270875306297},   {0.02, 281.33074654702778359},
                {0.0075, 907.36641457275144844}};
  for (const auto& r : kRoots) EXPECT_CLOSE(SaturationFromCoreShape(r.ratio), r.u, kRootRelTol) << "R = " << r.ratio;
}

TEST(LineCore, SaturationRoundTripsOverTheWholeRange) {
  for (double u = 1e-4; u < 1e3; u *= 1.07) {
    const double back = SaturationFromCoreShape(CoreShapeRatio(u));
    EXPECT_LE(std::fabs(back - u), kRoundTripRelTol * (1.0 + u)) << "u = " << u;
  }
}

TEST(LineCore, SaturationLimits) {
  EXPECT_EQ(SaturationFromCoreShape(std::log(2.0)), 0.0);  // optically thin: R(0) = ln 2
  EXPECT_EQ(SaturationFromCoreShape(0.9), 0.0);
  EXPECT_EQ(SaturationFromCoreShape(1e-6), 1e3);  // beyond the tabulated range: its end
  EXPECT_EQ(SaturationFromCoreShape(std::nan("")), 0.0);
}

// I(l) = S0 + S1 / (1 + eta0 exp(-(l - lc)^2 / w^2)) (the header's model): the core shape gives back eta0 and w.
TEST(LineCore, ModelProfileGivesBackItsOpacityAndWidth) {
  const double lc = 630.25, w = 0.004, s0 = 0.2, s1 = 0.8;
  const double h = w / 100.0;
  std::vector<double> wl, I;
  for (int i = -1500; i <= 1500; ++i) wl.push_back(lc + h * i);
  for (double eta0 : {0.5, 3.0, 20.0}) {
    I.clear();
    for (double l : wl) I.push_back(s0 + s1 / (1.0 + eta0 * std::exp(-(l - lc) * (l - lc) / (w * w))));
    PixelSpectrum s;
    s.wavelength_nm = wl.data();
    s.n = wl.size();
    s.I = I.data();
    const LineCoreShape c = MeasureLineCore(s, s0 + s1, lc, 0.0);
    ASSERT_TRUE(c.ok) << "eta0 = " << eta0;
    EXPECT_FALSE(c.emission);
    EXPECT_CLOSE(c.saturation, eta0, kModelRelTol) << "eta0 = " << eta0;
    EXPECT_CLOSE(c.doppler_width_nm, w, kModelRelTol) << "eta0 = " << eta0;
    EXPECT_CLOSE(c.surface_source, s0, 0.0, kSourceAbsTol * (s0 + s1)) << "eta0 = " << eta0;
  }
}

// A window found from a nearby start (MeasureLineCore's near_window) is the window, so the shape is the same
// bit for bit; a plateau of equal depths takes its first sample as the extremum (a line with a flat bottom).
TEST(LineCore, NearWindowGivesTheSameShapeAndFlatBottomTakesItsFirstSample) {
  const double lc = 630.25, w = 0.004, h = 0.001;
  std::vector<double> wl, I;
  for (int i = -30; i <= 30; ++i) wl.push_back(lc + h * i);
  for (double l : wl) I.push_back(0.2 + 0.8 / (1.0 + 5.0 * std::exp(-(l - lc - 0.0013) * (l - lc - 0.0013) / (w * w))));
  PixelSpectrum s;
  s.wavelength_nm = wl.data();
  s.n = wl.size();
  s.I = I.data();
  const LineCoreShape a = MeasureLineCore(s, 1.0, lc + 0.0013, 0.02);
  ASSERT_TRUE(a.ok);
  for (std::size_t b : {0, 5, 10, 30, 60})
    for (std::size_t e : {b, b + 3, std::size_t{61}}) {
      const LineCoreShape c = MeasureLineCore(s, 1.0, lc + 0.0013, 0.02, SampleRange{b, std::min<std::size_t>(e, 61)});
      EXPECT_EQ(c.saturation, a.saturation) << b << " " << e;
      EXPECT_EQ(c.doppler_width_nm, a.doppler_width_nm) << b << " " << e;
      EXPECT_EQ(c.extremum_nm, a.extremum_nm) << b << " " << e;
    }
  // Three equal minimum samples: the extremum is the first of them (the strict maximum of |Ic - I| from the blue).
  std::vector<double> flat = I;
  const std::size_t k = 31;
  flat[k - 1] = flat[k + 1] = flat[k] = *std::min_element(I.begin(), I.end());
  s.I = flat.data();
  EXPECT_EQ(MeasureLineCore(s, 1.0, lc, 0.02).extremum_nm, wl[k - 1]);
}

}  // namespace
}  // namespace zeeline
