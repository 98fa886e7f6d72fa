// zeeline/maps/me_inversion.hpp -- Milne-Eddington inversion of one pixel's Stokes I, Q, U, V by
// Levenberg-Marquardt, with uncertainties from the covariance at the solution.
//
// Model: the Unno-Rachkovsky solution of synth/unno_rachkovsky.hpp (one or more lines in the window sharing
// B, inclination, azimuth, vlos, Doppler width, damping, eta0 (times each line's fixed relative strength),
// s0, s1 and the filling factor). Parameters, units and senses: synth/me_parameters.hpp and
// docs/conventions.md. The spectra are divided by the pixel's continuum Ic before the fit, so s0 and s1 are
// in units of Ic (s0 + mu s1 ~ 1).
//
// Merit function (noise-normalised, optional Stokes weights w_s, default 1):
//   chi2 = sum_s w_s sum_k ((O_sk - M_sk(x)) / sigma_s)^2,   s in {I, Q, U, V}, k over the samples
// minimised by Levenberg-Marquardt (Levenberg 1944; Marquardt 1963; Press et al., Numerical Recipes
// sect. 15.5) in scaled parameters u_j = x_j / scale_j with Marquardt's diagonal damping
//   (A + lambda D) du = g,  A = J^T W J,  g = J^T W r,  D = max(diag A, 1e-12 max diag A).
// Bounds: a step is clamped into [lower, upper]; a parameter sitting on a bound whose step points
// outward is frozen for that iteration (projected LM). The azimuth is unbounded during the fit and wrapped
// to [0, 180) at the end (the model has period 180 deg in azimuth).
//
// Stopping rules (checked after every accepted step; iterations count trial steps):
//   converged  when the Gauss-Newton predicted decrease g^T A^-1 g < chi2_tolerance (default 0.01: the
//              remaining step is < 0.1 sigma in the Mahalanobis norm of the fit), or the relative chi2
//              change of an accepted step < rel_chi2_tolerance, or the largest scaled step
//              < step_tolerance, or lambda exceeds lambda_max (no downhill step exists: a minimum to
//              numerical precision);
//   not converged when max_iterations trial steps were used (QUALITY NOT_CONVERGED).
//
// Starting point (MeStartHints; NaN = not known, derived from the spectrum instead, within 12 default
// Doppler widths of the main line and at most 45 % of the way to another line): B from the resolved
// splitting when given, else hypot(B_LOS, B_T) of the hints (at least 20 G), with B_LOS from the centre of
// gravity of 1 - (I +- V) and B_T from the weak-field scaling of the peak linear polarisation when not
// given; inclination arccos(B_LOS / B); azimuth from the hint, else 1/2 atan2(-U_core, -Q_core); vlos from
// the hint, else the centroid of 1 - I; Doppler width 0.6 sqrt(w^2 - (g_eff C B)^2) (w the 1/e half-width,
// at least 0.3 w); eta0 = 8 with s1 = (1 - I_min)(1 + eta0)/eta0, s0 = 1 - s1 (the Milne-Eddington core
// depth with s0 + s1 = 1); damping from fixed_values; a free fill starts 10 % inside its range.
// Restarts, only on evidence of a wrong basin: when the reduced chi2 of the first fit exceeds both
// restart_chi2 and what the scatter of a measured noise allows, 1 + restart_sigma sqrt(2/dof + 2/noise_dof)
// (noise_dof of ContinuumEstimate: sigma^2 from the continuum of one pixel is itself uncertain, and a chi2
// scaled by it scatters like F(dof, noise_dof); the same test as weak_field_regime.hpp; with a given noise,
// noise_dof is infinite and restart_chi2 decides alone), up to max_restarts further fits
// start from, in this order: (1) the field tripled (a strong-field basin), (2) the inclination mirrored
// (180 - gamma), (3) the azimuth turned by 90 deg, (4) the field divided by 3 with eta0 doubled. The fit with
// the lowest chi2 is kept; restarts stop as soon as one reaches reduced chi2 <= restart_chi2.
//
// Uncertainties: with J the noise-normalised Jacobian of the free parameters at the solution,
// H = J^T W J and M = J^T W^2 J, the covariance is C = H^-1 M H^-1 (= H^-1 = (J^T J)^-1 sigma^2 for unit
// weights; the sandwich form keeps it honest when Stokes weights differ from 1). It is multiplied by the
// unweighted reduced chi2 when that exceeds 1 (model error inflates the scatter; common practice) and left
// unscaled otherwise (noise levels are measured, not fitted). Directions of H with eigenvalue below
// 1e-13 of the largest (e.g. the azimuth when B = 0) give an infinite sigma. The reduced chi2 is the
// unweighted chi2 / (N - n_free), N = samples of the Stokes parameters present.
// Derived: B_LOS = B cos(gamma), B_TRANS = B sin(gamma) with first-order errors using the (B, gamma)
// covariance.
//
// Multi-line fits: every MeLine of the window enters one model; each line's relative_strength (its eta0
// over the main line's) is fixed during the fit (from the line list or the caller): the synthesizer's
// Jacobian gives d/d(eta0) for all lines together, not per line, so a fitted ratio would need a model
// rebuild per iteration.
//
// Cost: Synthesize with Jacobian once per trial step (~16 us for 60 wavelengths); no heap allocation per
// iteration (MeWorkspace, one per thread, holds every buffer). Measured speed: docs/me_inversion.md.
#pragma once

#include <array>
#include <limits>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/maps/pixel_spectrum.hpp"
#include "zeeline/synth/me_parameters.hpp"
#include "zeeline/synth/unno_rachkovsky.hpp"

namespace zeeline {

struct MeInversionOptions {
  /// free[j] for MeParam j; a fixed parameter keeps its value from fixed_values. The filling factor is
  /// fixed (at 1) by default: in the weak-field regime only fill * B is measured.
  std::array<bool, kMeParamCount> free = {true, true, true, true, true, true, true, true, true, false};
  MeParameters fixed_values;  ///< values of fixed parameters (and damping/fill starting values)
  /// Bounds per MeParam (azimuth ignored: free, then wrapped). Units of me_parameters.hpp; s0, s1 in Ic.
  std::array<double, kMeParamCount> lower = {0.0, 0.0, -1e4, -50.0, 2e-4, 0.0, 1e-3, -0.5, 0.0, 0.0};
  std::array<double, kMeParamCount> upper = {6000.0, 180.0, 1e4, 50.0, 0.05, 5.0, 1e3, 1.5, 3.0, 1.0};
  std::array<double, 4> stokes_weights = {1.0, 1.0, 1.0, 1.0};  ///< w_s for I, Q, U, V, >= 0, not all 0
  MeOptions model;                      ///< mu and Voigt method of the synthesis

  int max_iterations = 60;              ///< trial steps per fit
  double chi2_tolerance = 1e-2;         ///< converged when the Gauss-Newton predicted decrease is below
  double rel_chi2_tolerance = 1e-7;     ///< converged when an accepted step changes chi2 by less (relative)
  double step_tolerance = 1e-8;         ///< converged when the largest scaled step is below
  double lambda_initial = 1e-2;
  double lambda_max = 1e8;
  int max_restarts = 3;                 ///< extra starts when the first fit's reduced chi2 > restart_chi2
  double restart_chi2 = 2.0;
  /// Chi2 excess, in standard deviations of its scatter (header comment), below which no restart is tried.
  /// Measured on 12 000 mixed-field pixels (60 samples, noise from ~20 continuum samples): of 1310 pixels
  /// restarted at chi2 2..10, 3 improved, against 18 of 40 above 100; tests/bench/map_speed.sh.
  double restart_sigma = 5.0;
  double bad_fit_chi2 = 5.0;            ///< reduced chi2 above which MeResult::bad_fit is set

  /// Empty when valid; otherwise names the field, its value and the allowed range.
  std::string Validate() const;
};

/// "field" / "field_gauss" -> kField, ... (short names without unit suffix accepted); throws OptionError.
MeParam MeParamFromName(const std::string& name);

/// Starting information from the cheaper estimators; NaN = unknown.
struct MeStartHints {
  double blos_gauss = std::numeric_limits<double>::quiet_NaN();
  double btrans_gauss = std::numeric_limits<double>::quiet_NaN();
  double azimuth_deg = std::numeric_limits<double>::quiet_NaN();
  double field_gauss = std::numeric_limits<double>::quiet_NaN();  ///< from a resolved splitting
  double vlos_kms = std::numeric_limits<double>::quiet_NaN();
  double line_halfwidth_nm = std::numeric_limits<double>::quiet_NaN();  ///< 1/e half-width of I
};

struct MeResult {
  MeParameters params;                       ///< solution; azimuth in [0, 180); s0, s1 in units of Ic
  std::array<double, kMeParamCount> sigma{};  ///< 1-sigma per MeParam (0 for fixed; inf if unconstrained)
  Eigen::Matrix<double, kMeParamCount, kMeParamCount> covariance;  ///< physical units, 0 rows for fixed
  double blos_gauss = 0.0, blos_err_gauss = 0.0;
  double btrans_gauss = 0.0, btrans_err_gauss = 0.0;
  double chi2_reduced = 0.0;  ///< unweighted, see the header comment
  int iterations = 0;         ///< trial steps summed over all starts
  int starts = 0;             ///< fits run (1 + restarts used)
  bool converged = false;     ///< the kept fit met a convergence rule
  bool bad_fit = false;       ///< chi2_reduced > bad_fit_chi2
  bool ok = false;            ///< false: no usable data (no samples, non-positive continuum)
};

/// Buffers for one thread; sized on first use, then reused without allocation.
struct MeWorkspace {
  Eigen::ArrayXd wavelength_nm;
  StokesArray observed, model, trial;
  StokesJacobian jacobian;
  MilneEddingtonModel::SynthesisCache trial_cache;  ///< a trial step's spectra state (Jacobian on acceptance)
};

class MeInverter {
 public:
  /// lines[0] is the main line; throws OptionError for invalid options or lines.
  MeInverter(const std::vector<MeLine>& lines, const MeInversionOptions& options);

  /// Full inversion with starting point from `hints` and the restart rule. `continuum` gives Ic and the
  /// per-Stokes noise (absolute units, EstimateContinuum). Q, U or V may be absent (weight 0).
  MeResult Invert(const PixelSpectrum& s, const ContinuumEstimate& continuum, const MeStartHints& hints,
                  MeWorkspace& work) const;

  /// One Levenberg-Marquardt fit from `start` (s0, s1 in units of Ic), no restarts.
  MeResult InvertFrom(const PixelSpectrum& s, const ContinuumEstimate& continuum, const MeParameters& start,
                      MeWorkspace& work) const;

  const MilneEddingtonModel& model() const { return model_; }
  const MeInversionOptions& options() const { return options_; }

 private:
  bool LoadData(const PixelSpectrum& s, const ContinuumEstimate& c, MeWorkspace& w, std::array<double, 4>& inv_sigma,
                int& n_data) const;
  MeParameters StartingPoint(const MeStartHints& h, const MeWorkspace& w) const;
  void Fit(const MeParameters& start, const std::array<double, 4>& inv_sigma, int n_data, MeWorkspace& w,
           MeResult& out) const;

  MeInversionOptions options_;
  MilneEddingtonModel model_;
  double main_wavelength_nm_ = 0.0;
  double g_eff_ = 0.0;
  double analysis_halfwidth_nm_ = 0.0;
};

}  // namespace zeeline
