// zeeline/synth/voigt.hpp -- the Voigt function H(a, v) and the Faraday-Voigt function F(a, v).
//
// Definitions (Landi Degl'Innocenti & Landolfi 2004, hereafter LL04, sect. 5.4; del Toro Iniesta 2003,
// sect. 6.4), with z = v + i a, a >= 0 the damping and v the distance from line centre, both in Doppler
// widths:
//   w(z)    = exp(-z^2) erfc(-i z)              (Faddeeva function, Abramowitz & Stegun 7.1.3)
//   H(a, v) = Re w(z) = (a / pi) Int exp(-y^2) / ((v - y)^2 + a^2) dy
//   F(a, v) = Im w(z) / 2 = (1 / (2 pi)) Int (v - y) exp(-y^2) / ((v - y)^2 + a^2) dy
// so that w(v + i a) = H + 2 i F. Normalisation: H(0, 0) = 1 and Int H dv = sqrt(pi); at B = 0 the line
// absorption is eta0 * H(a, v) (docs/conventions.md). F is odd in v and positive for v > 0 (the
// dispersion profile: positive on the red side of the component).
// Limits: H(0, v) = exp(-v^2), 2 F(0, v) = (2 / sqrt(pi)) Dawson(v); for |v| >> 1, H ~ a / (sqrt(pi) v^2)
// and F ~ 1 / (2 sqrt(pi) v).
//
// Derivatives. w is analytic, w'(z) = -2 z w(z) + 2 i / sqrt(pi) (Abramowitz & Stegun 7.1.20), and
// d/da = i d/dz, which gives
//   dH/dv = -2 v H + 4 a F          dF/dv = -2 v F - a H + 1 / sqrt(pi)
//   dH/da = -dF/dv * 2 = 4 v F + 2 a H - 2 / sqrt(pi)
//   dF/da = dH/dv / 2 = -v H + 2 a F
// (the last two are the Cauchy-Riemann relations).
//
// Two paths:
//   * VoigtReference: libcerf's Faddeeva function (relative accuracy ~1e-13), derivatives from the
//     identity above. For tests and for anything that is not a hot loop.
//   * VoigtFast: Humlicek (1982, JQSRT 27, 437) "W4" four-region rational approximation; its derivatives
//     are the exact derivatives of the approximant (not the identity, which cancels catastrophically in the
//     far wings), so the Jacobian is consistent with the function it differentiates.
//     Measured against scipy.special.wofz over a in [1e-4, 10], |v| <= 50 (tests/synth/voigt_test.cpp,
//     129k points): max |dH|/H = 8.6e-5 (near a = 0.024, v = 1.0), max |dF| / (|w|/2) = 4.6e-5,
//     max |dw'| / |w'| = 3.5e-4 for the derivatives.
// Both paths require a >= 0 (not checked in the hot path).
#pragma once

namespace zeeline {

/// H, F and their first derivatives at one (a, v).
struct VoigtValue {
  double H = 0.0;
  double F = 0.0;
  double dH_dv = 0.0;
  double dH_da = 0.0;
  double dF_dv = 0.0;
  double dF_da = 0.0;
};

/// The complex form used by hot loops: w = H + 2iF and w' = dw/dz (so dw/dv = w', dw/da = i w').
struct FaddeevaValue {
  double w_re = 0.0;
  double w_im = 0.0;
  double dw_re = 0.0;
  double dw_im = 0.0;
};

enum class VoigtMethod { kFast, kReference };

/// Accurate path (libcerf).
VoigtValue VoigtReference(double a, double v);
/// Fast path (Humlicek W4 with exact derivatives of the approximant).
VoigtValue VoigtFast(double a, double v);

/// w(v + i a) and w'(z) by the chosen method.
FaddeevaValue FaddeevaFast(double a, double v);
FaddeevaValue FaddeevaReference(double a, double v);

/// Convenience: H(a, v) and F(a, v) by the accurate path.
double VoigtH(double a, double v);
double FaradayVoigtF(double a, double v);

/// "fast" / "reference" and back (throws OptionError for an unknown name).
const char* VoigtMethodName(VoigtMethod method);
VoigtMethod ParseVoigtMethod(const char* name);

}  // namespace zeeline
