// Voigt and Faraday-Voigt functions: libcerf reference path and Humlicek (1982) W4 fast path.
#include "zeeline/synth/voigt.hpp"

#include <cerf.h>

#include <cmath>
#include <cstring>
#include <string>

#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kInvSqrtPi = 0.56418958354775628695;  // 1 / sqrt(pi)

// Minimal complex arithmetic: std::complex multiplication compiles to a libgcc call (__muldc3, for
// C99 Annex G infinities) unless -fcx-limited-range is set; the hot loop does not need that.
struct Cx {
  double re, im;
};
inline Cx operator+(Cx a, Cx b) { return {a.re + b.re, a.im + b.im}; }
inline Cx operator-(Cx a, Cx b) { return {a.re - b.re, a.im - b.im}; }
inline Cx operator*(Cx a, Cx b) { return {a.re * b.re - a.im * b.im, a.re * b.im + a.im * b.re}; }
inline Cx operator*(double s, Cx a) { return {s * a.re, s * a.im}; }
inline Cx operator+(double s, Cx a) { return {s + a.re, a.im}; }
inline Cx operator/(Cx a, Cx b) {
  const double inv = 1.0 / (b.re * b.re + b.im * b.im);
  return {(a.re * b.re + a.im * b.im) * inv, (a.im * b.re - a.re * b.im) * inv};
}

// Polynomial p(x) = sum c[k] x^k and its derivative by Horner's rule (coefficients low to high).
template <int N>
inline void Horner(const double (&c)[N], Cx x, Cx& p, Cx& dp) {
  p = {c[N - 1], 0.0};
  dp = {0.0, 0.0};
  for (int k = N - 2; k >= 0; --k) {
    dp = dp * x + p;
    p = p * x + Cx{c[k], 0.0};
  }
}

// Humlicek (1982) W4 coefficients, regions III and IV (t = a - i v, u = t^2).
constexpr double kP3[5] = {16.4955, 20.20933, 11.96482, 3.778987, 0.5642236};
constexpr double kQ3[6] = {16.4955, 38.82363, 39.27121, 21.69274, 6.699398, 1.0};
constexpr double kP4[7] = {36183.31, -3321.9905, 1540.787, -219.0313, 35.76683, -1.320522, 0.56419};
constexpr double kQ4[8] = {32066.6, -24322.84, 9022.228, -2186.181, 364.2191, -61.57037, 1.841439, -1.0};

}  // namespace

FaddeevaValue FaddeevaFast(double a, double v) {
  // W4 works with t = a - i v = -i z; w is computed as a function of t and dw/dt is the exact derivative
  // of the approximant. Then dw/dz = -i dw/dt.
  const Cx t{a, -v};
  const double s = std::fabs(v) + a;
  Cx w, dw_dt;
  if (s >= 15.0) {
    // Region I: one-pole asymptotic form  w = t / sqrt(pi) / (1/2 + t^2).
    const Cx u = t * t;
    const Cx den = 0.5 + u;
    w = kInvSqrtPi * t / den;
    dw_dt = kInvSqrtPi * (Cx{0.5, 0.0} - u) / (den * den);
  } else if (s >= 5.5) {
    // Region II: w = t (1.410474 + u / sqrt(pi)) / (0.75 + u (3 + u)).
    const Cx u = t * t;
    const Cx num = t * (1.410474 + 0.5641896 * u);
    const Cx dnum = 1.410474 + (3.0 * 0.5641896) * u;
    const Cx den = 0.75 + u * (3.0 + u);
    const Cx dden = t * (6.0 + 4.0 * u);
    w = num / den;
    dw_dt = (dnum * den - num * dden) / (den * den);
  } else if (a >= 0.195 * std::fabs(v) - 0.176) {
    // Region III: rational function of t.
    Cx p, dp, q, dq;
    Horner(kP3, t, p, dp);
    Horner(kQ3, t, q, dq);
    w = p / q;
    dw_dt = (dp * q - p * dq) / (q * q);
  } else {
    // Region IV: w = exp(u) - t P(u) / Q(u).
    const Cx u = t * t;
    Cx p, dp, q, dq;
    Horner(kP4, u, p, dp);
    Horner(kQ4, u, q, dq);
    const double e = std::exp(u.re);
    const Cx expu{e * std::cos(u.im), e * std::sin(u.im)};
    const Cx r = p / q;
    const Cx dr_du = (dp * q - p * dq) / (q * q);
    w = expu - t * r;
    // d/dt [exp(u) - t R(u)] = 2 t exp(u) - R - 2 u R'(u)
    dw_dt = 2.0 * (t * expu) - r - 2.0 * (u * dr_du);
  }
  // dw/dz = -i dw/dt
  return {w.re, w.im, dw_dt.im, -dw_dt.re};
}

FaddeevaValue FaddeevaReference(double a, double v) {
  const double wr = re_w_of_z(v, a);
  const double wi = im_w_of_z(v, a);
  // w' = -2 z w + 2 i / sqrt(pi), z = v + i a
  const double dr = -2.0 * (v * wr - a * wi);
  const double di = -2.0 * (v * wi + a * wr) + 2.0 * kInvSqrtPi;
  return {wr, wi, dr, di};
}

namespace {
VoigtValue FromFaddeeva(const FaddeevaValue& f) {
  VoigtValue r;
  r.H = f.w_re;
  r.F = 0.5 * f.w_im;
  r.dH_dv = f.dw_re;         // dw/dv = w'
  r.dF_dv = 0.5 * f.dw_im;
  r.dH_da = -f.dw_im;        // dw/da = i w'
  r.dF_da = 0.5 * f.dw_re;
  return r;
}
}  // namespace

VoigtValue VoigtReference(double a, double v) { return FromFaddeeva(FaddeevaReference(a, v)); }
VoigtValue VoigtFast(double a, double v) { return FromFaddeeva(FaddeevaFast(a, v)); }

double VoigtH(double a, double v) { return re_w_of_z(v, a); }
double FaradayVoigtF(double a, double v) { return 0.5 * im_w_of_z(v, a); }

const char* VoigtMethodName(VoigtMethod method) {
  return method == VoigtMethod::kFast ? "fast" : "reference";
}

VoigtMethod ParseVoigtMethod(const char* name) {
  if (std::strcmp(name, "fast") == 0) return VoigtMethod::kFast;
  if (std::strcmp(name, "reference") == 0) return VoigtMethod::kReference;
  throw OptionError(std::string("Voigt method '") + name + "' is not one of fast, reference");
}

}  // namespace zeeline
