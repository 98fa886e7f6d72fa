// zeeline/atomic/zeeman_pattern.hpp -- the full anomalous Zeeman pattern of a dipole transition.
//
// For lower level (J_l, g_l) and upper level (J_u, g_u) each component M_u -> M_l with
// q = M_l - M_u in {-1, 0, +1} has
//   shift (Lorentz units, positive toward the red) = g_l M_l - g_u M_u
//   strength S_q = 3 * (J_u J_l 1 ; -M_u M_l -q)^2, which sums to 1 over the components of each q
// (Landi Degl'Innocenti & Landolfi 2004, eqs. 3.13-3.14). The Lorentz unit is
// Delta lambda_B = e lambda0^2 B / (4 pi m_e c) (see core/units.hpp).
// Components with q = +1 are the red sigma group ("sigma_r": mean shift +g_eff), q = -1 the blue sigma
// group ("sigma_b"), q = 0 the pi group.
//
// Effective Landé factor and second-order transverse factor (LL04 eqs. 3.44 and 3.47):
//   gbar = (g_u + g_l)/2,  delta = g_u - g_l,
//   s = J_u(J_u+1) + J_l(J_l+1),  d = J_u(J_u+1) - J_l(J_l+1)
//   g_eff = gbar + delta d / 4
//   G     = g_eff^2 - delta^2 (16 s - 7 d^2 - 4) / 80
// Sum rules (checked in the tests): the strength-weighted mean shift of the q = +1 group equals g_eff,
// and (<shift^2>_{+1} + <shift^2>_{-1})/2 - <shift^2>_0 = G.
// The transition J_l = 0 -> J_u = 0 is forbidden and |J_u - J_l| > 1 is not a dipole transition: both
// throw LevelParseError.
#pragma once

#include <string>
#include <vector>

#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"

namespace zeeline {

struct ZeemanComponent {
  double M_upper = 0.0;
  double M_lower = 0.0;
  int q = 0;                   ///< M_lower - M_upper: +1 red sigma, 0 pi, -1 blue sigma
  double shift_lorentz = 0.0;  ///< g_l M_l - g_u M_u, in Lorentz units, positive toward the red
  double strength = 0.0;       ///< normalised so that each q group sums to 1
};

struct ZeemanPattern {
  int two_J_lower = 0;
  int two_J_upper = 0;
  double g_lower = 0.0;
  double g_upper = 0.0;
  double g_eff = 0.0;  ///< effective Landé factor (LL04 eq. 3.44)
  double G = 0.0;      ///< second-order transverse factor (LL04 eq. 3.47)
  std::vector<ZeemanComponent> components;  ///< ordered by q (-1, 0, +1) then by shift
};

/// Pattern from angular momenta (doubled) and g factors.
ZeemanPattern ComputeZeemanPattern(int two_J_lower, double g_lower, int two_J_upper, double g_upper);

/// Pattern of a transition between two parsed levels (g from LandeG with the options).
ZeemanPattern ComputeZeemanPattern(const Level& lower, const Level& upper, const LandeOptions& options = {});

/// Closed-form g_eff and G (same formulas as in ComputeZeemanPattern).
double EffectiveLande(int two_J_lower, double g_lower, int two_J_upper, double g_upper);
double SecondOrderTransverseG(int two_J_lower, double g_lower, int two_J_upper, double g_upper);

}  // namespace zeeline
