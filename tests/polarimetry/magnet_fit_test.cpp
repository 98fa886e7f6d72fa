// Lab-magnet check of a polarimeter: recovery of an injected field scale and response matrix X from
// lamp spectra simulated with the optically thin emission formulas (LL04 sect. 6.6, written out here with
// Gaussian components) for a normal triplet (Cd I 643.8 nm, 1P1 - 1D2) and a jK line (Ne I 640.2 nm,
// jK(2P3/2,s,3/2,2) - jK(2P3/2,p,5/2,3)); the Zeeman patterns come from the atomic module (checked against
// sympy's Wigner 3j in tests/atomic).
#include "zeeline/polarimetry/magnet_fit.hpp"

#include <cmath>
#include <random>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline::polarimetry {
namespace {

constexpr double kMaxPull = 4.0;  // any single recovered parameter within 4 sigma of the injection

struct Injection {
  double f = 0.962;
  Eigen::Matrix4d x;
  double width_nm = 0.0011;
  double noise = 0.004;  // relative to the peak
};

Eigen::Matrix4d InjectedX(double vv = 0.93) {
  Eigen::Matrix4d x;
  x << 1.0, 0.02, -0.01, 0.005,  //
      0.012, 0.97, 0.03, 0.02,   //
      -0.008, -0.025, 0.95, 0.01,  //
      0.006, 0.012, -0.015, vv;
  return x;
}

// Independent synthesis: Gaussian components (damping 0, no instrument), emission coefficients of LL04.
MagnetSpectrum Simulate(const ZeemanPattern& p, double lambda0, double field, const Injection& in, double incl,
                        double azim, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> gauss(0.0, 1.0);
  const double lb = LorentzUnit_nm(lambda0, field * in.f);
  const double pi = 3.14159265358979323846, g = incl * pi / 180, chi = azim * pi / 180;
  MagnetSpectrum ms;
  ms.inclination_deg = incl;
  ms.azimuth_deg = azim;
  ms.spectrum.source = "simulated";
  const double amp = 0.004, bg = 0.3, peak = amp / (std::sqrt(pi) * in.width_nm);
  for (int i = 0; i < 260; ++i) {
    const double wl = lambda0 - 0.065 + 0.0005 * i;
    double phi[3] = {0, 0, 0};
    for (const ZeemanComponent& c : p.components) {
      const double d = (wl - lambda0 - c.shift_lorentz * lb) / in.width_nm;
      phi[c.q + 1] += c.strength * std::exp(-d * d) / (std::sqrt(pi) * in.width_nm);
    }
    Eigen::Vector4d e;
    e(0) = amp * 0.5 * (phi[1] * std::sin(g) * std::sin(g) + 0.5 * (phi[0] + phi[2]) * (1 + std::cos(g) * std::cos(g))) + bg;
    const double lin = amp * 0.5 * (phi[1] - 0.5 * (phi[0] + phi[2])) * std::sin(g) * std::sin(g);
    e(1) = lin * std::cos(2 * chi);
    e(2) = lin * std::sin(2 * chi);
    e(3) = amp * 0.5 * (phi[2] - phi[0]) * std::cos(g);
    const Eigen::Vector4d o = in.x * e;
    ms.spectrum.wavelength_nm.push_back(wl);
    ms.spectrum.I.push_back(o(0) + in.noise * peak * gauss(rng));
    ms.spectrum.Q.push_back(o(1) + in.noise * peak * gauss(rng));
    ms.spectrum.U.push_back(o(2) + in.noise * peak * gauss(rng));
    ms.spectrum.V.push_back(o(3) + in.noise * peak * gauss(rng));
  }
  return ms;
}

void ExpectRecovered(const MagnetFitResult& r, const Injection& in) {
  EXPECT_LT(std::fabs(r.field_scale - in.f), kMaxPull * r.field_scale_err)
      << r.field_scale << " +- " << r.field_scale_err << " vs " << in.f;
  for (int c = 0; c < 4; ++c) {
    if (!r.column_constrained[static_cast<std::size_t>(c)]) continue;
    for (int row = 0; row < 4; ++row) {
      if (row == 0 && c == 0) continue;
      EXPECT_LT(std::fabs(r.response(row, c) - in.x(row, c)), kMaxPull * r.response_err(row, c))
          << "X(" << row << "," << c << ") = " << r.response(row, c) << " +- " << r.response_err(row, c) << " vs "
          << in.x(row, c);
    }
  }
  EXPECT_LT(r.chi2_reduced, 1.3);
}

TEST(MagnetFit, NormalTripletRecoversFieldScaleAndResponse) {
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("1P1"), ParseLevel("1D2"));
  MagnetFitOptions o;
  o.nominal_field_gauss = 1e4;
  o.rest_wavelength_nm = 643.847;
  o.pattern = p;
  Injection in;
  in.x = InjectedX();
  const std::vector<MagnetSpectrum> s = {Simulate(p, o.rest_wavelength_nm, 1e4, in, 0, 0, 1),
                                         Simulate(p, o.rest_wavelength_nm, 1e4, in, 90, 0, 2),
                                         Simulate(p, o.rest_wavelength_nm, 1e4, in, 90, 30, 3)};
  const MagnetFitResult r = FitMagnet(s, o);
  EXPECT_TRUE(r.unconstrained.empty());
  ExpectRecovered(r, in);
  EXPECT_EQ(r.v_sign, 1);
  EXPECT_LT(r.field_scale_err, 0.01);
}

TEST(MagnetFit, JKLineRecoversFieldScaleAndReportsTheUnexcitedColumn) {
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("jK(2P3/2,s,3/2,2)"), ParseLevel("jK(2P3/2,p,5/2,3)"));
  ASSERT_GT(p.components.size(), 3u);  // anomalous pattern
  MagnetFitOptions o;
  o.nominal_field_gauss = 1.5e4;
  o.rest_wavelength_nm = 640.2248;
  o.pattern = p;
  Injection in;
  in.x = InjectedX(-0.93);  // a V sign flip somewhere in the chain
  // Longitudinal + transverse at azimuth 0: only the I, Q and V columns are excited (U is not).
  const std::vector<MagnetSpectrum> s = {Simulate(p, o.rest_wavelength_nm, 1.5e4, in, 0, 0, 4),
                                         Simulate(p, o.rest_wavelength_nm, 1.5e4, in, 90, 0, 5)};
  const MagnetFitResult r = FitMagnet(s, o);
  ASSERT_EQ(r.unconstrained.size(), 1u);
  EXPECT_EQ(r.unconstrained[0], "U");
  EXPECT_FALSE(r.column_constrained[2]);
  EXPECT_TRUE(std::isnan(r.response(1, 2)));
  ExpectRecovered(r, in);
  EXPECT_EQ(r.v_sign, -1);
}

TEST(MagnetFit, LongitudinalOnlyLeavesQAndUUnconstrained) {
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("1P1"), ParseLevel("1D2"));
  MagnetFitOptions o;
  o.nominal_field_gauss = 1e4;
  o.rest_wavelength_nm = 643.847;
  o.pattern = p;
  Injection in;
  in.x = InjectedX();
  const MagnetFitResult r = FitMagnet({Simulate(p, o.rest_wavelength_nm, 1e4, in, 0, 0, 6)}, o);
  EXPECT_EQ(r.unconstrained, (std::vector<std::string>{"Q", "U"}));
  ExpectRecovered(r, in);
}

TEST(MagnetFit, MissingStokesAndBadOptionsAreRefused) {
  MagnetFitOptions o;
  EXPECT_NE(o.Validate().find("nominal field"), std::string::npos);
  o.nominal_field_gauss = 1e4;
  o.rest_wavelength_nm = 643.847;
  o.pattern = ComputeZeemanPattern(ParseLevel("1P1"), ParseLevel("1D2"));
  Injection in;
  in.x = InjectedX();
  MagnetSpectrum s = Simulate(o.pattern, o.rest_wavelength_nm, 1e4, in, 0, 0, 7);
  s.spectrum.V.clear();
  EXPECT_THROW(FitMagnet({s}, o), CalibrationError);
}

}  // namespace
}  // namespace zeeline::polarimetry
