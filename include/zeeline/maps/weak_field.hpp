// zeeline/maps/weak_field.hpp -- the weak-field approximation (WFA) for one pixel.
//
// Valid while the Zeeman splitting is small against the line width, g_eff Delta lambda_B << Delta lambda_D
// (Landi Degl'Innocenti & Landolfi 2004, hereafter LL04, sect. 9.6). With C = Delta lambda_B / B (the
// Lorentz unit per gauss at the rest wavelength, core/units.hpp) and the signs of docs/conventions.md:
//   V(l)  = -C g_eff B_LOS dI/dl                                         (LL04 eq. 9.77)
//   Q(l)  = -(1/4) C^2 G B_T^2 cos 2chi d2I/dl2,  U likewise with sin 2chi   (LL04 eq. 9.83; line core)
//   Q(l)  = +(3/4) C^2 G B_T^2 cos 2chi (1/(l - l_c)) dI/dl                  (LL04 eq. 9.85; line wings)
// B_LOS is the linear least-squares solution of the first relation over the fit window,
//   B_LOS = -sum(V D) / (C g_eff sum(D^2)),  D = dI/dl,
//   var(B_LOS) = (sigma_V^2 + (C g_eff B_LOS)^2 sigma_D^2) / (C g_eff)^2 / sum(D^2)
// where sigma_D is the noise of the derivative (sigma_I times the stencil gain, spectral_derivative.hpp).
// The transverse relations are fitted the same way for a_Q = B_T^2 cos 2chi and a_U = B_T^2 sin 2chi:
//   B_T = (a_Q^2 + a_U^2)^(1/4),  chi = atan2(a_U, a_Q) / 2 in [0, 180) deg,
//   sigma(B_T) = sigma(B_T^2) / (2 B_T) by first-order propagation, which is
// honest only when B_T^2 is well above sigma_a (the noise bias of B_T is documented in docs/methods.md).
//
// Core and wings for B_T: the second-derivative relation follows from a Taylor expansion of the
// absorption profile and holds for saturated lines only in the line core; in the wings of a line formed
// with damping wings the profile goes as (l - l_c)^-2 and the relation becomes the wing form above
// (LL04 sect. 9.6). TransverseRegion::kCore fits |l - l_c| <= core_halfwidth_nm with the second-derivative
// form, kWings fits |l - l_c| >= wing_start_nm with the wing form (default start: 4.8 Doppler widths of the
// line, measured from I by line_core.hpp; chosen by measurement, not from a source: from there out the wing
// form returned B_T within +3.5 % for eta0 = 0.5, 5 and 30 in tests/maps/transverse_saturation_test.cpp,
// docs/methods.md), kCoreAndWings stacks both into one least-squares problem, and
// kWholeLine applies the second-derivative form everywhere (the textbook fit, which saturated lines bias:
// -75 % at eta0 = 30, tests/maps/transverse_saturation_test.cpp).
// kCorrected (the default) keeps the whole line but corrects the second-derivative form for saturation.
// In a Milne–Eddington atmosphere without magneto-optical terms, to second order in the splitting,
//   I = S0 + mu S1 / (1 + eta_I),  Q = -mu S1 eta_Q / (1 + eta_I)^2,  eta_Q = -(1/4) C^2 G B_T^2 cos 2chi eta_I''
// (LL04 sect. 9.8 for the solution, sect. 9.6 for the expansion), and eliminating eta_I with I gives
//   Q = -(1/4) C^2 G B_T^2 cos 2chi [ I'' - 2 I'^2 / (I - S0) ]               (derived here)
// which is the textbook form when the line is optically thin (I - S0 >> |I - Ic|). S0 comes from the core
// shape (line_core.hpp); emission lines and lines whose core cannot be measured use the textbook form.
// Measured on the synthesis (tests/maps/trust_check.py): median +1.1 % on a cube of eta0 = 3-10, 150-400 G,
// where the textbook fit is 31 % low.
// Model accuracy of the corrected form: the saturation index comes from the core shape, which Voigt damping
// bends (line_core.hpp), so the corrected B_T runs high by an amount the noise error does not know of.
// Measured on noiseless Milne–Eddington syntheses of Fe I 630.25 nm (w_D = 3 pm, B_T 60-140 G, eta0 = 3-20;
// tests/maps/weak_field_saturation_test.cpp) at 3 samples per Doppler width: -1 to +2 % without damping,
// +2 to +5 % at damping 0.15, +5 to +9 % at 0.3 (at 12 samples per w: -2 to +6 %). The corrected B_T therefore
// carries a model term, `corrected_model_error` (default 5 %: 2 sigma cover the largest bias measured) times
// B_T, added in quadrature to its noise error (and 2x that fraction of B_T^2 to sigma(B_T^2), which |B| and the
// inclination use); the detection test (btrans_snr) and the debiasing stay noise-only. On the mixed-field
// bench cube (tests/bench/map_speed.sh, noise 1e-3) the unflagged weak-field pixels with |B_T pull| > 3 went
// from 21 of 393 (mean pull +1.16) to 0 of 350 (mean +0.34, sd 0.79) with this term and the sampled-core
// reading of line_core.hpp.
//
// Noise bias of B_T: a = (a_Q, a_U) is unbiased but B_T^2 = |a| is not (a Rice-distributed length). The
// reported B_T uses the debiased length |a|_0 = sqrt(max(|a|^2 - s^2, 0)) (Wardle & Kronberg 1974, ApJ 194,
// 249, for the degree of linear polarisation), s the rms of sigma(a_Q), sigma(a_U), and
//   sigma(B_T) = s / sqrt(4 max(|a|_0 - 0.8 s, 0) + 0.8 s)
// i.e. the first-order sigma(|a|)/(2 B_T) at high signal, finite at |a|_0 = 0, and evaluated 0.8 s below the
// estimate so that an upward noise excursion does not shrink its own error bar (B_T = sqrt|a| is concave).
// The constants were chosen by Monte Carlo (2-D Gaussian a, 4e5 draws per point): pull widths
// (B_T - truth)/sigma are 0.86-1.04 for |a|_true/s = 0.3-20 and 1.33 at exactly zero true B_T, and pulls
// beyond 5 (and 20 %) occur in < 3e-4 of draws for |a|_true/s >= 0.5 (tests/maps/weak_field_noise_test.cpp).
// The azimuth is NaN where the debiased length is 0.
//
// Model consistency: the result carries the reduced chi2 of V against the fitted V model and of Q, U against
// the fitted transverse model (noise of the data and of the derivative of I), which the regime decision
// (weak_field_regime.hpp) uses to test whether the weak-field model describes the observed shapes at all.
#pragma once

#include <cmath>
#include <string>
#include <vector>

#include "zeeline/maps/line_core.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"
#include "zeeline/maps/spectral_derivative.hpp"

namespace zeeline {

enum class TransverseRegion { kCorrected, kCore, kWings, kCoreAndWings, kWholeLine };

std::string ToString(TransverseRegion r);
/// "corrected", "core", "wings", "core+wings", "whole"; throws OptionError otherwise.
TransverseRegion TransverseRegionFromString(const std::string& text);

struct WeakFieldOptions {
  double rest_wavelength_nm = 0.0;    ///< required; same frame as the data
  double g_eff = 0.0;                 ///< effective Landé factor (required, non-zero)
  double G = 0.0;                     ///< second-order transverse factor (needed for B_T)
  double window_halfwidth_nm = 0.0;   ///< fit window around the rest wavelength; 0 = whole spectrum
  TransverseRegion transverse = TransverseRegion::kCorrected;
  double core_halfwidth_nm = 0.0;     ///< kCore/kCoreAndWings: |l - l_c| <= this; 0 = whole window
  double wing_start_nm = 0.0;         ///< kWings/kCoreAndWings: |l - l_c| >= this; 0 = 4.8 Doppler widths (line_core.hpp)
  /// kCorrected with a measured core: 1-sigma relative model accuracy of B_T, added in quadrature to its noise
  /// error (the file comment); 0 = noise only. In [0, 0.2]: more would let the model term decide the
  /// sigma-based thresholds that read B_TRANS_SIGMA from the maps (quicklook fading, disambiguation).
  double corrected_model_error = 0.05;

  std::string Validate() const;
};

struct WeakFieldResult {
  double blos_gauss = 0.0, blos_err_gauss = 0.0;
  double btrans_gauss = 0.0, btrans_err_gauss = 0.0;
  double azimuth_deg = 0.0, azimuth_err_deg = 0.0;
  double line_centre_nm = 0.0;  ///< observed centroid used for the core/wing split
  LineCoreShape core;           ///< width and saturation of the line (line_core.hpp)
  double chi2_v = std::nan(""), chi2_qu = std::nan("");  ///< reduced chi2 of the V and Q,U models
  int dof_v = 0, dof_qu = 0;
  double noise_dof = 0.0;       ///< of the noise estimate the chi2 values are scaled by (pixel_spectrum.hpp)
  double btrans_snr = 0.0;      ///< |a| / s: signal-to-noise of B_T^2 (before debiasing; noise only)
  double btrans_sq_err_gauss2 = 0.0;  ///< sigma(B_T^2) (G^2): the noise s, with the model term when corrected
  double btrans_noise_err_gauss = 0.0;  ///< sigma(B_T) from the noise alone (detection tests use it)
  bool saturation_corrected = false;  ///< B_T from the saturation-corrected form (kCorrected with a core)
  bool has_blos = false, has_btrans = false;
  bool ok = false;              ///< false: too few samples or no line signal in the window
};

/// What the estimate takes from the wavelength grid and the options alone: the fit window, the span the
/// derivative stencils need (the window and two samples either side) and their weights, the Lorentz unit and
/// the mean step. Worked out once per grid (PrepareWeakFieldGrid), not once per pixel.
struct WeakFieldGrid {
  const double* wavelength_nm = nullptr;
  std::size_t n = 0;
  SampleRange window;            ///< samples of the fit window
  std::size_t span_begin = 0, span_end = 0;  ///< [begin, end): where the derivatives are formed
  DerivativeStencil stencil;     ///< over wavelength_nm[span_begin .. span_end)
  double lorentz_nm_per_gauss = 0.0;
  double step_nm = 0.0;          ///< (l[n-1] - l[0]) / (n - 1): the step of the noise gains
  bool usable = false;           ///< n >= 5 and >= 3 samples in the window
};

/// Scratch buffers reused across pixels (one per thread); no allocation per pixel after the first.
struct WeakFieldWorkspace {
  std::vector<double> d1, d2;
  std::vector<double> x;   ///< transverse regressor per sample (NaN where the region leaves it out)
  std::vector<double> xn;  ///< its noise per sample
  WeakFieldGrid grid;      ///< of the last PrepareWeakFieldGrid
};

/// Weak-field estimate for one pixel; `noise` gives the per-Stokes noise (absolute units).
/// Prepares the grid for `s` each call: PrepareWeakFieldGrid once plus WeakFieldEstimatePrepared per pixel is
/// the same computation (bit for bit) for many pixels on one grid.
WeakFieldResult WeakFieldEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                  const WeakFieldOptions& options, WeakFieldWorkspace& work);

/// Works out work.grid for spectra on wavelength_nm[0..n) and these options.
void PrepareWeakFieldGrid(const double* wavelength_nm, std::size_t n, const WeakFieldOptions& options,
                          WeakFieldWorkspace& work);
/// The estimate for a pixel on the grid of the last PrepareWeakFieldGrid (same options); a pixel on another
/// grid (other wavelength pointer or length) throws OptionError.
WeakFieldResult WeakFieldEstimatePrepared(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                          const WeakFieldOptions& options, WeakFieldWorkspace& work);

}  // namespace zeeline
