// Broadening mechanisms against published values, scipy.constants / scipy.special.wofz (run at test time
// with /usr/bin/python3) and scaling laws.
#include <algorithm>
#include <cmath>
#include <string>

#include <gtest/gtest.h>

#include "broadening/python_reference.hpp"
#include "common/expect_close.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/broadening/broadening_budget.hpp"
#include "zeeline/broadening/doppler_width.hpp"
#include "zeeline/broadening/inglis_teller.hpp"
#include "zeeline/broadening/natural_width.hpp"
#include "zeeline/broadening/pressure_width.hpp"
#include "zeeline/broadening/resonance_width.hpp"
#include "zeeline/broadening/stark_hydrogen.hpp"
#include "zeeline/broadening/voigt_fwhm.hpp"
#include "zeeline/broadening/zeeman_width.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline {
namespace {

using testing::PythonNumbers;

constexpr double kScipyRelTol = 1e-9;     // same formula, CODATA 2018 constants both sides
constexpr double kScalingRelTol = 1e-12;  // exact power laws, rounding only
// The numerical Voigt FWHM bisects to 1e-13; scipy's brentq below to xtol 1e-14 on wofz (~1e-13 accurate).
constexpr double kNumericalFwhmRelTol = 1e-9;

TEST(DopplerWidth, BalmerAlphaAt10000KIsAbout0047nm) {
  // H-alpha (656.28 nm), T = 1e4 K: FWHM ~ 0.047 nm (common practice).
  const LineWidth w = DopplerBroadening(656.28, 1e4, 1.00794, 0.0);
  EXPECT_NEAR(w.fwhm_nm, 0.047, 0.0005);
  EXPECT_EQ(w.profile, ProfileKind::kGaussian);
}

TEST(DopplerWidth, MatchesTheFormulaWithScipyConstants) {
  // FWHM = 2 sqrt(ln2) lambda/c sqrt(2kT/m + xi^2), scipy.constants (CODATA 2018).
  const auto ref = PythonNumbers(
      "import math, scipy.constants as c\n"
      "for lam, T, m, xi in [(656.28, 1e4, 1.00794, 0.0), (667.815, 3e4, 4.0026, 2.0), (500.0, 300.0, 200.59, 0.5)]:\n"
      "    print(repr(2*math.sqrt(math.log(2)) * lam / c.c * math.sqrt(2*c.k*T/(m*c.atomic_mass) + (xi*1e3)**2)))\n");
  ASSERT_EQ(ref.size(), 3u) << "python with scipy failed";
  EXPECT_CLOSE(DopplerBroadening(656.28, 1e4, 1.00794, 0.0).fwhm_nm, ref[0], kScipyRelTol);
  EXPECT_CLOSE(DopplerBroadening(667.815, 3e4, 4.0026, 2.0).fwhm_nm, ref[1], kScipyRelTol);
  EXPECT_CLOSE(DopplerBroadening(500.0, 300.0, 200.59, 0.5).fwhm_nm, ref[2], kScipyRelTol);
}

TEST(DopplerWidth, TemperatureInvertsTheSpeed) {
  const double u = DopplerSpeed_kms(23456.0, 4.0026, 1.2);
  EXPECT_CLOSE(TemperatureFromDopplerSpeed_K(u, 4.0026, 1.2), 23456.0, 1e-12);
}

TEST(PressureWidth, ImpactWidthMatchesScipyConstants) {
  // n = P/kT, v = sqrt(8kT/(pi mu)), FWHM_nu = n d^2 v (= n pi d^2 v / pi), scipy.constants.
  const auto ref = PythonNumbers(
      "import math, scipy.constants as c\n"
      "P, T, m1, m2, d, lam = 5e4, 2500.0, 22.99, 39.948, 0.5e-9, 589.0e-9\n"
      "mu = m1*m2/(m1+m2)*c.atomic_mass\n"
      "nu = P/(c.k*T) * math.pi*d*d * math.sqrt(8*c.k*T/(math.pi*mu)) / math.pi\n"
      "print(repr(nu)); print(repr(lam*lam*nu/c.c*1e9))\n");
  ASSERT_EQ(ref.size(), 2u);
  const ImpactCollisions c = HardSphereCollisions(5e4, 2500.0, 22.99, 39.948, 0.5);
  EXPECT_CLOSE(c.fwhm_hz, ref[0], kScipyRelTol);
  EXPECT_CLOSE(PressureBroadening(589.0, 5e4, 2500.0, 22.99, 39.948, 0.5).fwhm_nm, ref[1], kScipyRelTol);
}

TEST(PressureWidth, ScalesAsPressureAndInverseRootTemperatureAtFixedPressure) {
  const double base = HardSphereCollisions(1e4, 1000.0, 40.0, 40.0, 0.36).fwhm_hz;
  EXPECT_CLOSE(HardSphereCollisions(3e4, 1000.0, 40.0, 40.0, 0.36).fwhm_hz, 3.0 * base, kScalingRelTol);
  EXPECT_CLOSE(HardSphereCollisions(1e4, 4000.0, 40.0, 40.0, 0.36).fwhm_hz, 0.5 * base, kScalingRelTol);
}

TEST(PressureWidth, ReportsTheValidityTests) {
  // Atmospheric argon: n pi d^3 ~ 1e-3, mean free path ~ 0.1 um > lambda/2pi ~ 0.09 um (orders from memory).
  const LineWidth w = PressureBroadening(600.0, 101325.0, 300.0, 40.0, 40.0, 0.36);
  ASSERT_EQ(w.notes.size(), 3u);
  EXPECT_NE(w.notes[0].find("ok"), std::string::npos) << w.notes[0];
  const LineWidth dense = PressureBroadening(600.0, 2e8, 300.0, 40.0, 40.0, 0.36);
  EXPECT_NE(dense.notes[0].find("NOT"), std::string::npos) << dense.notes[0];
  EXPECT_NE(dense.notes[1].find("Dicke narrowing:"), std::string::npos) << dense.notes[1];
}

TEST(NaturalWidth, SodiumD2IsAbout9point8MHz) {
  // A = 6.16e7 s^-1 (demo_maps/lines.csv), ground lower level: 9.8 MHz (common practice).
  const LineWidth w = NaturalWidth(588.995, 6.16e7, 0.0);
  EXPECT_NEAR(w.fwhm_hz, 9.80e6, 0.02e6);
  EXPECT_EQ(w.profile, ProfileKind::kLorentzian);
}

TEST(ResonanceWidth, RubidiumD2CoefficientIsAbout1e7HzCm3) {
  // Rb D2: 780.24 nm, f = 0.695, g_l = 2, g_u = 4: 1.03e-7 Hz cm^3 (Weller et al. 2011; from memory).
  EXPECT_NEAR(ResonanceWidth_hz(780.241, 1.0, 0.695, 2.0, 4.0), 1.03e-7, 0.03e-7);
}

TEST(ResonanceWidth, ProportionalToDensityAndStrengthAndInverseFrequency) {
  const double base = ResonanceWidth_hz(500.0, 1e14, 0.5, 1.0, 3.0);
  EXPECT_CLOSE(ResonanceWidth_hz(500.0, 3e14, 0.5, 1.0, 3.0), 3.0 * base, kScalingRelTol);
  EXPECT_CLOSE(ResonanceWidth_hz(500.0, 1e14, 1.0, 1.0, 3.0), 2.0 * base, kScalingRelTol);
  EXPECT_CLOSE(ResonanceWidth_hz(1000.0, 1e14, 0.5, 1.0, 3.0), 2.0 * base, kScalingRelTol);  // 1/nu
}

TEST(StarkHydrogen, ScalesAsDensityToTwoThirds) {
  const double base = LinearStarkWidth_hz(1e15, 3, 2);
  EXPECT_CLOSE(LinearStarkWidth_hz(8e15, 3, 2), 4.0 * base, kScalingRelTol);
  EXPECT_CLOSE(LinearStarkWidth_hz(1e18, 3, 2), 100.0 * base, 1e-11);
}

TEST(StarkHydrogen, HoltsmarkNormalFieldConstantIs2point603) {
  // F0 = 2.603 e N^(2/3) / (4 pi eps0) (Holtsmark 1919; Griem 1974; from memory), with scipy.constants.
  const auto ref = PythonNumbers(
      "import math, scipy.constants as c\nprint(repr(2.603*c.e*(1e21)**(2/3)/(4*math.pi*c.epsilon_0)))\n");
  ASSERT_EQ(ref.size(), 1u);
  EXPECT_CLOSE(HoltsmarkNormalField_V_m(1e15), ref[0], 2e-4);  // 2.603 is rounded to 4 digits
}

TEST(StarkHydrogen, BalmerAlphaAt1e17IsOfOrderOneNanometre) {
  // Tabulated H-alpha FWHM at n_e = 1e17 cm^-3 is about 1 nm (Griem 1974; from memory): the estimate must be
  // within its stated factor of ~3.
  const double fwhm_nm = StarkBroadening(656.28, 1e17, 3, 2).fwhm_nm;
  EXPECT_GT(fwhm_nm, 1.0 / 3.0);
  EXPECT_LT(fwhm_nm, 3.0);
}

TEST(InglisTeller, PublishedFormWorkedValue) {
  // log10 N = 23.26 - 7.5 log10 n_m (Inglis & Teller 1939): n_m = 10 -> 10^15.76 cm^-3.
  EXPECT_CLOSE(InglisTellerDensity_cm3(10.0), std::pow(10.0, 15.76), 1e-12);
  // n_m = 20 -> 10^(23.26 - 7.5 * 1.30103) = 3.18e13 cm^-3 (worked by hand).
  EXPECT_CLOSE(InglisTellerDensity_cm3(20.0), 3.18e13, 2e-3);
  EXPECT_CLOSE(InglisTellerLastResolved(InglisTellerDensity_cm3(13.0)), 13.0, 1e-12);
}

TEST(VoigtFwhm, OliveroLongbothumAgreesWithScipyWofzWithinItsStatedAccuracy) {
  // Numerical FWHM of Re wofz((x + i f_L/2)/(sqrt2 sigma)) by brentq (scipy.special.wofz, scipy.optimize).
  const auto ref = PythonNumbers(
      "import math\nfrom scipy.special import wofz\nfrom scipy.optimize import brentq\n"
      "for fl in [0.0, 0.1, 0.29, 0.5, 1.0, 2.0, 5.0, 20.0]:\n"
      "    fg = 1.0; s = fg/(2*math.sqrt(2*math.log(2))); g = fl/2\n"
      "    V = lambda x: wofz((x + 1j*g)/(s*math.sqrt(2))).real\n"
      "    h = V(0.0)/2\n"
      "    print(repr(2*brentq(lambda x: V(x)-h, 0.0, 10*(fg+fl), xtol=1e-14, rtol=1e-15)))\n");
  ASSERT_EQ(ref.size(), 8u);
  const double fl[] = {0.0, 0.1, 0.29, 0.5, 1.0, 2.0, 5.0, 20.0};
  double worst = 0.0;
  for (int i = 0; i < 8; ++i) {
    SCOPED_TRACE("f_L / f_G = " + std::to_string(fl[i]));
    EXPECT_CLOSE(VoigtFwhmNumerical(1.0, fl[i]), ref[i], kNumericalFwhmRelTol);
    EXPECT_CLOSE(VoigtFwhmOliveroLongbothum(1.0, fl[i]), ref[i], kOliveroLongbothumAccuracy);
    worst = std::max(worst, std::fabs(VoigtFwhmOliveroLongbothum(1.0, fl[i]) / ref[i] - 1.0));
  }
  // The formula is an approximation: near f_L/f_G = 0.29 it is off by ~0.02 % (its stated accuracy), not exact.
  EXPECT_GT(worst, 1.5e-4);
}

TEST(ZeemanWidth, NormalTripletWidthFactorIsRootTwoThirds) {
  // Components at -1, 0, +1 Lorentz units, one third of the light each (isotropic weights, LL04 sect. 6.6).
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("1P1"), ParseLevel("1D2"));
  EXPECT_CLOSE(ZeemanWidthFactor(p), std::sqrt(2.0 / 3.0), 1e-12);
  const LineWidth w = ZeemanBroadening(643.847, p, 1e4);
  EXPECT_CLOSE(w.fwhm_nm, 2.0 * std::sqrt(2.0 * std::log(2.0)) * std::sqrt(2.0 / 3.0) * LorentzUnit_nm(643.847, 1e4),
               1e-12);
}

TEST(BroadeningBudget, CombinesGaussiansInQuadratureAndLorentziansLinearly) {
  BroadeningBudgetOptions o;
  o.wavelength_nm = 656.28;
  o.mass_u = 1.00794;
  o.temperature_K = 1e4;
  o.instrument_fwhm_nm = 0.03;
  o.upper_decay_rate_per_s = 1e8;
  o.electron_density_cm3 = 1e14;
  o.hydrogen_n_upper = 3;
  o.hydrogen_n_lower = 2;
  const BroadeningBudget b = ComputeBroadeningBudget(o);
  ASSERT_EQ(b.mechanisms.size(), 4u);
  EXPECT_EQ(b.mechanisms[0].name, "natural");
  EXPECT_EQ(b.mechanisms[1].name, "doppler");
  EXPECT_EQ(b.mechanisms[2].name, "stark");
  EXPECT_EQ(b.mechanisms[3].name, "instrument");
  const double g = std::hypot(b.mechanisms[1].fwhm_nm, 0.03);
  const double l = b.mechanisms[0].fwhm_nm + b.mechanisms[2].fwhm_nm;
  EXPECT_CLOSE(b.gaussian_fwhm_nm, g, 1e-14);
  EXPECT_CLOSE(b.lorentzian_fwhm_nm, l, 1e-14);
  EXPECT_CLOSE(b.total_fwhm_nm, b.total_fwhm_numerical_nm, kOliveroLongbothumAccuracy);
  EXPECT_EQ(b.dominant, "doppler");
}

TEST(BroadeningBudget, RejectsIncompleteMechanisms) {
  BroadeningBudgetOptions o;
  o.wavelength_nm = 500.0;
  o.mass_u = 4.0;
  o.temperature_K = 1e4;
  o.pressure_Pa = 100.0;  // no perturber mass, no diameter
  EXPECT_THROW(ComputeBroadeningBudget(o), OptionError);
  o.pressure_Pa.reset();
  o.field_gauss = 1000.0;  // no pattern
  EXPECT_THROW(ComputeBroadeningBudget(o), OptionError);
  o.field_gauss.reset();
  o.self_density_cm3 = 1e14;
  o.oscillator_strength = 0.5;  // no statistical weights
  EXPECT_NE(o.Validate().find("statistical weights"), std::string::npos);
  o.self_density_cm3.reset();
  o.oscillator_strength.reset();
  o.temperature_K = -1.0;
  EXPECT_NE(o.Validate().find("temperature_K"), std::string::npos);
}

}  // namespace
}  // namespace zeeline
