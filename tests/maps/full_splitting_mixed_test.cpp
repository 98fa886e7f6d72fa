// The split estimator beyond the linear regime: |B| from the sigma half separation of a D1-like doublet line
// whose positions follow the closed form of the 2P doublet (incomplete Paschen–Back effect).
#include <cmath>
#include <cstdio>
#include <memory>
#include <random>

#include <gtest/gtest.h>

#include "maps/thin_line_model.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/maps/full_splitting.hpp"

namespace zeeline {
namespace {

constexpr double kNoise = 1e-3;  // of the continuum
// mu_B / (h c) per gauss in cm^-1 (CODATA 2018 via scipy.constants: 46.686447783 m^-1 T^-1).
constexpr double kMuB_cm1_per_G = 4.6686447783e-5;

// 2P doublet, g_s = 2, M = +-1/2 blocks: E_+-(M) = E_c - A/4 + x M +- (1/2) sqrt(A^2 (3/2)^2 + 2 A x M + x^2)
// (Bethe & Salpeter 1957, sect. 47; from memory). D1 = 2S1/2 -> 2P1/2 (the lower root); 2S1/2 moves by 2 x M.
double D1HalfSeparation(double A, double field_gauss) {
  const double x = kMuB_cm1_per_G * field_gauss;
  auto lower_root = [&](double M) { return -0.25 * A + x * M - 0.5 * std::sqrt(2.25 * A * A + 2.0 * A * x * M + x * x); };
  const double e_level = -A;                                       // 2P1/2 relative to the centroid
  const double shift_b = -((lower_root(0.5) - e_level) + x) / x;   // M_u = 1/2 -> M_l = -1/2
  const double shift_r = -((lower_root(-0.5) - e_level) - x) / x;  // M_u = -1/2 -> M_l = 1/2
  return 0.5 * (shift_r - shift_b);
}

TEST(FullSplittingMixedRegime, RecoversTheFieldOfADoubletLineFromTheClosedForm) {
  // Invented lamp line at 500 nm with a 2 cm^-1 doublet interval (linear breakdown ~ 2.3 T), at 2 T: the
  // sigma groups are single lines, placed symmetrically at +-s C B with s from the closed form; the linear
  // estimate s / (g_eff C) would be biased by s / g_eff - 1.
  const double interval = 2.0, A = 2.0 * interval / 3.0, field = 2e4, rest = 500.0;
  const double s = D1HalfSeparation(A, field);
  ZeemanPattern p;
  p.g_eff = 4.0 / 3.0;
  p.components = {{0.5, -0.5, -1, -s, 1.0}, {0.5, 0.5, 0, 0.0, 1.0}, {-0.5, 0.5, 1, s, 1.0}};
  testing::ThinLine t;
  t.rest_nm = rest;
  t.field_gauss = field;
  t.inclination_deg = 90.0;
  t.width_nm = 0.002;
  t.depth = -5.0;  // emission
  std::mt19937_64 rng(11);
  auto spec = testing::MakeThinLine(t, p, testing::Grid(rest, 0.12, 481));
  testing::AddNoise(spec, kNoise, rng);
  const ContinuumEstimate noise =
      EstimateContinuum(spec.View(), ContinuumSamples(spec.wl.data(), spec.wl.size(), rest, 0.06), kNoise);

  LandeOptions textbook;
  textbook.g_spin = 2.0;
  const PaschenBackLine line =
      MakePaschenBackLine(ParseLevel("2S1/2"), {}, ParseLevel("2P1/2"), {{1, 0.0}, {3, interval}}, textbook);
  SplittingOptions o;
  o.rest_wavelength_nm = rest;
  o.g_eff = p.g_eff;
  o.window_halfwidth_nm = 0.08;
  const SplittingResult linear = FullSplittingEstimate(spec.View(), noise, o);
  o.mixed_regime = std::make_shared<const SigmaSplittingTable>(line);
  o.mixed_from_gauss = 0.1 * LinearBreakdownField_gauss(line);
  const SplittingResult mixed = FullSplittingEstimate(spec.View(), noise, o);
  ASSERT_TRUE(mixed.ok);
  EXPECT_TRUE(mixed.mixed_regime);
  EXPECT_LT(std::fabs(mixed.field_gauss - field), 4.0 * mixed.field_err_gauss) << mixed.field_gauss << " +- "
                                                                                 << mixed.field_err_gauss;
  // The linear answer is off by the ratio of the half separations (a bias far beyond its error).
  EXPECT_NEAR(linear.field_gauss / field, s / p.g_eff, 4.0 * linear.field_err_gauss / field);
  EXPECT_GT(std::fabs(linear.field_gauss - field), 20.0 * linear.field_err_gauss);
  std::printf("[ mixed-regime split ] 2 T injected: mixed %.1f +- %.2g G, linear %.1f +- %.2g G\n", mixed.field_gauss,
              mixed.field_err_gauss, linear.field_gauss, linear.field_err_gauss);
}

}  // namespace
}  // namespace zeeline
