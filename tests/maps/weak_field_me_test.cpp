// Weak-field B_LOS on Milne–Eddington spectra (src/synth): the reported uncertainty is calibrated.
// Over 300 noise realisations (noise 1e-3 of the continuum, measured per spectrum from the continuum
// samples as the map runner does) the pull (estimate - truth)/sigma has a standard deviation within
// 0.8-1.25 (the requirement for WFA B_LOS maps) and a mean within +-0.25.
// The ME line (Fe I 630.25 nm, eta0 = 9, damping 0.15, 40 G at 30 deg) is saturated, which the weak-field
// relation V = -C g_eff B_LOS dI/dl tolerates at first order (LL04 sect. 9.6).
#include <cmath>
#include <random>

#include <gtest/gtest.h>

#include "zeeline/maps/weak_field.hpp"
#include "maps/me_spectrum.hpp"

namespace zeeline {
namespace {

TEST(WeakFieldOnMilneEddington, BlosPullWidthIsCalibrated) {
  const int n = 96;
  const testing::MeSpectrum clean =
      testing::SynthesizeMe("5P1", "5D0", 630.2494, 0.06, n, testing::Atmosphere(40.0, 30.0, 20.0, 9.0));
  const ZeemanPattern& p = clean.pattern;
  const double truth = 40.0 * std::cos(30.0 * constants::kPi / 180.0);

  std::vector<double> wl = clean.wl, I(n), Q(n), U(n), V(n);
  WeakFieldOptions o;
  o.rest_wavelength_nm = 630.2494;
  o.g_eff = p.g_eff;
  o.G = p.G;
  o.window_halfwidth_nm = 0.012;
  const auto continuum = ContinuumSamples(wl.data(), n, 630.2494, o.window_halfwidth_nm);
  WeakFieldWorkspace work;
  std::mt19937_64 rng(42);
  std::normal_distribution<double> gauss(0.0, 1e-3);
  double s1 = 0.0, s2 = 0.0;
  const int realisations = 300;
  for (int k = 0; k < realisations; ++k) {
    for (int i = 0; i < n; ++i) {
      I[i] = clean.I[i] + gauss(rng);
      Q[i] = clean.Q[i] + gauss(rng);
      U[i] = clean.U[i] + gauss(rng);
      V[i] = clean.V[i] + gauss(rng);
    }
    const PixelSpectrum s{wl.data(), wl.size(), I.data(), Q.data(), U.data(), V.data()};
    const WeakFieldResult r = WeakFieldEstimate(s, EstimateContinuum(s, continuum), o, work);
    ASSERT_TRUE(r.has_blos);
    const double pull = (r.blos_gauss - truth) / r.blos_err_gauss;
    s1 += pull;
    s2 += pull * pull;
  }
  const double mean = s1 / realisations, sd = std::sqrt(s2 / realisations - mean * mean);
  EXPECT_GT(sd, 0.8);
  EXPECT_LT(sd, 1.25);
  EXPECT_LT(std::fabs(mean), 0.25);
}

}  // namespace
}  // namespace zeeline
