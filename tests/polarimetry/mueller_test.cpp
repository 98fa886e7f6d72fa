// Mueller optics: closed forms (Collett 2005; Chipman 1995) against the Jones route M = A (J (x) J*) A^-1
// (Azzam & Bashara 1977, sect. 2.11), the handedness of V (docs/conventions.md, IAU 1974) and the
// realisability criterion (Cloude 1986).
#include "zeeline/polarimetry/mueller.hpp"

#include <cmath>
#include <complex>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/polarimetry/jones.hpp"
#include "zeeline/polarimetry/realisability.hpp"

namespace zeeline::polarimetry {
namespace {

constexpr double kTol = 1e-12;  // closed forms vs the Jones route: rounding only

void ExpectSameMatrix(const Mueller& a, const Mueller& b) {
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 4; ++j) EXPECT_CLOSE(a(i, j), b(i, j), kTol, kTol) << "element " << i << j;
}

TEST(Mueller, ClosedFormsEqualTheJonesRoute) {
  // Independent route: Jones matrices and A (J (x) J*) A^-1 (Azzam & Bashara 1977, sect. 2.11).
  for (double angle : {0.0, 17.0, 45.0, 90.0, 123.4, -30.0}) {
    ExpectSameMatrix(LinearPolariser(angle), MuellerFromJones(JonesPolariser(angle)));
    ExpectSameMatrix(LinearPolariser(angle, 0.92, 1e-3), MuellerFromJones(JonesPolariser(angle, 0.92, 1e-3)));
    for (double delta : {90.0, 127.0, 180.0, 33.0})
      ExpectSameMatrix(LinearRetarder(angle, delta), MuellerFromJones(JonesRetarder(angle, delta)));
    ExpectSameMatrix(Rotator(angle), MuellerFromJones(JonesRotator(angle)));
  }
  // A composed train equals the product of Jones matrices in the reverse (light) order.
  const Mueller m = ComposeInLightOrder({LinearPolariser(10.0, 0.9, 0.01), LinearRetarder(40.0, 95.0), Rotator(12.0)});
  const Jones j = JonesRotator(12.0) * JonesRetarder(40.0, 95.0) * JonesPolariser(10.0, 0.9, 0.01);
  ExpectSameMatrix(m, MuellerFromJones(j));
}

TEST(Mueller, QuarterWavePlateAt45TurnsQIntoPlusVOfTheDocumentedHandedness) {
  // docs/conventions.md: zeeline V > 0 is the IAU 1974 negative sense (IAU Trans. 15B, 166): the electric
  // vector turns clockwise as the observer (x right, y up) sees it.
  const Stokes out = LinearRetarder(45.0, 90.0) * Stokes(1, 1, 0, 0);
  EXPECT_CLOSE(out(3), 1.0, kTol);
  EXPECT_CLOSE(out(1), 0.0, 0.0, kTol);
  const Stokes out_minus = LinearRetarder(-45.0, 90.0) * Stokes(1, 1, 0, 0);
  EXPECT_CLOSE(out_minus(3), -1.0, kTol);
  // The field behind the plate, E(t) = Re[E exp(-i w t)] at z = 0: its sense of rotation in the x-y plane.
  const Eigen::Vector2cd e = JonesRetarder(45.0, 90.0) * Eigen::Vector2cd(1.0, 0.0);
  const double dt = 1e-3;
  auto field = [&](double wt) {
    const std::complex<double> ph = std::polar(1.0, -wt);
    return Eigen::Vector2d((e(0) * ph).real(), (e(1) * ph).real());
  };
  const Eigen::Vector2d p0 = field(0.0), p1 = field(dt);
  const double cross = p0.x() * p1.y() - p0.y() * p1.x();  // > 0: counter-clockwise (+x toward +y)
  EXPECT_LT(cross, 0.0) << "V > 0 must be clockwise as seen by the observer";
  EXPECT_CLOSE(StokesOfField(e)(3), 1.0, kTol);
}

TEST(Mueller, FiniteExtinctionPolariserFollowsMalusWithLeakage) {
  // Crossed polarisers with principal transmittances k1, k2 pass (k1 k2 + k2 k1) / 2 of unpolarised light
  // (Chipman 1995, Handbook of Optics II, ch. 22: the diattenuator matrix; common practice).
  const double k1 = 0.9, k2 = 1e-3;
  const Stokes out = LinearPolariser(90.0, k1, k2) * LinearPolariser(0.0, k1, k2) * Stokes(1, 0, 0, 0);
  EXPECT_CLOSE(out(0), k1 * k2, 1e-12);
  const Stokes par = LinearPolariser(0.0, k1, k2) * LinearPolariser(0.0, k1, k2) * Stokes(1, 0, 0, 0);
  EXPECT_CLOSE(par(0), 0.5 * (k1 * k1 + k2 * k2), 1e-12);
  EXPECT_THROW(LinearPolariser(0.0, 0.5, 0.6), std::invalid_argument);
}

TEST(Mueller, RotatorTurnsThePlaneCounterClockwise) {
  // A rotator by 45 deg turns +Q light (along x) into +U (along 45 deg), common practice.
  const Stokes out = Rotator(45.0) * Stokes(1, 1, 0, 0);
  EXPECT_CLOSE(out(2), 1.0, kTol);
  EXPECT_CLOSE(out(1), 0.0, 0.0, kTol);
}

TEST(Realisability, JonesSystemsAndMixturesArePhysical) {
  for (const Mueller& m : {LinearPolariser(20.0, 0.8, 0.05), LinearRetarder(33.0, 71.0), Rotator(5.0),
                           Mueller(0.5 * LinearRetarder(0, 90) + 0.5 * LinearPolariser(30.0)),
                           PartialDepolariser(0.7, 0.4)}) {
    const Realisability r = CheckRealisability(m);
    EXPECT_TRUE(r.physical) << r.eigenvalues.transpose();
    EXPECT_TRUE(r.passive);
  }
  // A non-depolarising system has exactly one non-zero coherency eigenvalue (Cloude 1986).
  const Realisability j = CheckRealisability(LinearRetarder(33.0, 71.0));
  EXPECT_CLOSE(j.eigenvalues(3), 1.0, 1e-12);
  EXPECT_CLOSE(j.eigenvalues(2), 0.0, 0.0, 1e-12);
}

TEST(Realisability, DiagonalMatricesMatchTheCloudeEigenvalues) {
  // diag(1, a, b, c): eigenvalues (1+a+b+c)/4, (1+a-b-c)/4, (1-a+b-c)/4, (1-a-b+c)/4 (Cloude 1986,
  // from memory). diag(1, 1, 1, -1) (the transpose map) is positive but not physical.
  const double a = 0.6, b = 0.3, c = 0.2;
  Mueller m = Eigen::Vector4d(1, a, b, c).asDiagonal();
  Eigen::Vector4d expected((1 + a + b + c) / 4, (1 + a - b - c) / 4, (1 - a + b - c) / 4, (1 - a - b + c) / 4);
  std::sort(expected.data(), expected.data() + 4);
  const Realisability r = CheckRealisability(m);
  for (int i = 0; i < 4; ++i) EXPECT_CLOSE(r.eigenvalues(i), expected(i), 1e-12, 1e-12);
  EXPECT_TRUE(r.physical);
  // With c = -0.2 the last eigenvalue (1 - a - b + c)/4 = -0.025 < 0: not physical.
  EXPECT_FALSE(CheckRealisability(Eigen::Vector4d(1, a, b, -0.2).asDiagonal().toDenseMatrix()).physical);
  EXPECT_FALSE(CheckRealisability(Eigen::Vector4d(1, 1, 1, -1).asDiagonal().toDenseMatrix()).physical);
  // Gain (M00 + |diattenuation row| > 1) is not passive.
  Mueller gain = LinearPolariser(0.0) * 2.5;
  EXPECT_FALSE(CheckRealisability(gain).passive);
  EXPECT_THROW(PartialDepolariser(1.2, 0.5), std::invalid_argument);
}

}  // namespace
}  // namespace zeeline::polarimetry
