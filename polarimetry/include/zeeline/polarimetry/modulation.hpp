// zeeline/polarimetry/modulation.hpp -- polarimeter modulation, demodulation and efficiencies.
//
// A polarimeter measures n >= 4 intensities I_k = sum_j O_kj S_j (O: n x 4 modulation matrix). The
// demodulation matrix of minimum noise propagation is the pseudo-inverse
//   D = (O^T O)^-1 O^T,        so that D O = 1 (4 x 4 identity),
// and the polarimetric efficiency of Stokes parameter i is
//   eps_i = ( n * sum_k D_ik^2 )^-1/2,
// bounded by eps_I <= 1 and eps_Q^2 + eps_U^2 + eps_V^2 <= 1 (balanced optimum: 1/sqrt(3) each).
// Source: J.C. del Toro Iniesta & M. Collados, Appl. Opt. 39, 1637 (2000), eqs. (9), (34), (36)-(38).
// Cross-talk: if the true modulation is O_true but data are demodulated with D, the retrieved Stokes
// vector is X S with X = D O_true (X = identity for a perfect calibration).
#pragma once

#include <string>

#include <Eigen/Dense>

namespace zeeline::polarimetry {

using ModulationMatrix = Eigen::Matrix<double, Eigen::Dynamic, 4>;
using DemodulationMatrix = Eigen::Matrix<double, 4, Eigen::Dynamic>;

struct DemodulationResult {
  DemodulationMatrix demodulation;  ///< 4 x n
  Eigen::Vector4d efficiency;       ///< eps_I, eps_Q, eps_U, eps_V
  double condition_number = 0.0;    ///< of O (largest / smallest singular value)
};

/// Throws std::invalid_argument when O has fewer than 4 rows or is numerically singular.
DemodulationResult Demodulate(const ModulationMatrix& modulation);

/// Efficiencies of an arbitrary demodulation matrix (del Toro Iniesta & Collados 2000, eq. 34).
Eigen::Vector4d Efficiencies(const DemodulationMatrix& demodulation);

/// Cross-talk matrix X = D O_true.
Eigen::Matrix4d Crosstalk(const DemodulationMatrix& demodulation, const ModulationMatrix& true_modulation);

/// Modulation of a rotating retarder followed by a fixed linear polariser at `analyser_deg`:
/// row k is the first row of Polariser(analyser) * Retarder(angles_deg[k], retardance_deg).
ModulationMatrix RotatingRetarderModulation(const Eigen::VectorXd& angles_deg, double retardance_deg,
                                            double analyser_deg = 0.0);

}  // namespace zeeline::polarimetry
