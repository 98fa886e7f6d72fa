// Weak-field transverse field on saturated lines: the second-derivative relation (LL04 eq. 9.83) holds only
// for weak lines or near the line centre, while the wing form (LL04 eq. 9.85, Q ∝ (λ−λc)⁻¹ dI/dλ) holds in
// the damping wings. Spectra come from the Milne–Eddington synthesis (src/synth), noiseless, so the
// numbers below are the methods' biases, measured on Fe I 630.15 nm (5P2–5D2), B = 150 G, γ = 90°.
#include <cmath>

#include <gtest/gtest.h>

#include "zeeline/maps/weak_field.hpp"
#include "maps/me_spectrum.hpp"

namespace zeeline {
namespace {

constexpr double kTruth = 150.0;
constexpr double kLine = 630.1501;
constexpr double kDoppler = 2.5e-3;

WeakFieldResult FitTransverse(double eta0, TransverseRegion region, double core, double wing_start) {
  MeParameters mp = testing::Atmosphere(kTruth, 90.0, 30.0, eta0);
  mp.doppler_width_nm = kDoppler;
  mp.damping = 0.3;
  mp.s0 = 0.2;
  mp.s1 = 0.8;
  const testing::MeSpectrum m = testing::SynthesizeMe("5P2", "5D2", kLine, 0.08, 321, mp);
  WeakFieldOptions o;
  o.rest_wavelength_nm = kLine;
  o.g_eff = m.pattern.g_eff;
  o.G = m.pattern.G;
  o.window_halfwidth_nm = 0.035;
  o.transverse = region;
  o.core_halfwidth_nm = core;
  o.wing_start_nm = wing_start;
  WeakFieldWorkspace work;
  return WeakFieldEstimate(m.View(), testing::NoiselessContinuum(m), o, work);
}

TEST(TransverseWeakField, WholeLineFitIsFineForAWeakLine) {
  const auto r = FitTransverse(0.5, TransverseRegion::kWholeLine, 0.0, 0.0);
  EXPECT_NEAR(r.btrans_gauss, kTruth, 0.03 * kTruth);
  EXPECT_NEAR(r.azimuth_deg, 30.0, 0.5);
}

TEST(TransverseWeakField, WholeLineFitIsBiasedForASaturatedLineAndTheWingFormIsNot) {
  // eta0 = 30: the naive whole-line fit loses most of the field (measured 38 G of 150 G) ...
  const auto naive = FitTransverse(30.0, TransverseRegion::kWholeLine, 0.0, 0.0);
  EXPECT_LT(naive.btrans_gauss, 0.5 * kTruth);
  // ... while the wing form beyond ~5 Doppler widths recovers it within 8 % (measured +3.5 %), and does
  // so whatever the line strength.
  for (double eta0 : {0.5, 5.0, 30.0}) {
    const auto wings = FitTransverse(eta0, TransverseRegion::kWings, 0.0, 4.8 * kDoppler);
    EXPECT_NEAR(wings.btrans_gauss, kTruth, 0.08 * kTruth) << "eta0 " << eta0;
    EXPECT_NEAR(wings.azimuth_deg, 30.0, 0.5) << "eta0 " << eta0;
  }
  // Near the centre of the saturated line (|dl| <= 0.6 Doppler widths) the core form is less biased than
  // the whole-line fit (measured 124 G).
  const auto core = FitTransverse(30.0, TransverseRegion::kCore, 0.6 * kDoppler, 0.0);
  EXPECT_GT(core.btrans_gauss, naive.btrans_gauss + 0.3 * kTruth);
}

}  // namespace
}  // namespace zeeline
