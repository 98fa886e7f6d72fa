// zeeline/polarimetry/realisability.hpp -- is a 4 x 4 real matrix the Mueller matrix of a physical
// (passive, possibly depolarising) optical system?
//
// Criterion (Cloude 1986, Proc. SPIE 1166, 177; Gil 2007, J. Eur. Opt. Soc. 2, 07002): M is an incoherent
// sum of non-depolarising (Jones) systems if and only if its coherency matrix H is positive
// semi-definite. With A of jones.hpp, N = A^-1 M A is the superoperator acting on E (x) E*; reshuffling
// its indices, H[(2a+c), (2b+d)] = N[(2a+b), (2c+d)] / 2, which equals (1/2) vec(J) vec(J)^H for a
// Jones matrix J and sums to trace H = M00. For diag(1, a, b, c) the eigenvalues of H are
// (1+a+b+c)/4, (1+a-b-c)/4, (1-a+b-c)/4, (1-a-b+c)/4 (ibid.).
// Passivity (no gain for any input: M00 + sqrt(M01^2 + M02^2 + M03^2) <= 1) is reported separately.
#pragma once

#include <Eigen/Dense>

#include "zeeline/polarimetry/mueller.hpp"

namespace zeeline::polarimetry {

struct Realisability {
  Eigen::Vector4d eigenvalues;  ///< of H, ascending; sum = M00
  bool physical = false;        ///< every eigenvalue >= -tolerance * M00
  bool passive = false;         ///< max transmittance M00 + |(M01, M02, M03)| <= 1 + tolerance
  double max_transmittance = 0.0;
};

Realisability CheckRealisability(const Mueller& m, double tolerance = 1e-9);

}  // namespace zeeline::polarimetry
