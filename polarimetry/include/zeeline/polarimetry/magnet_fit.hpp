// zeeline/polarimetry/magnet_fit.hpp -- end-to-end check of a polarimeter on an emission line seen in a
// magnet of known nominal field: the field scale f = B_true / B_nominal and the 4 x 4 response matrix X
// (observed = X emitted, X_II = 1) from demodulated lamp spectra taken at known field geometries.
//
// Emitted Stokes vector (optically thin emission, Landi Degl'Innocenti & Landolfi 2004 (LL04), eqs. 6.58
// with the emission coefficients of sect. 6.6; signs of docs/conventions.md), field at inclination gamma
// from the line of sight (toward the observer) and azimuth chi from +x:
//   e_I = A/2 [ phi_0 sin^2 g + (phi_-1 + phi_+1)(1 + cos^2 g)/2 ] + background
//   e_Q = A/2 [ phi_0 - (phi_-1 + phi_+1)/2 ] sin^2 g cos 2chi,   e_U = same with sin 2chi
//   e_V = A/2 (phi_+1 - phi_-1) cos g
// where phi_q(lambda) = sum over the components of group q (zeeman_pattern.hpp: every coupling the atomic
// module knows, jK lamp lines included) of strength * V(lambda - lambda_c - shift * dlambda_B(f B_nom)),
// V a Voigt profile of unit area (Doppler 1/e half-width w, damping a fixed) convolved with a Gaussian
// instrument profile of FWHM F (exactly: a Voigt of Gaussian width sqrt(w^2 + s^2), s = F / (2 sqrt(ln 2)),
// and damping a w / sqrt(w^2 + s^2)). Emission in a field toward the observer has V < 0 in the blue wing
// (docs/conventions.md), and the pi components are polarised along the field (Q > 0 for chi = 0).
// Observed = X (e_I, e_Q, e_U, e_V).
//
// Fit (Levenberg-Marquardt, least_squares.hpp): f, w, per spectrum the centre, amplitude A and unpolarised
// background, and the free elements of X (X_II = 1) in the columns the geometries excite: a column j is
// constrained when the Jacobian of its elements has no null direction at the start (longitudinal spectra
// excite I and V, transverse ones I and Q or U; chi = 0 or 90 deg gives Q only). The other columns are
// fixed to those of the identity and reported as unconstrained (null).
// Weights: per spectrum and Stokes parameter a constant noise from point-to-point differences in the outer
// fifth of the spectrum on each side (away from the line), sigma = 1.4826 median|x_i - x_(i+1)| / sqrt(2)
// (robust, common practice); the spectra must reach line-free wavelengths on both sides.
// Uncertainties from the covariance, multiplied by sqrt(chi2_reduced) when that exceeds 1.
// v_sign = sign of X_VV (a handedness check of the whole chain), 0 when |X_VV| < 3 sigma or unconstrained.
#pragma once

#include <array>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline::polarimetry {

struct MagnetSpectrum {
  Spectrum1D spectrum;  ///< I, Q, U, V (Q, U, V required)
  double inclination_deg = 0.0;
  double azimuth_deg = 0.0;
};

struct MagnetFitOptions {
  double nominal_field_gauss = 0.0;  ///< > 0
  double rest_wavelength_nm = 0.0;   ///< > 0, same frame as the spectra
  ZeemanPattern pattern;
  double instrument_fwhm_nm = 0.0;   ///< Gaussian, >= 0
  double damping = 0.0;              ///< Voigt damping (Doppler units), >= 0, fixed
  int max_evaluations = 20000;

  std::string Validate() const;
};

struct MagnetSpectrumFit {
  double centre_nm = 0.0, centre_err_nm = 0.0;
  double amplitude = 0.0, amplitude_err = 0.0;
  double background = 0.0, background_err = 0.0;
  std::array<double, 4> noise{};  ///< sigma used per Stokes parameter
  double chi2_reduced = 0.0;
  Eigen::MatrixXd model;          ///< samples x 4
};

struct MagnetFitResult {
  double field_scale = 0.0, field_scale_err = 0.0;
  double doppler_width_nm = 0.0, doppler_width_err_nm = 0.0;
  Eigen::Matrix4d response = Eigen::Matrix4d::Identity();
  Eigen::Matrix4d response_err = Eigen::Matrix4d::Zero();
  std::array<bool, 4> column_constrained{};  ///< I, Q, U, V columns of X
  std::vector<std::string> unconstrained;    ///< names of the columns not constrained ("Q", "U", "V")
  int v_sign = 0;                            ///< +1, -1, or 0 (not determined)
  std::vector<MagnetSpectrumFit> spectra;
  double chi2_reduced = 0.0;
  int dof = 0;
  bool converged = false;
  std::vector<std::string> warnings;
};

/// The emitted Stokes vector of the model (no response matrix) at the given wavelengths, per unit amplitude,
/// for field `field_gauss` (exposed for tests and pictures).
Eigen::MatrixXd EmittedStokes(const std::vector<double>& wavelength_nm, const MagnetFitOptions& options,
                              double field_gauss, double doppler_width_nm, double centre_nm, double inclination_deg,
                              double azimuth_deg);

/// Throws OptionError for bad options, CalibrationError when a spectrum lacks V or Q/U or the fit fails.
MagnetFitResult FitMagnet(const std::vector<MagnetSpectrum>& spectra, const MagnetFitOptions& options);

}  // namespace zeeline::polarimetry
