// Tests of measure/component_fit: Zeeman components of Stokes I with known truth.
#include "zeeline/measure/component_fit.hpp"

#include <cmath>
#include <vector>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "measure/measure_test_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

using testing::LampLine;
using testing::MakeLampSpectrum;

// "Within the reported uncertainties": 3 sigma (a fixed seed; a 3-sigma miss has probability 0.3 %).
constexpr double kSigmas = 3.0;
// Textbook Cd I 643.847 nm (1P1 - 1D2, normal triplet) splitting in 1 T: 0.0194 nm (from memory; common
// lab value), quoted to 3 digits.
constexpr double kCdSplitting1T_nm = 0.0194;
constexpr double kTextbookDigitsTol_nm = 0.00006;
// Lorentz unit from docs/conventions.md / LL04 eq. 3.8: 4.6686e-13 lambda[A]^2 B[G] A (an outside value,
// not the library's constant).
double LorentzLL04_nm(double lambda_nm, double b_gauss) {
  const double lambda_A = lambda_nm * 10.0;
  return 4.6686e-13 * lambda_A * lambda_A * b_gauss * 0.1;
}

ZeemanPattern CdPattern() { return ComputeZeemanPattern(2, 1.0, 4, 1.0); }  // 1P1 (g 1) -> 1D2 (g 1)
ZeemanPattern NaD1Pattern() { return ComputeZeemanPattern(1, 2.0, 1, 2.0 / 3.0); }  // 2S1/2 -> 2P1/2, gs = 2

ComponentFitOptions LampOptions(const LampLine& t, const ZeemanPattern& p) {
  ComponentFitOptions o;
  o.rest_wavelength_nm = t.rest_nm;
  o.pattern = p;
  o.instrument_fwhm_nm = t.instrument_fwhm_nm;
  return o;
}

TEST(ComponentFit, CadmiumNormalTripletInOneTeslaGivesTextbookPositions) {
  LampLine t;
  t.noise = 5.0;
  const ZeemanPattern p = CdPattern();
  const Spectrum1D s = MakeLampSpectrum(t, p, 0.06, 241);
  const ComponentFitResult r = FitZeemanComponents(s.View(), t.noise, LampOptions(t, p));
  ASSERT_TRUE(r.ok) << r.message;
  ASSERT_EQ(r.components.size(), 3u);
  const double dlb = LorentzLL04_nm(t.rest_nm, t.field_gauss);
  EXPECT_NEAR(dlb, kCdSplitting1T_nm, kTextbookDigitsTol_nm);  // the outside formula matches the lab value
  const double expected[3] = {-dlb, 0.0, dlb};  // sigma_b, pi, sigma_r (g_eff = 1)
  for (int k = 0; k < 3; ++k) {
    EXPECT_NEAR(r.components[k].position_nm - t.rest_nm, expected[k], kSigmas * r.components[k].position_err_nm)
        << r.components[k].label;
    EXPECT_GT(r.components[k].position_err_nm, 0.0);
    EXPECT_LT(r.components[k].position_err_nm, 2e-5);
  }
  EXPECT_NEAR(r.sigma_separation_nm, 2.0 * kCdSplitting1T_nm, 2.0 * kTextbookDigitsTol_nm);
  EXPECT_NEAR(r.field_gauss, t.field_gauss, kSigmas * r.field_err_gauss);
  EXPECT_TRUE(r.resolved);
  // Transverse view: pi carries half the emission, each sigma group a quarter (thin-line emission).
  EXPECT_NEAR(r.components[1].area, t.area / 2, kSigmas * r.components[1].area_err);
  EXPECT_NEAR(r.components[0].area, t.area / 4, kSigmas * r.components[0].area_err);
  EXPECT_NEAR(r.doppler_width_nm, t.doppler_width_nm, kSigmas * r.doppler_width_err_nm + 2e-5);
  EXPECT_NEAR(r.chi2_reduced, 1.0, 0.3);
}

TEST(ComponentFit, FieldErrorsMatchTheScatterOverNoiseRealisations) {
  // Pull distribution over independent noise draws: rms((B - B_true) / sigma_B) should be ~1.
  const ZeemanPattern p = CdPattern();
  double sum2 = 0.0;
  const int draws = 16;
  for (int k = 0; k < draws; ++k) {
    LampLine t;
    t.noise = 5.0;
    t.seed = 100 + k;
    const Spectrum1D s = MakeLampSpectrum(t, p, 0.06, 241);
    const ComponentFitResult r = FitZeemanComponents(s.View(), t.noise, LampOptions(t, p));
    ASSERT_TRUE(r.ok);
    const double pull = (r.field_gauss - t.field_gauss) / r.field_err_gauss;
    sum2 += pull * pull;
  }
  const double rms = std::sqrt(sum2 / draws);
  // For 16 draws the rms of unit-variance pulls lies in [0.6, 1.4] with > 99 % probability (chi2, 16 dof).
  EXPECT_GT(rms, 0.6);
  EXPECT_LT(rms, 1.4);
}

TEST(ComponentFit, SodiumD1AnomalousPatternIsFittedWithItsFourComponents) {
  // Na I D1 2S1/2 - 2P1/2 with textbook g (2, 2/3): pi at +-2/3, sigma at +-4/3 Lorentz units
  // (e.g. Condon & Shortley; any atomic physics text, from memory).
  LampLine t;
  t.rest_nm = 589.592;
  t.field_gauss = 2e4;
  t.doppler_width_nm = 0.00118;
  t.noise = 5.0;
  t.inclination_deg = 90.0;
  const ZeemanPattern p = NaD1Pattern();
  ASSERT_EQ(p.components.size(), 4u);
  const Spectrum1D s = MakeLampSpectrum(t, p, 0.09, 361);
  const ComponentFitResult r = FitZeemanComponents(s.View(), t.noise, LampOptions(t, p));
  ASSERT_TRUE(r.ok) << r.message;
  EXPECT_NEAR(r.field_gauss, t.field_gauss, kSigmas * r.field_err_gauss);
  ASSERT_EQ(r.lines.size(), 4u);
  const double dlb = LorentzLL04_nm(t.rest_nm, t.field_gauss);
  const double textbook[4] = {-4.0 / 3.0, -2.0 / 3.0, 2.0 / 3.0, 4.0 / 3.0};
  std::vector<double> placed;
  for (const auto& l : r.lines) placed.push_back(l.position_nm - t.rest_nm);
  std::sort(placed.begin(), placed.end());
  for (int k = 0; k < 4; ++k) EXPECT_NEAR(placed[k], textbook[k] * dlb, 3e-5) << k;
  EXPECT_TRUE(r.resolved);
  EXPECT_NEAR(r.chi2_reduced, 1.0, 0.3);

  // Free fit with four components finds the same structure: outer / inner separation = 2.
  ComponentFitOptions free = LampOptions(t, p);
  free.free_components = 4;
  const ComponentFitResult f = FitZeemanComponents(s.View(), t.noise, free);
  ASSERT_TRUE(f.ok) << f.message;
  ASSERT_EQ(f.components.size(), 4u);
  for (int k = 0; k < 4; ++k)
    EXPECT_NEAR(f.components[k].position_nm - t.rest_nm, textbook[k] * dlb, kSigmas * f.components[k].position_err_nm)
        << k;
  const double ratio = (f.components[3].position_nm - f.components[0].position_nm) /
                       (f.components[2].position_nm - f.components[1].position_nm);
  EXPECT_NEAR(ratio, 2.0, 0.01);
}

TEST(ComponentFit, NormalTripletWithWrongPatternFitsWorse) {
  // The structure matters: the Na D1 spectrum fitted as a normal triplet leaves large residuals.
  LampLine t;
  t.rest_nm = 589.592;
  t.field_gauss = 2e4;
  t.doppler_width_nm = 0.00118;
  t.noise = 5.0;
  const Spectrum1D s = MakeLampSpectrum(t, NaD1Pattern(), 0.09, 361);
  const ComponentFitResult r = FitZeemanComponents(s.View(), t.noise, LampOptions(t, CdPattern()));
  ASSERT_TRUE(r.ok);
  EXPECT_GT(r.chi2_reduced, 5.0);
}

TEST(ComponentFit, FreeThreeComponentsRecoverTheCadmiumTriplet) {
  LampLine t;
  t.noise = 5.0;
  t.seed = 7;
  const Spectrum1D s = MakeLampSpectrum(t, CdPattern(), 0.06, 241);
  ComponentFitOptions o = LampOptions(t, CdPattern());
  o.free_components = 3;
  const ComponentFitResult r = FitZeemanComponents(s.View(), t.noise, o);
  ASSERT_TRUE(r.ok) << r.message;
  EXPECT_FALSE(r.pattern_mode);
  EXPECT_NEAR(r.field_gauss, t.field_gauss, kSigmas * r.field_err_gauss);
  EXPECT_NEAR(r.components[1].position_nm, t.rest_nm, kSigmas * r.components[1].position_err_nm);
}

TEST(ComponentFit, MilneEddingtonAbsorptionLineResolvedInLongitudinalField) {
  // Fe I 630.25 nm (5P1 - 5D0, g_eff 2.5) in 3 kG along the line of sight: only the sigma groups show in I.
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  MeParameters me;
  me.field_gauss = 3000.0;
  me.inclination_deg = 0.0;
  me.vlos_kms = 0.8;
  me.doppler_width_nm = 0.003;
  me.damping = 0.05;
  me.eta0 = 0.5;
  const Spectrum1D s = testing::MakeMeSpectrum(p, 630.2494, {me}, {1.0}, 0.06, 241, 1e-3, 3);
  ComponentFitOptions o;
  o.rest_wavelength_nm = 630.2494;
  o.pattern = p;
  const ComponentFitResult r = FitZeemanComponents(s.View(), 1e-3, o);
  ASSERT_TRUE(r.ok) << r.message;
  EXPECT_TRUE(r.resolved);
  EXPECT_NEAR(r.field_gauss, me.field_gauss, kSigmas * r.field_err_gauss);
  EXPECT_NEAR(r.vlos_kms, me.vlos_kms, kSigmas * r.vlos_err_kms);
  EXPECT_LT(r.components[0].area, 0.0);  // absorption
  EXPECT_NEAR(r.components[1].area, 0.0, kSigmas * r.components[1].area_err);  // no pi for gamma = 0
}

TEST(ComponentFit, UnresolvedLineIsFlagged) {
  LampLine t;
  t.field_gauss = 500.0;  // 1 pm splitting against a 2.2 pm wide component
  t.noise = 5.0;
  const Spectrum1D s = MakeLampSpectrum(t, CdPattern(), 0.06, 241);
  const ComponentFitResult r = FitZeemanComponents(s.View(), t.noise, LampOptions(t, CdPattern()));
  ASSERT_TRUE(r.ok);
  EXPECT_FALSE(r.resolved);
}

TEST(ComponentFit, InvalidOptionsNameTheField) {
  ComponentFitOptions o;
  o.rest_wavelength_nm = 500.0;
  o.pattern = CdPattern();
  o.instrument_fwhm_nm = -1.0;
  EXPECT_NE(o.Validate().find("instrument_fwhm_nm"), std::string::npos);
  o.instrument_fwhm_nm = 0.0;
  o.free_components = 40;
  EXPECT_NE(o.Validate().find("free_components"), std::string::npos);
  Spectrum1D s;
  EXPECT_THROW(FitZeemanComponents(s.View(), 1.0, o), OptionError);
}

}  // namespace
}  // namespace zeeline
