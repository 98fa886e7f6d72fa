// zeeline/broadening/line_set_model.hpp -- Stokes I (and V) of several optically thin lines of one species
// broadened by temperature, a shared Lorentzian width, the instrument and (optionally) a magnetic field acting
// through each line's full Zeeman pattern: the model `zeeline broadening diagnose` fits.
//
// For line i with rest wavelength l_i, Zeeman pattern {q_k, s_k, S_k} (atomic/zeeman_pattern.hpp) and signed
// area A_i (positive = emission, negative = absorption):
//   I(l) = c_j + d_j (l - l_j) + sum_i A_i sum_k S_k wI(q_k) P_i(l - l_i (1 + v/c) - s_k C_i B)
//   V(l) =                      sum_i A_i sum_k S_k wV(q_k) P_i(l - l_i (1 + v/c) - s_k C_i B)
//   wI(0) = sin^2(g) / 2,  wI(+-1) = (1 + cos^2 g) / 4,   wV(+-1) = +-cos(g) / 2,  wV(0) = 0
// (thin-line emission coefficients of the Zeeman components, LL04 sect. 6.6; each q group's strengths sum to
// 1, so sum wI = 1 and A_i is the line's area), c_j, d_j a local continuum for each fitting window j,
// C_i = Delta lambda_B(l_i, 1 G) the Lorentz unit per gauss (core/units.hpp), B >= 0 and inclination g in
// degrees. Signs follow docs/conventions.md: q = +1 is the red sigma group, and for a field toward the
// observer (g < 90 deg) V > 0 in the blue wing of an absorption line (A_i < 0) and V < 0 there for emission.
// Each component profile has unit area:
//   P_i(x) = H(a_i, x / w_i) / (sqrt(pi) w_i),   w_i = sqrt((l_i u / c)^2 + w_instr^2),   a_i = gamma / w_i
// with u = sqrt(2kT/m + xi^2) the shared most-probable speed (the Doppler width of docs/conventions.md is
// l_i u / c), gamma the shared Lorentzian half width at half maximum in nm, w_instr = FWHM_instr/(2 sqrt(ln 2))
// a Gaussian instrument profile, which combines with the Doppler Gaussian in quadrature (Voigt convolved with
// Gaussian = Voigt, e.g. Gray 2005 ch. 11). H is the Voigt function (synth/voigt.hpp, Humlicek W4 path).
// The model is linear in A_i, c_j, d_j; the rest are the nonlinear parameters.
#pragma once

#include <vector>

#include "zeeline/atomic/zeeman_pattern.hpp"

namespace zeeline {

struct ModelLine {
  double rest_wavelength_nm = 0.0;
  ZeemanPattern pattern;
};

/// The nonlinear parameters.
struct LineSetShape {
  double speed_kms = 1.0;        ///< u = sqrt(2kT/m + xi^2), > 0
  double lorentz_hwhm_nm = 0.0;  ///< gamma >= 0
  double vlos_kms = 0.0;         ///< positive = redshift
  double field_gauss = 0.0;      ///< >= 0
  double inclination_deg = 90.0; ///< 0..180
};

/// Unit-area line profiles (columns) of each line at the given wavelengths for I and V:
/// I(l) = sum_i A_i profile_I[i](l), V likewise. Vectors are resized to lines.size() x wavelengths.size().
/// reach_nm > 0 skips samples farther than that from a line's rest wavelength (its profile is taken as 0
/// there: a Lorentzian wing of HWHM gamma has fallen to gamma / (pi reach^2) per nm of area).
void LineSetProfiles(const std::vector<ModelLine>& lines, const LineSetShape& shape, double instrument_fwhm_nm,
                     const std::vector<double>& wavelength_nm, std::vector<std::vector<double>>& profile_I,
                     std::vector<std::vector<double>>& profile_V, double reach_nm = 0.0);

}  // namespace zeeline
