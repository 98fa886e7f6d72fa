// zeeline/maps/line_core.hpp -- what the Stokes I profile says about a line's width and saturation.
//
// Every weak-field decision needs the Doppler width of the line and how saturated the line is, and neither
// may be taken from a quantity that saturation biases (the second moment of a saturated line grows with its
// opacity, and the weak-field transverse field shrinks). Both are read here from the shape of the core.
//
// Model (Milne–Eddington, no magneto-optical terms, an absorption line with a Gaussian core): with the
// source function S = S0 + S1 tau and line-to-continuum opacity eta(l) = eta0 exp(-(l - l_c)^2 / w^2),
//   I(l) = S0 + mu S1 / (1 + eta(l))                      (Unno–Rachkovsky solution for I at B = 0;
//                                                          Landi Degl'Innocenti & Landolfi 2004, LL04, sect. 9.8)
// so with the continuum Ic = S0 + mu S1, the line depth d = Ic - I_min = mu S1 eta0 / (1 + eta0), the
// half-depth half-width x_h (|Ic - I| = d/2) and the curvature at the centre I''(l_c):
//   x_h^2 = w^2 ln(2 + eta0),       I''(l_c) = 2 d / (w^2 (1 + eta0)),
//   R := I''(l_c) x_h^2 / (2 d) = ln(2 + eta0) / (1 + eta0)        (derived here from the model above)
// R falls monotonically from ln 2 (optically thin) towards 0 (saturated), so R measured on the data gives the
// saturation index u (the model's eta0) by inverting R (a tabulated start and a Newton step), then
// w = x_h / sqrt(ln(2 + u)) and the surface source function S0 = I_min - d / u. A Voigt core with damping
// makes u come out lower than the true eta0 (by about 2-3x at eta0 = 10-30 with damping 0.15, measured on
// the synthesis of src/synth), which the saturation correction of the weak-field transverse field tolerates
// (weak_field.hpp, tests/maps).
// The curvature is a least-squares parabola through the 5-9 samples around the minimum (the same for
// emission lines with the signs reversed); emission lines are treated as optically thin (u = 0).
// Sampling: on a grid of a few samples per Doppler width the parabola spans +-0.7 w or more, where the higher
// terms of the core are not small, and its curvature comes out high (12-25 % at eta0 = 3-20 with 3 samples
// per w), so R_m is high and u 25-55 % low (tests/maps/weak_field_saturation_test.cpp). With y = x^2 / w^2
// and E = u e^-y the model is I = S0 + mu S1 / (1 + E), whose expansion about the centre
// I = I_min + a2 x^2 + a4 x^4 + a6 x^6 has
//   a4 / a2 = (u - 1) / (2 (1 + u) w^2),   a6 / a2 = (u^2 - 4u + 1) / (6 (1 + u)^2 w^4)   (derived here)
// and a least-squares parabola through samples x_j picks up c2 = a2 + K4 a4 + K6 a6, K_n its x^2 coefficient
// when fitted to (x_j - delta)^n (delta: the fitted vertex). With w^2 = x_h^2 / ln(2 + u), kappa4 = K4 / (2 x_h^2)
// and kappa6 = K6 / (6 x_h^4), the measured ratio R_m = c2 x_h^2 / d satisfies
//   R_m = R(u) C(u),   C(u) = 1 + kappa4 (u - 1) R(u) + kappa6 (u^2 - 4u + 1) R(u)^2
// which SaturationFromSampledCore solves for u on the branch that starts at the plain reading u0 = R^-1(R_m).
// The series is used only where the lift is upwards: u0 > kSampledCoreFrom = 1 (a4 > 0) and
// F(u0) = R_m (C(u0) - 1) > 0. Where u0 crosses either condition F(u0) passes through 0, so the root starts at
// u0 itself and u is continuous; thinner cores keep u0, where the saturation correction of B_T is small
// anyway. On the sampled model: u within 4 % for eta0 = 3-20 at 3 samples per w (against 25-55 % low
// before), w within 1.1 %.
// Requires: the line resolved by >= 5 samples across its core and its depth well above the noise; otherwise
// ok = false and callers fall back to their textbook forms.
#pragma once

#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

struct LineCoreShape {
  bool ok = false;
  bool emission = false;          ///< I above the continuum at the line
  double depth = 0.0;             ///< |Ic - I| at the extremum (data units)
  double extremum_nm = 0.0;       ///< wavelength of the extremum sample
  double extremum_value = 0.0;    ///< I there
  double half_depth_halfwidth_nm = 0.0;
  double saturation = 0.0;        ///< u: the Milne–Eddington eta0 that reproduces the core shape (0 = thin)
  double doppler_width_nm = 0.0;  ///< 1/e half-width of the opacity profile's Gaussian core
  double surface_source = 0.0;    ///< S0 = I_min - depth / u (meaningful when saturation > 0)
};

/// Reads the core of I within `window_halfwidth_nm` of `centre_nm` (0 = whole spectrum).
LineCoreShape MeasureLineCore(const PixelSpectrum& s, double continuum, double centre_nm, double window_halfwidth_nm);
/// The same with the window found from `near_window`, a range of samples close to it (WindowRangeFrom).
LineCoreShape MeasureLineCore(const PixelSpectrum& s, double continuum, double centre_nm, double window_halfwidth_nm,
                              SampleRange near_window);

/// The model relation R(u) = ln(2 + u) / (1 + u) above, and its inverse (u = 0 for R >= ln 2).
double CoreShapeRatio(double saturation);
double SaturationFromCoreShape(double ratio);
/// Plain readings u0 above this are refined for sampling (file comment).
constexpr double kSampledCoreFrom = 1.0;
/// u from a ratio measured with a sampled parabola with the higher terms kappa4, kappa6 (file comment).
double SaturationFromSampledCore(double ratio, double kappa4, double kappa6);

}  // namespace zeeline
