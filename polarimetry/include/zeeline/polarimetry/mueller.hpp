// zeeline/polarimetry/mueller.hpp -- Mueller matrices of optical elements and their composition.
//
// Stokes vectors follow docs/conventions.md: Q > 0 along the +x axis, angles counter-clockwise from +x
// toward +y as the observer sees the image, V > 0 for the handedness defined there (zeeline's V, which
// is the IAU 1974 negative sense: the electric vector turns clockwise as the observer sees it).
// With c = cos 2theta, s = sin 2theta:
//   linear polariser, axis at theta, principal intensity transmittances k1 (along the axis) and k2
//   (across it; k2 = 0 for an ideal polariser, extinction ratio k2/k1), r = sqrt(k1 k2):
//     1/2 [[k1+k2,        (k1-k2) c,               (k1-k2) s,               0  ],
//          [(k1-k2) c,    (k1+k2) c^2 + 2 r s^2,   (k1+k2-2r) c s,          0  ],
//          [(k1-k2) s,    (k1+k2-2r) c s,          (k1+k2) s^2 + 2 r c^2,   0  ],
//          [0,            0,                       0,                       2 r]]
//   linear retarder, fast axis theta, retardance delta:
//     [[1, 0, 0, 0],
//      [0, c^2 + s^2 cos d, cs (1 - cos d), -s sin d],
//      [0, cs (1 - cos d), s^2 + c^2 cos d, c sin d],
//      [0, s sin d, -c sin d, cos d]]
//     so a quarter-wave plate (d = 90 deg) with its fast axis at +45 deg turns +Q into +V (zeeline sign)
//     and a fast axis at 0 deg turns +U into -V.
//   rotator (optical activity, plane of polarisation turned by rho counter-clockwise):
//     [[1,0,0,0],[0,cos2r,-sin2r,0],[0,sin2r,cos2r,0],[0,0,0,1]]
//   rotation of the reference frame by alpha: R(alpha) = [[1,0,0,0],[0,cos2a,sin2a,0],[0,-sin2a,cos2a,0],[0,0,0,1]]
//   partial depolariser: diag(1, p_lin, p_lin, p_circ), 0 <= p <= 1 (1 = no depolarisation).
// Composition in light order: light through M1 first, then M2, ... has M = Mn ... M2 M1.
// Source: E. Collett, Field Guide to Polarization (SPIE 2005), pp. 20-24; R.A. Chipman, "Polarimetry",
// Handbook of Optics vol. II (2nd ed. 1995), ch. 22, table 2 (diattenuator with k1, k2); del Toro Iniesta
// (2003), Introduction to Spectropolarimetry, ch. 4. The Jones route (jones.hpp) gives the same matrices
// (tests/polarimetry/mueller_test.cpp).
#pragma once

#include <vector>

#include <Eigen/Dense>

namespace zeeline::polarimetry {

using Mueller = Eigen::Matrix4d;
using Stokes = Eigen::Vector4d;

/// Ideal linear polariser (k1 = 1, k2 = 0).
Mueller LinearPolariser(double axis_deg);
/// Linear polariser with finite extinction: principal intensity transmittances 0 <= k2 <= k1 <= 1
/// (throws std::invalid_argument outside that range).
Mueller LinearPolariser(double axis_deg, double k_parallel, double k_perpendicular);
Mueller LinearRetarder(double fast_axis_deg, double retardance_deg);
/// Optical rotator turning the plane of linear polarisation by rotation_deg counter-clockwise.
Mueller Rotator(double rotation_deg);
Mueller FrameRotation(double angle_deg);
/// diag(1, linear, linear, circular); factors in [0, 1] (throws std::invalid_argument otherwise).
Mueller PartialDepolariser(double linear_factor, double circular_factor);

/// M = elements.back() * ... * elements.front(): elements listed in the order the light meets them.
Mueller ComposeInLightOrder(const std::vector<Mueller>& elements);

}  // namespace zeeline::polarimetry
