// Tests of measure/measurement: estimates side by side and their validity verdicts.
#include "zeeline/measure/measurement.hpp"

#include <cmath>

#include <gtest/gtest.h>

#include "measure/measure_test_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kRest = 630.2494;
constexpr double kSigmas = 3.0;
// The weak-field B_LOS of a saturated ME line is biased by a few per cent even in weak fields (the
// derivative relation is first order; LL04 sect. 9.6): allowed bias for the 200 G case.
constexpr double kWfaBiasRel = 0.05;

ZeemanPattern Fe6302() { return ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0")); }

MeasureOptions Options() {
  MeasureOptions o;
  o.rest_wavelength_nm = kRest;
  o.pattern = Fe6302();
  o.realisations = 50;
  return o;
}

// A Milne-Eddington atmosphere of Doppler width 3 pm and the given field and line strength.
MeParameters Atmosphere(double field_gauss, double inclination_deg, double eta0) {
  MeParameters p;
  p.field_gauss = field_gauss;
  p.inclination_deg = inclination_deg;
  p.doppler_width_nm = 0.003;
  p.eta0 = eta0;
  return p;
}

// The measurement of that atmosphere's spectrum (0.06 nm, 241 samples) with Gaussian noise.
Measurement MeasureAtmosphere(const MeParameters& p, double noise, unsigned seed) {
  return MeasureSpectrum(testing::MakeMeSpectrum(Fe6302(), kRest, {p}, {1.0}, 0.06, 241, noise, seed), Options());
}

TEST(Measurement, WeakFieldSpectrumValidatesWfaAndNotSplit) {
  // g_eff dlambda_B / Doppler width = 0.12, below kDefaultWeakRatio = 0.15
  MeParameters p = Atmosphere(80.0, 30.0, 6.0);
  p.vlos_kms = 0.5;
  const Measurement m = MeasureAtmosphere(p, 5e-4, 4);
  EXPECT_EQ(m.sense, LineSense::kAbsorption);
  const double blos = p.field_gauss * std::cos(p.inclination_deg * M_PI / 180.0);
  ASSERT_TRUE(m.wfa.available);
  EXPECT_TRUE(m.wfa.valid) << m.wfa.verdict;
  EXPECT_NEAR(m.wfa.blos_gauss.value, blos, kSigmas * m.wfa.blos_gauss.err + kWfaBiasRel * blos);
  ASSERT_TRUE(m.cog.available);
  EXPECT_TRUE(m.cog.valid);
  EXPECT_NEAR(m.cog.blos_gauss.value, blos, kSigmas * m.cog.blos_gauss.err + kWfaBiasRel * blos);
  EXPECT_NEAR(m.cog.vlos_kms.value, p.vlos_kms, kSigmas * m.cog.vlos_kms.err + 0.02);
  EXPECT_FALSE(m.split.valid) << m.split.verdict;
  EXPECT_NE(m.split.verdict.find("not resolved"), std::string::npos);
  EXPECT_LT(m.splitting_ratio, kDefaultWeakRatio);
  // The ME inversion describes this spectrum exactly (same model, no instrument profile).
  ASSERT_TRUE(m.me.available) << m.me.verdict;
  EXPECT_TRUE(m.me.valid) << m.me.verdict;
  EXPECT_NEAR(m.me.blos_gauss.value, blos, kSigmas * m.me.blos_gauss.err);
}

// A weak, inclined field (20 G at 60 deg): its linear polarisation, ~(C B_T)^2 G/4 times the line's second
// derivative (LL04 sect. 9.6), is ~1e-5 of the continuum, far below the noise of 1e-3. Both the weak-field
// and the Milne-Eddington verdicts say so, as `map` flags LOW_TRANSVERSE; a 1 kG field at 60 deg is detected.
TEST(Measurement, UndetectedLinearPolarisationIsNoted) {
  for (double field : {20.0, 1000.0}) {
    MeParameters p = Atmosphere(field, 60.0, 6.0);
    p.azimuth_deg = 30.0;
    const Measurement m = MeasureAtmosphere(p, 1e-3, 6);
    const bool weak = field < 100.0;
    ASSERT_TRUE(m.wfa.available && m.me.available) << m.me.verdict;
    EXPECT_EQ(m.me.verdict.find("linear polarisation not detected") != std::string::npos, weak) << m.me.verdict;
    if (weak) EXPECT_NE(m.wfa.verdict.find("linear polarisation not detected"), std::string::npos) << m.wfa.verdict;
  }
}

TEST(Measurement, StrongFieldSpectrumValidatesSplitAndNotWfa) {
  // Longitudinal: COG is exact for a longitudinal field at any strength and saturation.
  const MeParameters p = Atmosphere(3000.0, 0.0, 3.0);
  const Measurement m = MeasureAtmosphere(p, 5e-4, 5);
  EXPECT_FALSE(m.wfa.valid) << m.wfa.verdict;
  EXPECT_NE(m.wfa.verdict.find("outside validity"), std::string::npos);
  EXPECT_TRUE(m.split.valid) << m.split.verdict;
  // The component fit of a saturated line is not exact (ME profiles are not Voigt sums): 3 % of B.
  EXPECT_NEAR(m.split.field_gauss.value, p.field_gauss, kSigmas * m.split.field_gauss.err + 0.03 * p.field_gauss);
  // COG holds at any strength: B_LOS = B cos(gamma) (Rees & Semel 1979). (For inclined fields in
  // saturated lines the pi component leaks into I +- V and biases it; not tested here.)
  const double blos = p.field_gauss * std::cos(p.inclination_deg * M_PI / 180.0);
  EXPECT_NEAR(m.cog.blos_gauss.value, blos, kSigmas * m.cog.blos_gauss.err + 0.01 * blos);
  EXPECT_GT(m.splitting_ratio, 1.0);
  ASSERT_TRUE(m.me.available) << m.me.verdict;
  EXPECT_NEAR(m.me.field_gauss.value, p.field_gauss, kSigmas * m.me.field_gauss.err);
}

TEST(Measurement, LampEmissionIsDetectedAndMeasured) {
  testing::LampLine t;
  t.inclination_deg = 45.0;
  t.noise = 3.0;
  const ZeemanPattern p = ComputeZeemanPattern(2, 1.0, 4, 1.0);
  const Spectrum1D s = testing::MakeLampSpectrum(t, p, 0.06, 241);
  MeasureOptions o;
  o.rest_wavelength_nm = t.rest_nm;
  o.pattern = p;
  o.instrument_fwhm_nm = t.instrument_fwhm_nm;
  o.realisations = 50;
  const Measurement m = MeasureSpectrum(s, o);
  EXPECT_EQ(m.sense, LineSense::kEmission);
  EXPECT_TRUE(m.split.valid);
  EXPECT_NEAR(m.split.field_gauss.value, t.field_gauss, kSigmas * m.split.field_gauss.err);
  // Emission, field toward the observer: V < 0 in the blue wing (docs/conventions.md); COG B_LOS = B cos g.
  EXPECT_LT(m.characteristics.v_blue_amplitude.value, 0.0);
  const double blos = t.field_gauss * std::cos(t.inclination_deg * M_PI / 180.0);
  EXPECT_NEAR(m.cog.blos_gauss.value, blos, kSigmas * m.cog.blos_gauss.err);
  EXPECT_FALSE(m.me.available);  // emission: outside the ME model
}

TEST(Measurement, RestWavelengthOutsideTheSpectrumIsAnError) {
  MeParameters p;
  const Spectrum1D s = testing::MakeMeSpectrum(Fe6302(), kRest, {p}, {1.0}, 0.06, 241, 0.0, 1);
  MeasureOptions o = Options();
  o.rest_wavelength_nm = 525.0;
  try {
    MeasureSpectrum(s, o);
    FAIL() << "no error";
  } catch (const SpectrumError& e) {
    EXPECT_NE(std::string(e.what()).find("outside the spectrum"), std::string::npos);
  }
  o = Options();
  o.pattern.g_eff = 0.0;
  EXPECT_THROW(MeasureSpectrum(s, o), OptionError);
}

}  // namespace
}  // namespace zeeline

namespace zeeline {
namespace {

// A saturated line (eta0 = 9) in a 479 G field at 30 deg: the sigma groups are not resolved, but a flat,
// Zeeman-widened core can be fitted by split Gaussians (once reported "valid: resolved" at 884 G). The
// verdicts must follow from the printed numbers: no split claims validity, wfa is outside its regime, and the
// ME inversion recovers the field (the spectrum is its own model).
TEST(Measurement, SaturatedIntermediateFieldIsNotCalledResolved) {
  MeParameters p;
  p.field_gauss = 479.0;
  p.inclination_deg = 30.0;
  p.azimuth_deg = 30.0;
  p.doppler_width_nm = 0.0026;
  p.damping = 0.15;
  p.eta0 = 9.0;
  p.s0 = 0.25;
  p.s1 = 0.75;
  const Spectrum1D s = testing::MakeMeSpectrum(Fe6302(), kRest, {p}, {1.0}, 0.06, 96, 1e-3, 5);
  const Measurement m = MeasureSpectrum(s, Options());
  EXPECT_FALSE(m.wfa.valid) << m.wfa.verdict;
  EXPECT_FALSE(m.split.valid) << m.split.verdict;
  EXPECT_FALSE(m.split_3gauss.valid) << m.split_3gauss.verdict;
  // A "not resolved" verdict never states a ratio on the resolved side with "<".
  for (const MethodEstimate* e : {&m.split, &m.split_3gauss}) {
    const auto pos = e->verdict.find(" < resolution ratio");
    if (pos != std::string::npos) {
      const auto eq = e->verdict.rfind("= ", pos);
      const auto ratio_pos = e->verdict.rfind(' ', pos - 1);
      const double shown = std::stod(e->verdict.substr(ratio_pos + 1, pos - ratio_pos - 1));
      EXPECT_LT(shown, 1.0) << e->verdict << " (" << eq << ")";
    }
  }
  ASSERT_TRUE(m.me.valid) << m.me.verdict;
  EXPECT_NEAR(m.me.field_gauss.value, p.field_gauss, 0.03 * p.field_gauss);
}

}  // namespace
}  // namespace zeeline
