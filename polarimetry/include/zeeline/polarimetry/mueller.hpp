// zeeline/polarimetry/mueller.hpp -- Mueller matrices of ideal optical elements.
//
// Stokes vectors follow docs/conventions.md: Q > 0 along the +x axis, angles counter-clockwise from +x
// toward +y as the observer sees the image, V > 0 for the handedness defined there.
// With c = cos 2theta, s = sin 2theta:
//   linear polariser, axis at theta:   M = 1/2 [[1, c, s, 0], [c, c^2, cs, 0], [s, cs, s^2, 0], [0, 0, 0, 0]]
//   linear retarder, fast axis theta, retardance delta:
//     [[1, 0, 0, 0],
//      [0, c^2 + s^2 cos d, cs (1 - cos d), -s sin d],
//      [0, cs (1 - cos d), s^2 + c^2 cos d, c sin d],
//      [0, s sin d, -c sin d, cos d]]
//   rotation of the reference frame by alpha: R(alpha) = [[1,0,0,0],[0,cos2a,sin2a,0],[0,-sin2a,cos2a,0],[0,0,0,1]]
// Source: E. Collett, Field Guide to Polarization (SPIE 2005), pp. 20-24; del Toro Iniesta (2003),
// Introduction to Spectropolarimetry, ch. 4.
#pragma once

#include <Eigen/Dense>

namespace zeeline::polarimetry {

using Mueller = Eigen::Matrix4d;
using Stokes = Eigen::Vector4d;

Mueller LinearPolariser(double axis_deg);
Mueller LinearRetarder(double fast_axis_deg, double retardance_deg);
Mueller FrameRotation(double angle_deg);

}  // namespace zeeline::polarimetry
