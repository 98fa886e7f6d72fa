// zeeline/broadening/width_diagnosis.hpp -- does a set of observed lines of one species require a magnetic
// field, or do temperature, a shared Lorentzian width and the instrument explain their widths?
//
// Models (line_set_model.hpp), fitted to I (and V when present) in a window around each line:
//   (a) non-magnetic: shared speed u = sqrt(2kT/m + xi^2), shared Lorentz HWHM gamma, shared velocity v, free
//       signed areas A_i, a local linear continuum per window;
//   (b) the same plus a field B >= 0 and inclination g acting through each line's full Zeeman pattern.
// Merit: chi2 = sum ((I - I_model)/sigma_I)^2 [+ sum ((V - V_model)/sigma_V)^2], with sigma_I, sigma_V measured
// from second differences in the windows' outer parts (maps/pixel_spectrum.hpp) unless given. The linear
// parameters are solved exactly for each trial of the nonlinear ones (variable projection, Golub & Pereyra
// 1973); the nonlinear ones by Levenberg-Marquardt (Marquardt 1963) with forward-difference derivatives of the
// projected residuals and box limits (u > 0, gamma >= 0, B >= 0, 0 <= g <= 180 deg), from several starts.
// Uncertainties: Cov = s^2 (J^T J)^-1 on the nonlinear parameters, s^2 = max(1, chi2_reduced) (as in
// measure/component_fit.hpp).
//
// Comparison: likelihood ratio L = chi2_a - chi2_b (Wilks 1938); the significance takes L as chi^2 with
// k = 2 degrees of freedom (B and g; conservative against the boundary at B = 0, Chernoff 1954, where half the
// probability would go to 1 degree of freedom), p = exp(-L/2), reported as the one-sided Gaussian equivalent
// significance_sigma = Phi^-1(1 - p). Information criteria are reported alongside: delta_aic = L - 2k
// (Akaike 1974), delta_bic = L - k ln n (Schwarz 1978); positive favours the field.
// Upper limit (95 %, profile likelihood): the B > B_best where chi2_b profiled over every other parameter
// rises by 2.706 above its minimum (one-sided 95 % point of chi^2 with 1 degree of freedom).
// When no field is required, field_err_gauss = (upper limit - best B) / 1.645 (the Gaussian equivalent).
// Temperature: T = m (u^2 - xi^2) / (2k) from the model chosen (doppler_width.hpp), with its 1-sigma error.
//
// Degeneracy. A pattern of width factor z (zeeman_width.hpp) widens line i by ~ z_i l_i^2 B (nm), the Doppler
// width is l_i u / c. If every line has the same z l^2 (within degeneracy_tolerance), a field adds the same
// width in nm to every line, which the shared Lorentz width and the line shapes can imitate; if every line has
// the same z l, a field widens every line in proportion to its Doppler width, which a higher temperature
// imitates. In either case (and always for a single line) the widths alone cannot separate thermal from
// magnetic broadening: `degenerate` is set with the reason, and without Stokes V no detection is claimed
// (magnetic_required stays false whatever the likelihood ratio says; the upper limit is still given).
// With V the detection may rest on V, and the weak-field (maps/weak_field.hpp) and centre-of-gravity
// (maps/centre_of_gravity.hpp) B_LOS of each line are reported as an independent cross-check.
#pragma once

#include <cmath>
#include <optional>
#include <string>
#include <vector>

#include "zeeline/broadening/line_set_model.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline {

struct DiagnosisLine {
  std::string name;
  ModelLine line;
};

struct WidthDiagnosisOptions {
  std::vector<DiagnosisLine> lines;       ///< one species; rest wavelengths in the spectrum's frame
  double mass_u = 0.0;                    ///< radiator mass, > 0
  double microturbulence_kms = 0.0;       ///< subtracted when converting u to T
  double instrument_fwhm_nm = 0.0;        ///< Gaussian, >= 0
  double window_halfwidth_nm = 0.0;       ///< 0 = from each line's observed width (5 FWHM, within its segment)
  double noise_I = 0.0, noise_V = 0.0;    ///< 0 = measured
  double detection_sigma = 3.0;           ///< significance needed to call a field required
  double degeneracy_tolerance = 0.1;      ///< relative spread of z l^2 (or z l) below which the set is degenerate
  double confidence_delta_chi2 = 2.706;   ///< profile-likelihood threshold of the upper limit (95 % one-sided)
  bool use_v = true;                      ///< fit V when the spectrum has it

  std::string Validate() const;
};

struct ModelFit {
  LineSetShape shape;
  double speed_err_kms = 0.0, lorentz_hwhm_err_nm = 0.0, vlos_err_kms = 0.0;
  double field_err_gauss = 0.0, inclination_err_deg = 0.0;
  std::vector<double> areas, area_errs;  ///< per line
  std::vector<double> model_I, model_V;  ///< the model at WidthDiagnosis::fit_wavelength_nm (V empty without V)
  double chi2 = 0.0;
  int dof = 0;
  int iterations = 0;
};

struct LineCrossCheck {
  std::string name;
  bool available = false;
  double wfa_blos_gauss = NAN, wfa_blos_err_gauss = NAN;
  double cog_blos_gauss = NAN, cog_blos_err_gauss = NAN;
};

struct WidthDiagnosis {
  ModelFit nonmagnetic, magnetic;
  int samples = 0;                        ///< fitted samples (I and V)
  std::vector<double> fit_wavelength_nm;  ///< wavelengths of the fitted samples (all windows)
  bool has_v = false;                     ///< V was fitted
  double noise_I = 0.0, noise_V = 0.0;
  std::vector<double> window_halfwidth_nm;  ///< per line
  std::vector<double> width_factor;         ///< z per line
  double likelihood_ratio = 0.0;            ///< chi2_a - chi2_b (>= 0)
  double significance_sigma = 0.0;
  double delta_aic = 0.0, delta_bic = 0.0;
  bool magnetic_required = false;
  double field_gauss = 0.0, field_err_gauss = 0.0;
  double inclination_deg = NAN, inclination_err_deg = NAN;
  std::optional<double> upper_limit_gauss;  ///< when no field is required
  bool degenerate = false;
  std::string degeneracy_reason;          ///< empty when not degenerate
  double temperature_K = 0.0, temperature_err_K = 0.0;          ///< from the chosen model
  double temperature_nonmagnetic_K = 0.0;                        ///< if the widths were all thermal
  std::string verdict;                    ///< one or two plain sentences
  std::vector<LineCrossCheck> cross_checks;  ///< with V only
};

/// Throws OptionError for invalid options and BroadeningError when a line has no samples or no signal.
WidthDiagnosis DiagnoseWidths(const Spectrum1D& spectrum, const WidthDiagnosisOptions& options);

/// True when the spectrum has samples at wavelength_nm (inside its range and not in a gap between segments).
bool SpectrumCovers(const Spectrum1D& spectrum, double wavelength_nm);

/// One-sided Gaussian-equivalent significance of a p-value given as its natural logarithm (stable for tiny p).
double GaussianSigmaFromLogP(double log_p);

}  // namespace zeeline
