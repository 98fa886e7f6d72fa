// Milne-Eddington (Unno-Rachkovsky) synthesis: closed form, Jacobian, symmetries and textbook limits.
#include "zeeline/synth/unno_rachkovsky.hpp"

#include <cmath>
#include <random>
#include <vector>

#include <Eigen/Dense>
#include <gtest/gtest.h>

#include "synth/synth_test_util.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"

namespace zeeline {
namespace {

constexpr double kPi = 3.14159265358979323846;
// Closed form vs LU solve of the 4x4 system: both exact up to rounding.
constexpr double kLinearAlgebraRelTol = 1e-12;
// Analytic Jacobian vs central differences (step ~1e-6 of the parameter scale): truncation ~1e-10 and
// rounding ~1e-16/1e-6, relative to the largest entry of the column.
constexpr double kJacobianRelTol = 2e-6;
// Symmetries and azimuth rotation hold exactly; only rounding (and 1e-16 nm grid asymmetry) remains.
constexpr double kExactRelTol = 1e-9;

MeLine MakeLine(const std::string& lower, const std::string& upper, double wavelength_nm, double g_spin = 2.0,
                double strength = 1.0) {
  LandeOptions lo;
  lo.g_spin = g_spin;
  MeLine line;
  line.wavelength_nm = wavelength_nm;
  line.pattern = ComputeZeemanPattern(ParseLevel(lower), ParseLevel(upper), lo);
  line.relative_strength = strength;
  return line;
}

// Fe I 630.15 nm (5P2 - 5D2, anomalous: g_eff = 5/3 in LS coupling with g_s = 2) and 630.25 nm
// (5P1 - 5D0, a triplet with g = 2.5).
MeLine Fe6301() { return MakeLine("5P2", "5D2", 630.1501); }
MeLine Fe6302(double strength = 1.0) { return MakeLine("5P1", "5D0", 630.2494, 2.0, strength); }
// A normal Zeeman triplet: 1P1 - 1D2 with g_s = 2 has g_l = g_u = 1, shifts exactly -1, 0, +1.
MeLine NormalTriplet(double wavelength_nm) { return MakeLine("1P1", "1D2", wavelength_nm); }

MeParameters SomeParameters() {
  MeParameters p;
  p.field_gauss = 1200.0;
  p.inclination_deg = 50.0;
  p.azimuth_deg = 25.0;
  p.vlos_kms = 0.4;
  p.doppler_width_nm = 3e-3;
  p.damping = 0.2;
  p.eta0 = 8.0;
  p.s0 = 0.3;
  p.s1 = 0.7;
  p.fill = 1.0;
  return p;
}

StokesArray Synth(const MilneEddingtonModel& m, const Eigen::ArrayXd& w, const MeParameters& p) {
  StokesArray s;
  m.Synthesize(w, p, s);
  return s;
}

double MaxAbs(const Eigen::ArrayXd& x) { return x.abs().maxCoeff(); }

// Definition of the Milne-Eddington solution (LL04 sect. 9.8): S_out = s0 e0 + mu s1 K^{-1} e0. The closed
// form must equal a direct LU solve of K y = e0 for any admissible K.
TEST(UnnoRachkovsky, ClosedFormEqualsLinearSolveOfPropagationMatrix) {
  std::mt19937 rng(7);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  for (int trial = 0; trial < 200; ++trial) {
    PropagationMatrix k;
    k.eta_I = 1.0 + 9.0 * (0.5 + 0.5 * u(rng));
    const double lim = 0.55 * (k.eta_I - 1.0);
    k.eta_Q = lim * u(rng);
    k.eta_U = lim * u(rng);
    k.eta_V = lim * u(rng);
    k.rho_Q = 4.0 * u(rng);
    k.rho_U = 4.0 * u(rng);
    k.rho_V = 4.0 * u(rng);
    Eigen::Matrix4d K;
    K << k.eta_I, k.eta_Q, k.eta_U, k.eta_V, k.eta_Q, k.eta_I, k.rho_V, -k.rho_U, k.eta_U, -k.rho_V, k.eta_I,
        k.rho_Q, k.eta_V, k.rho_U, -k.rho_Q, k.eta_I;
    const Eigen::Vector4d y = K.fullPivLu().solve(Eigen::Vector4d(1.0, 0.0, 0.0, 0.0));
    const Eigen::Vector4d s = UnnoRachkovsky(k, 0.25, 0.75, 0.6);
    EXPECT_CLOSE(s[0], 0.25 + 0.45 * y[0], kLinearAlgebraRelTol, 1e-15);
    for (int i = 1; i < 4; ++i) EXPECT_CLOSE(s[i], 0.45 * y[i], kLinearAlgebraRelTol, 1e-15) << i;
  }
}

void CheckJacobian(const std::vector<MeLine>& lines, const SynthesisOptions& options, const MeParameters& p0,
                   const Eigen::ArrayXd& w) {
  StokesSynthesizer synth(lines, w, options);
  StokesArray s;
  StokesJacobian jac;
  synth.Synthesize(p0, s, &jac);
  // vlos: 1e-3 km/s shifts the line by 2e-6 nm; a smaller step would be swamped by the rounding of
  // lambda0 (1 + v/c) at 630 nm (7e-14 nm).
  const double steps[kMeParamCount] = {1e-3, 1e-4, 1e-4, 1e-3, 1e-8, 1e-6, 1e-5, 1e-6, 1e-6, 1e-6};
  for (int k = 0; k < kMeParamCount; ++k) {
    const MeParam which = static_cast<MeParam>(k);
    MeParameters pp = p0, pm = p0;
    pp.Set(which, p0.Get(which) + steps[k]);
    pm.Set(which, p0.Get(which) - steps[k]);
    StokesArray sp, sm;
    synth.Synthesize(pp, sp);
    synth.Synthesize(pm, sm);
    const StokesArray fd = (sp - sm) / (2.0 * steps[k]);
    for (int c = 0; c < 4; ++c) {
      const double scale = std::max(MaxAbs(fd.col(c)), MaxAbs(jac[which].col(c)));
      const double err = MaxAbs(jac[which].col(c) - fd.col(c));
      EXPECT_LE(err, kJacobianRelTol * scale + 1e-10)
          << MeParamName(which) << " Stokes " << "IQUV"[c] << " scale " << scale;
    }
  }
}

TEST(UnnoRachkovsky, JacobianMatchesCentralDifferencesForEveryParameter) {
  const std::vector<MeLine> lines = {Fe6301(), Fe6302(0.8)};
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2, 0.3, 121);
  std::mt19937 rng(11);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  for (VoigtMethod method : {VoigtMethod::kFast, VoigtMethod::kReference}) {
    for (int trial = 0; trial < 3; ++trial) {
      MeParameters p;
      p.field_gauss = 50.0 + 3000.0 * u(rng);
      p.inclination_deg = 5.0 + 170.0 * u(rng);
      p.azimuth_deg = 180.0 * u(rng);
      p.vlos_kms = -3.0 + 6.0 * u(rng);
      p.doppler_width_nm = 2e-3 + 3e-3 * u(rng);
      p.damping = 0.01 + 0.5 * u(rng);
      p.eta0 = 1.0 + 20.0 * u(rng);
      p.s0 = 0.1 + 0.4 * u(rng);
      p.s1 = 0.3 + 0.7 * u(rng);
      p.fill = 0.2 + 0.8 * u(rng);
      SynthesisOptions o;
      o.me.voigt = method;
      o.me.mu = 0.5 + 0.5 * u(rng);
      SCOPED_TRACE(::testing::Message() << VoigtMethodName(method) << " trial " << trial);
      CheckJacobian(lines, o, p, w);
    }
  }
}

// The two-step form used by the inversion (spectra + cache now, Jacobian from the cache later, only for
// the wanted parameters): spectra identical to the one-step call, wanted columns against central
// differences as above, the columns not wanted left untouched; with fill = 1 not wanted as well.
TEST(UnnoRachkovsky, CachedJacobianMatchesCentralDifferencesForTheWantedParameters) {
  const MilneEddingtonModel model({Fe6301(), Fe6302(0.8)});
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2, 0.3, 121);
  for (double fill : {0.7, 1.0}) {
    MeParameters p0 = SomeParameters();
    p0.fill = fill;
    std::array<bool, kMeParamCount> wanted;
    wanted.fill(true);
    wanted[static_cast<int>(MeParam::kDamping)] = false;
    wanted[static_cast<int>(MeParam::kFill)] = fill != 1.0;
    StokesArray one, two;
    model.Synthesize(w, p0, one);
    MilneEddingtonModel::SynthesisCache cache;
    model.Synthesize(w, p0, two, cache, &wanted);
    EXPECT_EQ(MaxAbs((one - two).reshaped()), 0.0) << "fill " << fill;
    StokesJacobian jac;
    jac.Resize(w.size());
    for (auto& d : jac.d) d.setConstant(-7.0);  // marks columns that must stay untouched
    model.JacobianFromCache(cache, jac, &wanted);
    const double steps[kMeParamCount] = {1e-3, 1e-4, 1e-4, 1e-3, 1e-8, 1e-6, 1e-5, 1e-6, 1e-6, 1e-6};
    for (int k = 0; k < kMeParamCount; ++k) {
      const MeParam which = static_cast<MeParam>(k);
      if (!wanted[k]) {
        EXPECT_TRUE((jac[which] == -7.0).all()) << MeParamName(which) << " was written";
        continue;
      }
      MeParameters pp = p0, pm = p0;
      pp.Set(which, p0.Get(which) + steps[k]);
      pm.Set(which, p0.Get(which) - steps[k]);
      const StokesArray fd = (Synth(model, w, pp) - Synth(model, w, pm)) / (2.0 * steps[k]);
      for (int c = 0; c < 4; ++c) {
        const double scale = std::max(MaxAbs(fd.col(c)), MaxAbs(jac[which].col(c)));
        EXPECT_LE(MaxAbs(jac[which].col(c) - fd.col(c)), kJacobianRelTol * scale + 1e-10)
            << MeParamName(which) << " Stokes " << "IQUV"[c] << " fill " << fill;
      }
    }
  }
}

TEST(UnnoRachkovsky, JacobianSurvivesMacroturbulenceAndInstrumentConvolution) {
  SynthesisOptions o;
  o.macroturbulence_kms = 1.2;
  o.instrument.gaussian_fwhm_nm = 2.5e-3;
  CheckJacobian({Fe6301(), Fe6302()}, o, SomeParameters(), UniformWavelengthGrid(630.2, 0.3, 150));
}

// At B = 0 there is no polarisation and I is the textbook Milne-Eddington profile
// I = s0 + mu s1 / (1 + eta0 H(a, v)) (del Toro Iniesta 2003, ch. 8, unpolarised case), with H from libcerf.
TEST(UnnoRachkovsky, ZeroFieldGivesUnpolarisedTextbookProfile) {
  MeOptions o;
  o.mu = 0.8;
  const MilneEddingtonModel model({Fe6301()}, o);
  MeParameters p = SomeParameters();
  p.field_gauss = 0.0;
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.1501, 0.1, 101);
  const StokesArray s = Synth(model, w, p);
  const double c_kms = 299792.458;
  for (Eigen::Index i = 0; i < w.size(); ++i) {
    const double v = (w[i] - 630.1501 * (1.0 + p.vlos_kms / c_kms)) / p.doppler_width_nm;
    const double expected = p.s0 + o.mu * p.s1 / (1.0 + p.eta0 * VoigtReference(p.damping, v).H);
    EXPECT_CLOSE(s(i, 0), expected, 2e-4, 0.0);  // fast Voigt path: H within 1.3e-4
    for (int c = 1; c < 4; ++c) EXPECT_NEAR(s(i, c), 0.0, 1e-14);
  }
}

// Every Zeeman pattern is symmetric under M -> -M (shift -> -shift, q -> -q), so at rest I, Q, U are even
// and V is odd about line centre (LL04 sect. 9.3, symmetry properties of the Stokes profiles).
TEST(UnnoRachkovsky, AtRestQAndUAreSymmetricAndVAntisymmetric) {
  const MilneEddingtonModel model({Fe6301()});
  MeParameters p = SomeParameters();
  p.vlos_kms = 0.0;
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.1501, 0.08, 161);
  const StokesArray s = Synth(model, w, p);
  const Eigen::Index n = w.size();
  for (int c = 0; c < 4; ++c) {
    const double sign = c == 3 ? -1.0 : 1.0;
    const double scale = MaxAbs(s.col(c));
    ASSERT_GT(scale, 1e-3);
    for (Eigen::Index i = 0; i < n; ++i) EXPECT_NEAR(s(i, c), sign * s(n - 1 - i, c), kExactRelTol * scale);
  }
}

// Weak-field circular polarisation, V = -Delta lambda_B g_eff cos(gamma) dI/dlambda (LL04 eq. 9.77;
// docs/conventions.md). Error of the approximation ~ (Delta lambda_B / Delta lambda_D)^2 ~ 4e-5 at 10 G.
TEST(UnnoRachkovsky, WeakFieldCircularPolarisationFollowsDerivativeOfIntensity) {
  const MeLine line = Fe6301();
  const MilneEddingtonModel model({line});
  MeParameters p = SomeParameters();
  p.field_gauss = 10.0;
  p.inclination_deg = 30.0;
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.1501, 0.05, 201);
  const StokesArray s = Synth(model, w, p);
  MeParameters p0 = p;
  p0.field_gauss = 0.0;
  const double h = 1e-6;
  const StokesArray sp = Synth(model, w + h, p0), sm = Synth(model, w - h, p0);
  const Eigen::ArrayXd didl = (sp.col(0) - sm.col(0)) / (2 * h);
  const double geff = line.pattern.g_eff;
  ASSERT_NEAR(geff, 5.0 / 3.0, 1e-12);  // LS value with g_s = 2; Fe I 630.15 nm is usually quoted as 1.67
  const Eigen::ArrayXd v_wf = -LorentzUnit_nm(line.wavelength_nm, p.field_gauss) * geff *
                              std::cos(p.inclination_deg * kPi / 180.0) * didl;
  EXPECT_LE(MaxAbs(s.col(3) - v_wf), 2e-3 * MaxAbs(v_wf));
  // Sign (docs/conventions.md): field toward the observer, g_eff > 0 -> V > 0 in the blue wing.
  const double centre = 630.1501 * (1.0 + p.vlos_kms / 299792.458);
  Eigen::Index blue = 0;
  (w - (centre - p.doppler_width_nm)).abs().minCoeff(&blue);
  EXPECT_GT(s(blue, 3), 0.0);
  Eigen::Index red = 0;
  (w - (centre + p.doppler_width_nm)).abs().minCoeff(&red);
  EXPECT_LT(s(red, 3), 0.0);
}

// Weak-field linear polarisation, Q = -(1/4) Delta lambda_B^2 G sin^2(gamma) cos(2 chi) d2I/dlambda2
// (LL04 eq. 9.83). In a Milne-Eddington atmosphere the second-order expansion of Q lacks the
// (dI/dlambda)^2 part of d2I/dlambda2, which vanishes at line centre: check there for a strong line, and
// over the profile for a weak line (eta0 = 0.05, neglected term ~ eta0). Faraday rotation (rho_V, first
// order in B) turns the plane by ~0.6% rad at 20 G for eta0 = 8, so the strong line is checked at 2 G.
TEST(UnnoRachkovsky, WeakFieldLinearPolarisationFollowsSecondDerivative) {
  const MeLine line = Fe6301();
  ASSERT_GT(line.pattern.G, 0.0);
  const MilneEddingtonModel model({line}, MeOptions{});
  for (double eta0 : {8.0, 0.05}) {
    MeParameters p = SomeParameters();
    p.vlos_kms = 0.0;
    p.eta0 = eta0;
    p.field_gauss = eta0 > 1.0 ? 2.0 : 20.0;
    p.inclination_deg = 70.0;
    p.azimuth_deg = 20.0;
    const Eigen::ArrayXd w = UniformWavelengthGrid(630.1501, 0.04, 201);  // centre at index 100
    const StokesArray s = Synth(model, w, p);
    MeParameters p0 = p;
    p0.field_gauss = 0.0;
    const double h = 2e-5;
    const Eigen::ArrayXd d2 =
        (Synth(model, w + h, p0).col(0) - 2.0 * Synth(model, w, p0).col(0) + Synth(model, w - h, p0).col(0)) / (h * h);
    const double lb = LorentzUnit_nm(line.wavelength_nm, p.field_gauss);
    const double sg = std::sin(p.inclination_deg * kPi / 180.0), chi = p.azimuth_deg * kPi / 180.0;
    const Eigen::ArrayXd q_wf = -0.25 * lb * lb * line.pattern.G * sg * sg * std::cos(2 * chi) * d2;
    const Eigen::ArrayXd u_wf = -0.25 * lb * lb * line.pattern.G * sg * sg * std::sin(2 * chi) * d2;
    if (eta0 > 1.0) {
      EXPECT_CLOSE(s(100, 1), q_wf[100], 2e-3, 0.0);
      EXPECT_CLOSE(s(100, 2), u_wf[100], 2e-3, 0.0);
      EXPECT_LT(s(100, 1), 0.0);  // conventions: Q < 0 at line centre for chi = 0 .. 45 deg
    } else {
      EXPECT_LE(MaxAbs(s.col(1) - q_wf), 0.1 * MaxAbs(q_wf));
      EXPECT_LE(MaxAbs(s.col(2) - u_wf), 0.1 * MaxAbs(u_wf));
    }
  }
}

// Rotating the field azimuth by alpha rotates (Q, U) by 2 alpha, magneto-optical effects included
// (docs/conventions.md; the propagation matrix is covariant under rotations about the line of sight).
TEST(UnnoRachkovsky, AzimuthRotationRotatesLinearPolarisationByTwiceTheAngle) {
  const MilneEddingtonModel model({Fe6301(), Fe6302()});
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2, 0.3, 151);
  MeParameters p = SomeParameters();
  p.field_gauss = 2500.0;
  const StokesArray s0 = Synth(model, w, p);
  for (double alpha_deg : {17.0, 45.0, 90.0, 133.0}) {
    MeParameters pr = p;
    pr.azimuth_deg += alpha_deg;
    const StokesArray s = Synth(model, w, pr);
    const double c = std::cos(2 * alpha_deg * kPi / 180.0), sn = std::sin(2 * alpha_deg * kPi / 180.0);
    const double scale = MaxAbs(s0.col(1)) + MaxAbs(s0.col(2));
    EXPECT_LE(MaxAbs(s.col(1) - (c * s0.col(1) - sn * s0.col(2))), kExactRelTol * scale) << alpha_deg;
    EXPECT_LE(MaxAbs(s.col(2) - (sn * s0.col(1) + c * s0.col(2))), kExactRelTol * scale) << alpha_deg;
    EXPECT_LE(MaxAbs(s.col(0) - s0.col(0)), 1e-12);
    EXPECT_LE(MaxAbs(s.col(3) - s0.col(3)), 1e-12);
  }
}

// A field along +x (chi = 0, gamma = 90): the pi component absorbs light polarised along the field, so Q < 0
// at line centre; at chi = 45 deg U < 0 there (docs/conventions.md, Q > 0 along +x).
TEST(UnnoRachkovsky, TransverseFieldLinearPolarisationSigns) {
  const MilneEddingtonModel model({Fe6302()});
  MeParameters p = SomeParameters();
  p.vlos_kms = 0.0;
  p.inclination_deg = 90.0;
  p.azimuth_deg = 0.0;
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2494, 0.02, 3);
  StokesArray s = Synth(model, w, p);
  EXPECT_LT(s(1, 1), 0.0);
  EXPECT_NEAR(s(1, 2), 0.0, 1e-12);
  EXPECT_NEAR(s(1, 3), 0.0, 1e-12);  // gamma = 90: no circular polarisation
  p.azimuth_deg = 45.0;
  s = Synth(model, w, p);
  EXPECT_LT(s(1, 2), 0.0);
  EXPECT_NEAR(s(1, 1), 0.0, 1e-12);
}

// f = 0 leaves only the non-magnetic atmosphere: the B = 0 profile.
TEST(UnnoRachkovsky, ZeroFillingFactorGivesNonMagneticProfile) {
  const MilneEddingtonModel model({Fe6301(), Fe6302()});
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2, 0.3, 101);
  MeParameters p = SomeParameters();
  p.fill = 0.0;
  p.field_gauss = 2000.0;
  MeParameters p0 = SomeParameters();
  p0.field_gauss = 0.0;
  const StokesArray s = Synth(model, w, p), s0 = Synth(model, w, p0);
  EXPECT_LE(MaxAbs(s.col(0) - s0.col(0)), 1e-14);
  for (int c = 1; c < 4; ++c) EXPECT_EQ(MaxAbs(s.col(c)), 0.0);
  // and f mixes linearly
  MeParameters ph = p;
  ph.fill = 0.3;
  MeParameters p1 = p;
  p1.fill = 1.0;
  const StokesArray sh = Synth(model, w, ph), s1 = Synth(model, w, p1);
  EXPECT_LE(MaxAbs(sh.col(0) - (0.3 * s1.col(0) + 0.7 * s0.col(0))), 1e-14);
  EXPECT_LE(MaxAbs(sh.col(3) - 0.3 * s1.col(3)), 1e-14);
}

// Normal triplet in a strong longitudinal field (gamma = 0): the pi component is invisible, the sigma
// components sit at +/- Delta lambda_B and are completely circularly polarised with opposite senses, so at
// each sigma core |V| = I_c - I (LL04 ch. 3 and sect. 9.4, longitudinal Zeeman effect, from memory; exact when
// the other sigma component's absorption vanishes: then eta_I - eta_V = 1 + eta0 phi_b, eta_I + eta_V = 1). With the zeeline sign, V > 0 at the blue sigma component.
TEST(UnnoRachkovsky, NormalTripletInStrongLongitudinalFieldShowsOnlySigmaComponents) {
  const double lambda0 = 630.0;
  const MeLine line = NormalTriplet(lambda0);
  ASSERT_NEAR(line.pattern.g_eff, 1.0, 1e-12);
  for (const auto& c : line.pattern.components) ASSERT_NEAR(c.shift_lorentz, c.q, 1e-12);  // normal triplet
  const MilneEddingtonModel model({line});
  MeParameters p;
  p.field_gauss = 5000.0;
  p.inclination_deg = 0.0;
  p.doppler_width_nm = 2e-3;
  p.damping = 0.01;
  p.eta0 = 10.0;
  const double lb = LorentzUnit_nm(lambda0, p.field_gauss);  // ~9.3e-3 nm = 4.6 Doppler widths
  const Eigen::ArrayXd w = UniformWavelengthGrid(lambda0, 0.04, 4001);  // step 1e-5 nm
  const StokesArray s = Synth(model, w, p);
  const double ic = p.s0 + p.s1;
  const Eigen::Index mid = 2000;
  Eigen::Index imin = 0;
  const double depth = ic - s.col(0).minCoeff(&imin);
  EXPECT_LT(ic - s(mid, 0), 0.01 * depth);  // no pi absorption at line centre
  const Eigen::Index off = static_cast<Eigen::Index>(std::lround(lb / (w[1] - w[0])));
  const Eigen::Index blue = mid - off, red = mid + off;
  // the intensity minimum sits at a sigma component (within 0.1 Doppler width)
  EXPECT_TRUE(std::abs(imin - blue) <= 20 || std::abs(imin - red) <= 20) << imin << " " << blue << " " << red;
  EXPECT_NEAR(s(blue, 0), s(red, 0), 1e-12);
  EXPECT_GT(s(blue, 3), 0.0);
  EXPECT_LT(s(red, 3), 0.0);
  EXPECT_CLOSE(s(blue, 3), ic - s(blue, 0), 2e-2, 0.0);
  EXPECT_CLOSE(-s(red, 3), ic - s(red, 0), 2e-2, 0.0);
  EXPECT_EQ(MaxAbs(s.col(1)), 0.0);
  EXPECT_EQ(MaxAbs(s.col(2)), 0.0);
}

// Continuum far from the line: s0 + mu s1 (docs/conventions.md).
TEST(UnnoRachkovsky, ContinuumIsS0PlusMuS1) {
  MeOptions o;
  o.mu = 0.6;
  const MilneEddingtonModel model({Fe6302()}, o);
  Eigen::ArrayXd w(1);
  w << 640.0;
  const StokesArray s = Synth(model, w, SomeParameters());
  EXPECT_CLOSE(s(0, 0), 0.3 + 0.6 * 0.7, 1e-5, 0.0);
}

TEST(UnnoRachkovsky, ValidationNamesTheBadFieldAndValue) {
  MeParameters p;
  EXPECT_EQ(p.Validate(), "");
  p.fill = 1.5;
  EXPECT_NE(p.Validate().find("fill = 1.5"), std::string::npos) << p.Validate();
  p = MeParameters{};
  p.doppler_width_nm = -1.0;
  EXPECT_NE(p.Validate().find("doppler_width_nm"), std::string::npos);
  p = MeParameters{};
  p.inclination_deg = 200.0;
  EXPECT_NE(p.Validate().find("b_incl_deg = 200"), std::string::npos);
  MeOptions o;
  o.mu = 0.0;
  EXPECT_NE(o.Validate().find("mu = 0"), std::string::npos);
  EXPECT_THROW(MilneEddingtonModel({Fe6302()}, o), OptionError);
  EXPECT_THROW(MilneEddingtonModel(std::vector<MeLine>{}), OptionError);
  MeLine bad = Fe6302();
  bad.wavelength_nm = -5.0;
  EXPECT_THROW(MilneEddingtonModel({bad}), OptionError);
}

TEST(UnnoRachkovsky, ParameterNamesAndAccessorsAgree) {
  MeParameters p;
  for (int k = 0; k < kMeParamCount; ++k) {
    const MeParam which = static_cast<MeParam>(k);
    p.Set(which, 0.125 * (k + 1));
    EXPECT_EQ(p.Get(which), 0.125 * (k + 1)) << MeParamName(which);
  }
  EXPECT_STREQ(MeParamName(MeParam::kField), "b_total_gauss");
  EXPECT_STREQ(MeParamName(MeParam::kVlos), "v_los_kms");
  EXPECT_STREQ(MeParamName(MeParam::kFill), "fill");
}

}  // namespace
}  // namespace zeeline
