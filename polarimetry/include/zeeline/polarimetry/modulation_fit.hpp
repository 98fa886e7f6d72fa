// zeeline/polarimetry/modulation_fit.hpp -- the modulation matrix O of a polarimeter from a calibration
// sequence (calibration_table.hpp), with the calibration retarder's retardance and angle offset, per-state
// transmissions and dark offsets, by weighted least squares.
//
// Model of state k (light: source -> calibration polariser -> calibration retarder -> polarimeter):
//   S_k = W(theta_k + offset, delta) P(phi_k) (1, 0, 0, 0)^T      (mueller.hpp; a blank angle = identity)
//   m_kj = T_k (O S_k)_j + d_j,   j = 1..N modulation states;   dark states: m_kj = d_j
// The ideal calibration polariser at phi_k defines the Q/U frame (its angle has no offset); theta_k is the
// retarder's nominal fast axis, offset a common error of its mount; T_k absorbs lamp drift and element
// transmissions. Only T*O is observable: the first state named open... has T = 1 by definition, so O is
// in counts per unit of the open-beam lamp intensity. Without dark states the dark offsets are fixed at 0.
// Retardance is reported in (0, 180) deg: (delta, O_V) and (-delta, -O_V) give the same counts, and the
// retarder's fast axis (as marked) picks the sign. The offset is reported in (-90, 90] deg.
//
// Noise (photon + read): var_kj = max(m_kj - dbar_j, 0) / gain + read^2 with dbar the mean dark counts and
// read the read noise in counts (given, or the pooled scatter of >= 2 dark states, else 0 with a floor of
// 1 count^2). chi2 = sum ((m - model)^2 / var), minimised by Levenberg-Marquardt; parameter sigmas from the
// covariance (J^T J)^-1 of the noise-normalised Jacobian (Press et al., Numerical Recipes, sect. 15.5), not
// rescaled by chi2 (the noise is modelled, not fitted; chi2_reduced says whether the model fits).
//
// Identifiability: before fitting, the Jacobian of the model at a generic point of the design (O with
// all entries non-zero, delta = the starting retardance, offset 0, T = 1) is decomposed (SVD with unit
// column norms); any parameter with a component in its null space cannot be constrained by the sequence
// and the fit is refused with CalibrationError naming the part ("V column of the modulation matrix",
// "retardance", ...). The same test is repeated at the solution. Examples: polariser states only, or a
// retarder only parallel/perpendicular to the polariser, send no circular light: the V column and the
// retardance are unconstrained.
//
// Efficiencies (del Toro Iniesta & Collados 2000, Appl. Opt. 39, 1637, eq. 34) of O normalised so that
// max_k O_k0 = 1, hence eps_I <= 1 and eps_Q^2 + eps_U^2 + eps_V^2 <= 1 (modulation.hpp).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "zeeline/polarimetry/calibration_table.hpp"
#include "zeeline/polarimetry/modulation.hpp"
#include "zeeline/polarimetry/mueller.hpp"

namespace zeeline::polarimetry {

struct ModulationFitOptions {
  double retardance_start_deg = 90.0;       ///< starting retardance, (0, 180)
  double gain_e_per_count = 1.0;            ///< detector gain (photo-electrons per count), > 0
  std::optional<double> read_noise_counts;  ///< >= 0; unset = from the dark states
  int max_evaluations = 20000;              ///< residual evaluations allowed to the fit, >= 100

  /// Empty when valid, otherwise a message naming the field, its value and the allowed range.
  std::string Validate() const;
};

struct ModulationFitResult {
  ModulationMatrix modulation;       ///< O, N x 4, counts per unit open-beam intensity
  ModulationMatrix modulation_err;   ///< 1-sigma
  DemodulationMatrix demodulation;   ///< (O^T O)^-1 O^T of the fitted O, 4 x N
  Eigen::Vector4d efficiency = Eigen::Vector4d::Zero();  ///< of O / max_k O_k0
  double retardance_deg = 0.0, retardance_err_deg = 0.0;
  double retarder_offset_deg = 0.0, retarder_offset_err_deg = 0.0;
  std::vector<std::string> state_names;    ///< every state, in table order
  std::vector<double> transmission;        ///< per state; NaN for dark states; 1 for the first open state
  std::vector<double> transmission_err;    ///< 0 for the first open state
  Eigen::VectorXd dark_counts, dark_counts_err;  ///< d_j (0 +- 0 when not fitted)
  bool dark_fitted = false;
  double read_noise_counts = 0.0;
  bool read_noise_estimated = false;  ///< from the dark states
  double chi2 = 0.0, chi2_reduced = 0.0;
  int dof = 0;
  bool converged = false;
  Eigen::MatrixXd model;                 ///< states x N, model counts
  Eigen::MatrixXd normalised_residuals;  ///< states x N, (m - model) / sigma
  std::vector<std::string> warnings;
};

/// Stokes vector entering the polarimeter in state `s` for a lamp of unit intensity (dark: zero).
Stokes CalibrationInput(const CalibrationState& s, double retardance_deg, double retarder_offset_deg);

/// Parts of the model the sequence cannot constrain (empty = identifiable), by the Jacobian test above.
std::vector<std::string> UnconstrainedParts(const CalibrationSequence& sequence, const ModulationFitOptions& options = {});

/// Throws OptionError for bad options and CalibrationError for an unidentifiable sequence or a failed fit.
ModulationFitResult FitModulation(const CalibrationSequence& sequence, const ModulationFitOptions& options = {});

}  // namespace zeeline::polarimetry
