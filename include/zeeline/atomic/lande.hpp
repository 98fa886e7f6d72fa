// zeeline/atomic/lande.hpp -- Landé g factors of levels in LS, jK and jj coupling.
//
// Vector-model formulas with an electron spin g-factor g_s and orbital g_L (= 1, the finite nuclear-mass
// correction is neglected). For angular momenta a and b coupled to c (c = a + b), the projection theorem
// gives
//   g(c) = g_a [c(c+1) + a(a+1) - b(b+1)] / [2c(c+1)] + g_b [c(c+1) - a(a+1) + b(b+1)] / [2c(c+1)].
//   LS:  a = L (g_L = 1), b = S (g_s)                      -> g_J
//        with g_s = 2 this is g = 3/2 + [S(S+1) - L(L+1)] / [2J(J+1)]
//   jK:  K = J1 + l: a = J1 (core g from LS), b = l (g_L); then J = K + s: a = K, b = s (g_s)
//   jj:  J = J1 + J2, each subsystem's g from its own LS term
// Source: Condon & Shortley (1935) ch. XVI; Landi Degl'Innocenti & Landolfi (2004), eq. (3.8) and
// sect. 3.4 for the other couplings. A level with J = 0 has no Zeeman splitting; its g is reported as 0
// (common practice: the value never enters a pattern because M = 0 only).
// g_s defaults to CODATA 2018 |g_e| = 2.00231930436; LandeOptions::g_spin = 2 gives the textbook values.
#pragma once

#include <string>

#include "zeeline/atomic/level.hpp"
#include "zeeline/core/constants.hpp"

namespace zeeline {

struct LandeOptions {
  double g_spin = constants::kElectronSpinG;  ///< electron spin g-factor (2 for textbook values)
  double g_orbital = 1.0;                     ///< orbital g-factor

  /// Empty string when valid, otherwise a message naming the field, its value and the allowed range.
  std::string Validate() const;
};

/// g of an LS term with the given options (J = 0 gives 0).
double LandeLS(const LsTerm& term, const LandeOptions& options = {});

/// g of a parsed level: the measured value when the level carries one, otherwise the coupling formula.
double LandeG(const Level& level, const LandeOptions& options = {});

/// Projection-theorem factor: the g of c = a + b for sub-system g-factors g_a and g_b (doubled momenta).
double CoupledG(int two_a, double g_a, int two_b, double g_b, int two_c);

}  // namespace zeeline
