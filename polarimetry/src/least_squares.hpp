// least_squares.hpp (polarimetry-private) -- weighted non-linear least squares for the calibration fits.
//
// Minimises chi2(x) = |r(x)|^2 where r are the noise-normalised residuals (data - model) / sigma, by
// Levenberg-Marquardt (Levenberg 1944; Marquardt 1963; More 1978, the MINPACK algorithm as ported in
// Eigen's unsupported LevenbergMarquardt module) with a central-difference Jacobian (step h_j per
// parameter; the calibration models are linear in most parameters, where the difference is exact).
// Covariance at the solution: C = (J^T J)^+ (pseudo-inverse; directions with eigenvalue below 1e-12 of the
// largest get an infinite sigma), sigma_j = sqrt(C_jj) (Press et al., Numerical Recipes, sect. 15.5).
#pragma once

#include <functional>

#include <Eigen/Dense>

namespace zeeline::polarimetry::detail {

using ResidualFunction = std::function<void(const Eigen::VectorXd& x, Eigen::VectorXd& residuals)>;

struct LeastSquaresResult {
  Eigen::VectorXd x;
  Eigen::VectorXd sigma;        ///< sqrt(diag C)
  Eigen::MatrixXd covariance;   ///< (J^T J)^+
  Eigen::MatrixXd jacobian;     ///< of the residuals at x (rows = residuals)
  Eigen::VectorXd residuals;    ///< at x
  double chi2 = 0.0;
  int evaluations = 0;
  bool converged = false;
};

/// Central-difference Jacobian of f at x with steps h.
Eigen::MatrixXd NumericalJacobian(const ResidualFunction& f, const Eigen::VectorXd& x, const Eigen::VectorXd& h,
                                  Eigen::Index n_residuals);

LeastSquaresResult SolveLeastSquares(const ResidualFunction& f, const Eigen::VectorXd& x0, const Eigen::VectorXd& h,
                                     Eigen::Index n_residuals, int max_evaluations = 4000);

/// Parameters (indices) that lie, with squared projection above `threshold`, in the null space of J
/// (singular values below rel_tol of the largest after scaling every column to unit norm; a zero column
/// is null). Underdetermined systems (fewer rows than columns) have the missing directions null too.
std::vector<Eigen::Index> NullParameters(const Eigen::MatrixXd& jacobian, double rel_tol = 1e-8,
                                         double threshold = 1e-6);

}  // namespace zeeline::polarimetry::detail
