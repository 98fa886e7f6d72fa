// Tests of measure/stokes_characteristics on Milne-Eddington spectra with known truth.
#include "zeeline/measure/stokes_characteristics.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "measure/measure_test_util.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kRest = 630.2494;
constexpr double kSigmas = 3.0;  // "within the reported uncertainty": 3 sigma
// Noiseless symmetric model: the asymmetries vanish up to the parabola refinement of sampled lobes,
// measured below 1e-3 on this grid (0.5 pm step, 3 pm Doppler width).
constexpr double kSamplingAsymTol = 2e-3;

ZeemanPattern Fe6302() { return ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0")); }

MeParameters Atmosphere(double b, double incl, double vlos) {
  MeParameters p;
  p.field_gauss = b;
  p.inclination_deg = incl;
  p.azimuth_deg = 30.0;
  p.vlos_kms = vlos;
  p.doppler_width_nm = 0.003;
  p.damping = 0.1;
  p.eta0 = 6.0;
  return p;
}

StokesCharacteristics Measure(const Spectrum1D& s, double noise, int realisations = 200) {
  const PixelSpectrum v = s.View();
  const auto cont = ContinuumSamples(v.wavelength_nm, v.n, kRest, 0.035);
  const ContinuumEstimate c = EstimateContinuum(v, cont, noise);
  CharacteristicsOptions o;
  o.rest_wavelength_nm = kRest;
  o.window_halfwidth_nm = 0.035;
  o.realisations = realisations;
  return MeasureStokesCharacteristics(v, c, o);
}

TEST(StokesCharacteristics, SymmetricModelHasNoAsymmetryAndZeroCrossingAtTheInjectedVelocity) {
  const double vlos = 1.2;
  const Spectrum1D clean = testing::MakeMeSpectrum(Fe6302(), kRest, {Atmosphere(800, 30, vlos)}, {1.0}, 0.06, 241, 0.0, 1);
  const StokesCharacteristics a = Measure(clean, 1e-3, 0);
  // Single ME component: V antisymmetric about the shifted line centre (del Toro Iniesta 2003, ch. 8).
  EXPECT_NEAR(a.amplitude_asymmetry.value, 0.0, kSamplingAsymTol);
  EXPECT_NEAR(a.area_asymmetry.value, 0.0, kSamplingAsymTol);
  EXPECT_NEAR(a.zero_crossing_vlos_kms.value, vlos, 0.02);
  EXPECT_GT(a.v_blue_amplitude.value, 0.0);  // field toward the observer: V > 0 in the blue wing
  EXPECT_LT(a.v_red_amplitude.value, 0.0);
  EXPECT_GT(a.v_peak_separation_nm.value, 0.0);

  const Spectrum1D noisy = testing::MakeMeSpectrum(Fe6302(), kRest, {Atmosphere(800, 30, vlos)}, {1.0}, 0.06, 241, 1e-3, 2);
  const StokesCharacteristics b = Measure(noisy, 0.0);
  EXPECT_NEAR(b.amplitude_asymmetry.value, 0.0, kSigmas * b.amplitude_asymmetry.err);
  EXPECT_NEAR(b.area_asymmetry.value, 0.0, kSigmas * b.area_asymmetry.err);
  EXPECT_NEAR(b.zero_crossing_vlos_kms.value, vlos, kSigmas * b.zero_crossing_vlos_kms.err);
  EXPECT_GT(b.zero_crossing_vlos_kms.err, 0.0);
  EXPECT_LT(b.zero_crossing_vlos_kms.err, 0.2);
}

TEST(StokesCharacteristics, NegativePolarityGivesTheSameAsymmetriesAndNegativeBlueLobe) {
  const Spectrum1D s = testing::MakeMeSpectrum(Fe6302(), kRest, {Atmosphere(800, 150, 0.0)}, {1.0}, 0.06, 241, 0.0, 1);
  const StokesCharacteristics a = Measure(s, 1e-3, 0);
  EXPECT_LT(a.v_blue_amplitude.value, 0.0);
  EXPECT_NEAR(a.net_circular_polarisation.value, 0.0, 1e-3);  // antisymmetric V: no net V
  EXPECT_NEAR(a.area_asymmetry.value, 0.0, kSamplingAsymTol);
}

// Brute-force amplitude asymmetry on a dense noiseless grid: max and min of V, no refinement.
double BruteAmplitudeAsymmetry(const Spectrum1D& s) {
  const auto mx = std::max_element(s.V.begin(), s.V.end()), mn = std::min_element(s.V.begin(), s.V.end());
  const double blue = mx < mn ? *mx : *mn, red = mx < mn ? *mn : *mx;
  return (std::fabs(blue) - std::fabs(red)) / (std::fabs(blue) + std::fabs(red));
}

TEST(StokesCharacteristics, TwoComponentVelocityMixtureGivesAmplitudeButNoAreaAsymmetry) {
  // 60 % at rest with 1500 G, 40 % redshifted by 3 km/s with 500 G (a lateral mixture).
  const std::vector<MeParameters> comps = {Atmosphere(1500, 20, 0.0), Atmosphere(500, 20, 3.0)};
  const std::vector<double> weights = {0.6, 0.4};
  const Spectrum1D dense = testing::MakeMeSpectrum(Fe6302(), kRest, comps, weights, 0.06, 4801, 0.0, 1);
  const double expected_da = BruteAmplitudeAsymmetry(dense);
  ASSERT_GT(std::fabs(expected_da), 0.02);  // the mixture is clearly asymmetric

  const Spectrum1D s = testing::MakeMeSpectrum(Fe6302(), kRest, comps, weights, 0.06, 241, 5e-4, 9);
  const StokesCharacteristics c = Measure(s, 0.0);
  // Sign and size of the amplitude asymmetry as the dense brute-force evaluation.
  EXPECT_EQ(c.amplitude_asymmetry.value > 0, expected_da > 0);
  EXPECT_NEAR(c.amplitude_asymmetry.value, expected_da, kSigmas * c.amplitude_asymmetry.err + 0.01);
  EXPECT_GT(std::fabs(c.amplitude_asymmetry.value), kSigmas * c.amplitude_asymmetry.err);
  // Each component's V is antisymmetric about its own centre, so the total area vanishes: dA = 0.
  EXPECT_NEAR(c.area_asymmetry.value, 0.0, kSigmas * c.area_asymmetry.err);
  // The zero crossing lies between the two component velocities.
  EXPECT_GT(c.zero_crossing_vlos_kms.value, 0.0);
  EXPECT_LT(c.zero_crossing_vlos_kms.value, 3.0);
}

TEST(StokesCharacteristics, MonteCarloErrorsMatchTheScatterOfIndependentSpectra) {
  const std::vector<MeParameters> comps = {Atmosphere(800, 30, 0.5)};
  std::vector<double> zc, da;
  double reported_zc = 0.0, reported_da = 0.0;
  const int draws = 20;
  for (int k = 0; k < draws; ++k) {
    const Spectrum1D s = testing::MakeMeSpectrum(Fe6302(), kRest, comps, {1.0}, 0.06, 241, 2e-3, 50 + k);
    const StokesCharacteristics c = Measure(s, 0.0, 100);
    zc.push_back(c.zero_crossing_vlos_kms.value);
    da.push_back(c.amplitude_asymmetry.value);
    reported_zc += c.zero_crossing_vlos_kms.err / draws;
    reported_da += c.amplitude_asymmetry.err / draws;
  }
  auto sd = [](const std::vector<double>& v) {
    double m = 0.0, s2 = 0.0;
    for (double x : v) m += x / v.size();
    for (double x : v) s2 += (x - m) * (x - m);
    return std::sqrt(s2 / (v.size() - 1));
  };
  // 20 draws: the sample sd is within a factor 1.6 of the true one with > 99 % probability.
  EXPECT_GT(sd(zc) / reported_zc, 1.0 / 1.6);
  EXPECT_LT(sd(zc) / reported_zc, 1.6);
  EXPECT_GT(sd(da) / reported_da, 1.0 / 1.6);
  EXPECT_LT(sd(da) / reported_da, 1.6);
}

TEST(StokesCharacteristics, LinearPolarisationAngleFollowsTheFieldAzimuth) {
  // Moderately thick ME line, transverse 2.5 kG field at azimuth 30 deg (pi group apart from the sigma
  // groups): the pi-core polarisation of an absorption line is perpendicular to the field
  // (docs/conventions.md: Q < 0 at line centre for chi = 0). In strongly saturated lines the core
  // polarisation can reverse, so eta0 is kept at 1.
  MeParameters p = Atmosphere(2500, 90, 0.0);
  p.azimuth_deg = 30.0;
  p.eta0 = 1.0;
  const Spectrum1D s = testing::MakeMeSpectrum(Fe6302(), kRest, {p}, {1.0}, 0.06, 241, 0.0, 1);
  const StokesCharacteristics c = Measure(s, 1e-3, 0);
  EXPECT_NEAR(c.linear_polarisation_angle_core_deg.value, 120.0, 1.0);
  EXPECT_GT(c.linear_polarisation.value, 0.0);
  EXPECT_GT(c.linear_polarisation_per_continuum_nm.value, 0.0);
}

TEST(StokesCharacteristics, InvalidOptionsAreRejected) {
  CharacteristicsOptions o;
  EXPECT_NE(o.Validate().find("rest_wavelength_nm"), std::string::npos);
  o.rest_wavelength_nm = 500;
  o.realisations = -1;
  EXPECT_NE(o.Validate().find("realisations"), std::string::npos);
  Spectrum1D s;
  EXPECT_THROW(MeasureStokesCharacteristics(s.View(), ContinuumEstimate{}, o), OptionError);
}

}  // namespace
}  // namespace zeeline
