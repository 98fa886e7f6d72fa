// zeeline/measure/component_fit.hpp -- Zeeman components of one spectral line fitted in Stokes I.
//
// Model (emission or absorption alike: the component areas are signed, positive = emission):
//   I(l) = c0 + c1 (l - l0) + S(l) / (1 - kappa S(l)),   S(l) = sum_k E_k P(l - l_k)
//   P(x) = H(a', x / w') / (sqrt(pi) w'),   w' = sqrt(w^2 + w_i^2),   a' = a w / w'
// with H the Voigt function (synth/voigt.hpp, H(0,0) = 1, Int H dv = sqrt(pi), so Int P dx = 1 and E_k is
// the component's area), w the intrinsic Doppler 1/e half-width, a the damping in units of w, and
// w_i = FWHM_instr / (2 sqrt(ln 2)) the 1/e half-width of a Gaussian instrument profile. The instrument
// convolution is exact and analytic: a Voigt profile convolved with a Gaussian is a Voigt profile whose
// Gaussian 1/e half-widths add in quadrature while the Lorentzian half-width a w is unchanged
// (e.g. Gray 2005, "The observation and analysis of stellar photospheres", ch. 11, from memory).
//
// Saturation kappa >= 0 is fitted for absorption lines only (fit_saturation) and is 0 for emission
// (optically thin). With kappa = 1/s1 and S = -s1 eta0 phi this is exactly the Milne-Eddington intensity of
// an unpolarised line, I = s0 + s1 / (1 + eta0 phi) (LL04 sect. 9.8), so saturated, flat-bottomed
// absorption lines are not mistaken for split ones; kappa = 0 is a plain sum of Voigt profiles, and the
// areas E_k are then those of S (the unsaturated line), not of the observed profile.
// Pattern mode: the components k are those of the line's Zeeman pattern (atomic/zeeman_pattern.hpp):
//   l_k = l_c + s_k C B,   E_k = A_q(k) S_k
// with s_k the shift in Lorentz units (positive = red), S_k the strength (each q group sums to 1), C the
// Lorentz unit per gauss at the rest wavelength (core/units.hpp), one area A_sigma shared by the two sigma
// groups and one area A_pi. In Stokes I the two sigma groups always carry equal weight, (1 + cos^2 g)/4
// each against sin^2 g / 2 for pi (LL04 sect. 9.8), so tying them removes a degeneracy without losing
// generality. Free parameters: l_c, B, w, a, A_sigma, A_pi, c0, c1 (+ kappa). The pattern is symmetric
// (B and -B give the same I), so B is reported >= 0.
// Free mode (pattern unknown): N components with free l_k and E_k and a shared w and a.
//
// Fit: start from a grid over (B, w) (pattern mode) or from the N strongest local extrema of |I - c0|
// (free mode) with the linear parameters solved by least squares, then Levenberg-Marquardt (Marquardt
// 1963) with analytic derivatives of the Voigt function. Uncertainties: covariance
//   Cov = s^2 (J^T J)^-1,   s^2 = sigma_I^2 max(1, chi2_reduced)
// (sigma_I the noise measured in the continuum; the chi2 factor inflates the errors when the model does not
// describe the data, as scipy's curve_fit does with absolute_sigma=False). Group positions follow from the
// sum rule: the strength-weighted centroid of the sigma_r group lies at +g_eff Lorentz units (LL04 sect.
// 3.4), so l(sigma_b, pi, sigma_r) = l_c + (-g_eff, 0, +g_eff) C B and the sigma separation is 2 g_eff C B.
// In free mode the sigma separation is the distance between the area-weighted centroids of the
// components redder and bluer than the middle one (odd N: the middle one is pi), and the implied field is
// separation / (2 |g_eff| C).
// Resolved: the sigma separation is at least `resolution_ratio` times the FWHM of one observed component
// (Voigt FWHM from Olivero & Longbothum 1977, f_V = 0.5346 f_L + sqrt(0.2166 f_L^2 + f_G^2)) and at least
// three times its own uncertainty, and the fitted profile shows it: the line term has a local extremum
// (a peak for emission, a dip for absorption) within half a component FWHM of each sigma centroid or of the
// strongest line of that sigma group (a widely spread group, as beyond the linear regime, peaks there). The
// last condition keeps a saturated, flat-bottomed single line -- which a split model can imitate -- from
// being called resolved.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

struct ComponentFitOptions {
  double rest_wavelength_nm = 0.0;     ///< required
  ZeemanPattern pattern;               ///< pattern mode: its components; free mode: only g_eff is used
  int free_components = 0;             ///< 0 = pattern mode; N >= 1 = N free components
  double instrument_fwhm_nm = 0.0;     ///< Gaussian instrument profile FWHM, >= 0
  std::optional<double> fixed_damping; ///< unset = fit the damping a; set = keep it at this value (>= 0)
  double window_halfwidth_nm = 0.0;    ///< fit samples with |l - l0| <= this; 0 = whole spectrum
  double resolution_ratio = 1.0;       ///< sigma separation / component FWHM above which resolved
  bool fit_saturation = true;          ///< absorption lines: fit kappa (false: kappa = 0)
  int max_iterations = 200;

  std::string Validate() const;
};

/// One fitted component: a pattern group (labels "sigma_b", "pi", "sigma_r") or a free component ("c1"...).
struct FittedComponent {
  std::string label;
  double position_nm = 0.0, position_err_nm = 0.0;  ///< group: strength-weighted centroid
  double area = 0.0, area_err = 0.0;                ///< signed area (data units x nm), positive = emission
  double fwhm_nm = 0.0;                             ///< observed FWHM of one line of the group (with instrument)
};

/// One line of the Zeeman pattern placed by the fit (pattern mode).
struct PlacedLine {
  int q = 0;
  double shift_lorentz = 0.0, strength = 0.0;
  double position_nm = 0.0;
  double area = 0.0;
};

struct ComponentFitResult {
  bool ok = false;
  std::string message;  ///< why not ok, or a note
  bool pattern_mode = true;
  std::vector<FittedComponent> components;
  std::vector<PlacedLine> lines;  ///< pattern mode only
  double centre_nm = 0.0, centre_err_nm = 0.0;
  double vlos_kms = 0.0, vlos_err_kms = 0.0;  ///< from the centre (> 0 redshift)
  double doppler_width_nm = 0.0, doppler_width_err_nm = 0.0;  ///< intrinsic w (instrument removed)
  double damping = 0.0, damping_err = 0.0;
  bool damping_fitted = true;
  double saturation = 0.0, saturation_err = 0.0;  ///< kappa (1 / data units)
  bool saturation_fitted = false;
  double component_fwhm_nm = 0.0;  ///< observed FWHM of one component
  double sigma_separation_nm = 0.0, sigma_separation_err_nm = 0.0;
  double field_gauss = 0.0, field_err_gauss = 0.0;  ///< from the fitted B (pattern) or the separation (free)
  bool has_field = false;
  bool resolved = false;
  double continuum = 0.0, continuum_slope = 0.0;  ///< c0 (at l0) and c1 (per nm)
  double chi2_reduced = 0.0;
  int dof = 0, iterations = 0;
  std::size_t first = 0, count = 0;         ///< samples used: [first, first + count)
  std::vector<double> model;                ///< best-fit I at the used samples
  std::vector<std::vector<double>> parts;   ///< each component's contribution (no continuum), same samples
};

/// Fits Stokes I of `s` around the rest wavelength. `noise_I` (> 0) is the noise of I in data units.
/// Throws OptionError for invalid options; a failed fit returns ok = false with a message.
ComponentFitResult FitZeemanComponents(const PixelSpectrum& s, double noise_I, const ComponentFitOptions& options);

}  // namespace zeeline
