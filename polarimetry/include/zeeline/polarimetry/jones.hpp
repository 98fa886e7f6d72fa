// zeeline/polarimetry/jones.hpp -- Jones matrices of non-depolarising elements and the Jones -> Mueller
// route, used to check the closed-form Mueller matrices (mueller.hpp).
//
// Field: E(z, t) = Re[(Ex, Ey) exp(i(kz - wt))], light travelling along +z toward the observer, x right
// and y up as the observer sees the image (docs/conventions.md). A retarder delays its slow axis: with
// the fast axis along x, J = diag(1, exp(i delta)). Elements at angle theta: J(theta) = R(theta) J0 R(-theta),
// R(theta) = [[cos, -sin], [sin, cos]]; a polariser has J0 = diag(sqrt(k1), sqrt(k2)); a rotator is R(rho).
// Stokes from the coherency vector c = E (x) E* = (Ex Ex*, Ex Ey*, Ey Ex*, Ey Ey*):
//   I = |Ex|^2 + |Ey|^2, Q = |Ex|^2 - |Ey|^2, U = 2 Re(Ex Ey*), V = 2 Im(Ex Ey*)
// i.e. S = A c with A = [[1,0,0,1],[1,0,0,-1],[0,1,1,0],[0,-i,i,0]]. With this time factor V > 0 is light
// whose electric vector turns clockwise as seen by the observer: zeeline's V (the IAU 1974 negative
// sense, docs/conventions.md). A Jones matrix J maps c to (J (x) J*) c, so
//   M = A (J (x) J*) A^-1
// (Azzam & Bashara, Ellipsometry and Polarized Light (1977), sect. 2.11; Chipman, Handbook of Optics
// vol. II (1995), ch. 22).
#pragma once

#include <complex>

#include <Eigen/Dense>

#include "zeeline/polarimetry/mueller.hpp"

namespace zeeline::polarimetry {

using Jones = Eigen::Matrix2cd;

Jones JonesPolariser(double axis_deg, double k_parallel = 1.0, double k_perpendicular = 0.0);
Jones JonesRetarder(double fast_axis_deg, double retardance_deg);
Jones JonesRotator(double rotation_deg);

/// The matrix A of the header (Stokes = A * coherency vector).
Eigen::Matrix4cd CoherencyToStokes();

/// M = A (J (x) J*) A^-1 (real up to rounding; the imaginary part is dropped).
Mueller MuellerFromJones(const Jones& jones);

/// Stokes vector of a field (Ex, Ey) in zeeline's convention.
Stokes StokesOfField(const Eigen::Vector2cd& field);

}  // namespace zeeline::polarimetry
