// Polarimeter modulation/demodulation against del Toro Iniesta & Collados (2000, Appl. Opt. 39, 1637).
#include "zeeline/polarimetry/modulation.hpp"

#include <cmath>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/polarimetry/mueller.hpp"

namespace zeeline::polarimetry {
namespace {

constexpr double kTol = 1e-12;
const double kInvSqrt3 = 1.0 / std::sqrt(3.0);

TEST(Modulation, SixPureStatesGiveBalancedEfficiencies) {
  // Measuring +-Q, +-U, +-V (O rows (1, +-1, 0, 0) etc.): eps_I = 1 and eps_Q = eps_U = eps_V = 1/sqrt(3)
  // (del Toro Iniesta & Collados 2000, sect. 4: the balanced optimum).
  ModulationMatrix o(6, 4);
  o << 1, 1, 0, 0, 1, -1, 0, 0, 1, 0, 1, 0, 1, 0, -1, 0, 1, 0, 0, 1, 1, 0, 0, -1;
  const auto r = Demodulate(o);
  EXPECT_CLOSE(r.efficiency(0), 1.0, kTol);
  for (int i = 1; i < 4; ++i) EXPECT_CLOSE(r.efficiency(i), kInvSqrt3, kTol);
  EXPECT_TRUE((r.demodulation * o).isApprox(Eigen::Matrix4d::Identity(), 1e-12));
}

TEST(Modulation, TetrahedronSchemeIsOptimalWithFourStates) {
  // Four states whose (Q,U,V)/I lie on a regular tetrahedron: eps_I = 1, eps_QUV = 1/sqrt(3) (ibid., sect. 4).
  ModulationMatrix o(4, 4);
  const double a = kInvSqrt3;
  o << 1, a, a, a, 1, a, -a, -a, 1, -a, a, -a, 1, -a, -a, a;
  const auto r = Demodulate(o);
  EXPECT_CLOSE(r.efficiency(0), 1.0, kTol);
  for (int i = 1; i < 4; ++i) EXPECT_CLOSE(r.efficiency(i), kInvSqrt3, kTol);
}

TEST(Modulation, EfficienciesObeyTheBoundForRotatingRetarders) {
  // eps_Q^2 + eps_U^2 + eps_V^2 <= 1 and eps_I <= 1 for any modulation (ibid., eqs. 36-38).
  for (double retardance : {90.0, 127.0, 132.0, 150.0}) {
    Eigen::VectorXd angles(8);
    for (int k = 0; k < 8; ++k) angles(k) = 22.5 * k;
    const auto r = Demodulate(RotatingRetarderModulation(angles, retardance));
    EXPECT_LE(r.efficiency(0), 1.0 + 1e-12);
    EXPECT_LE(r.efficiency.tail<3>().squaredNorm(), 1.0 + 1e-12) << retardance;
  }
}

TEST(Modulation, QuarterWavePlateAt45DegreesTurnsCircularIntoLinear) {
  // Common practice: a quarter-wave plate at 45 deg followed by a polariser at 0 deg passes V = +-I fully.
  Eigen::VectorXd angles(1);
  angles << 45.0;
  const ModulationMatrix row = RotatingRetarderModulation(angles, 90.0);
  EXPECT_CLOSE(row(0, 0), 0.5, kTol);
  EXPECT_CLOSE(std::fabs(row(0, 3)), 0.5, kTol);
  EXPECT_CLOSE(row(0, 1), 0.0, 0.0, kTol);
  EXPECT_CLOSE(row(0, 2), 0.0, 0.0, kTol);
}

TEST(Modulation, CrosstalkIsIdentityForAPerfectCalibrationAndShowsARetarderError) {
  Eigen::VectorXd angles(6);
  angles << 0, 22.5, 45, 67.5, 90, 112.5;
  const ModulationMatrix nominal = RotatingRetarderModulation(angles, 127.0);
  const auto r = Demodulate(nominal);
  EXPECT_TRUE(Crosstalk(r.demodulation, nominal).isApprox(Eigen::Matrix4d::Identity(), 1e-12));
  const Eigen::Matrix4d x = Crosstalk(r.demodulation, RotatingRetarderModulation(angles, 122.0));
  EXPECT_GT((x - Eigen::Matrix4d::Identity()).cwiseAbs().maxCoeff(), 1e-3);
}

TEST(Modulation, SingularOrTooShortModulationIsRefused) {
  ModulationMatrix three(3, 4);
  three.setRandom();
  EXPECT_THROW(Demodulate(three), std::invalid_argument);
  ModulationMatrix no_v(4, 4);
  no_v << 1, 1, 0, 0, 1, -1, 0, 0, 1, 0, 1, 0, 1, 0, -1, 0;
  EXPECT_THROW(Demodulate(no_v), std::invalid_argument);
}

TEST(Mueller, PolariserIsIdempotentAndRetarderPreservesDegreeOfPolarisation) {
  const Mueller p = LinearPolariser(30.0);
  EXPECT_TRUE((p * p).isApprox(p, 1e-12));  // Malus: a second identical polariser passes everything
  const Mueller r = LinearRetarder(17.0, 63.0);
  const Stokes s(1.0, 0.3, -0.4, 0.5);
  const Stokes t = r * s;
  EXPECT_CLOSE(t.tail<3>().norm(), s.tail<3>().norm(), kTol);
  // Malus's law: unpolarised light through polarisers at 0 and 60 deg: I = 1/2 cos^2(60) (common practice).
  const Stokes out = LinearPolariser(60.0) * LinearPolariser(0.0) * Stokes(1, 0, 0, 0);
  EXPECT_CLOSE(out(0), 0.5 * 0.25, kTol);
}

}  // namespace
}  // namespace zeeline::polarimetry
