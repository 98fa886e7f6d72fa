#include "least_squares.hpp"

#include <cmath>
#include <limits>
#include <vector>

#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wshadow"
#pragma GCC diagnostic ignored "-Wconversion"
#include <unsupported/Eigen/LevenbergMarquardt>
#pragma GCC diagnostic pop

namespace zeeline::polarimetry::detail {
namespace {

struct Functor : Eigen::DenseFunctor<double> {
  Functor(const ResidualFunction& f, const Eigen::VectorXd& h, Eigen::Index n_residuals)
      : Eigen::DenseFunctor<double>(static_cast<int>(h.size()), static_cast<int>(n_residuals)), f_(f), h_(h) {}
  int operator()(const Eigen::VectorXd& x, Eigen::VectorXd& r) const {
    f_(x, r);
    return 0;
  }
  int df(const Eigen::VectorXd& x, Eigen::MatrixXd& j) const {
    // MINPACK minimises (1/2)|fvec|^2 with fjac = d fvec / dx.
    j = NumericalJacobian(f_, x, h_, values());
    return 0;
  }
  const ResidualFunction& f_;
  const Eigen::VectorXd& h_;
};

}  // namespace

Eigen::MatrixXd NumericalJacobian(const ResidualFunction& f, const Eigen::VectorXd& x, const Eigen::VectorXd& h,
                                  Eigen::Index n_residuals) {
  Eigen::MatrixXd j(n_residuals, x.size());
  Eigen::VectorXd xp = x, rp(n_residuals), rm(n_residuals);
  for (Eigen::Index p = 0; p < x.size(); ++p) {
    xp(p) = x(p) + h(p);
    f(xp, rp);
    xp(p) = x(p) - h(p);
    f(xp, rm);
    xp(p) = x(p);
    j.col(p) = (rp - rm) / (2.0 * h(p));
  }
  return j;
}

LeastSquaresResult SolveLeastSquares(const ResidualFunction& f, const Eigen::VectorXd& x0, const Eigen::VectorXd& h,
                                     Eigen::Index n_residuals, int max_evaluations) {
  Functor functor(f, h, n_residuals);
  Eigen::LevenbergMarquardt<Functor> lm(functor);
  lm.setMaxfev(max_evaluations);
  lm.setXtol(1e-12);
  lm.setFtol(1e-14);
  LeastSquaresResult out;
  out.x = x0;
  const auto status = lm.minimize(out.x);
  out.evaluations = static_cast<int>(lm.nfev());
  out.converged = status != Eigen::LevenbergMarquardtSpace::TooManyFunctionEvaluation &&
                  status != Eigen::LevenbergMarquardtSpace::ImproperInputParameters;
  out.residuals.resize(n_residuals);
  f(out.x, out.residuals);
  out.chi2 = out.residuals.squaredNorm();
  out.jacobian = NumericalJacobian(f, out.x, h, n_residuals);
  // Covariance (J^T J)^+ by eigen-decomposition (symmetric positive semi-definite).
  const Eigen::MatrixXd a = out.jacobian.transpose() * out.jacobian;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(a);
  const Eigen::VectorXd& ev = eig.eigenvalues();
  const double cut = 1e-12 * ev.cwiseAbs().maxCoeff();
  Eigen::VectorXd inv = Eigen::VectorXd::Zero(ev.size());
  std::vector<bool> null_dir(static_cast<std::size_t>(ev.size()), false);
  for (Eigen::Index i = 0; i < ev.size(); ++i) {
    if (ev(i) > cut)
      inv(i) = 1.0 / ev(i);
    else
      null_dir[static_cast<std::size_t>(i)] = true;
  }
  out.covariance = eig.eigenvectors() * inv.asDiagonal() * eig.eigenvectors().transpose();
  out.sigma = out.covariance.diagonal().cwiseMax(0.0).cwiseSqrt();
  for (Eigen::Index i = 0; i < ev.size(); ++i)
    if (null_dir[static_cast<std::size_t>(i)])
      for (Eigen::Index p = 0; p < ev.size(); ++p)
        if (std::fabs(eig.eigenvectors()(p, i)) > 1e-6) out.sigma(p) = std::numeric_limits<double>::infinity();
  return out;
}

std::vector<Eigen::Index> NullParameters(const Eigen::MatrixXd& jacobian, double rel_tol, double threshold) {
  const Eigen::Index n = jacobian.cols();
  Eigen::MatrixXd scaled = jacobian;
  std::vector<Eigen::Index> out;
  std::vector<bool> zero(static_cast<std::size_t>(n), false);
  for (Eigen::Index p = 0; p < n; ++p) {
    const double norm = scaled.col(p).norm();
    if (norm > 0.0)
      scaled.col(p) /= norm;
    else
      zero[static_cast<std::size_t>(p)] = true;
  }
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(scaled, Eigen::ComputeFullV);
  const Eigen::VectorXd& sv = svd.singularValues();
  const double smax = sv.size() > 0 ? sv(0) : 0.0;
  std::vector<Eigen::Index> null_cols;
  for (Eigen::Index i = 0; i < n; ++i)
    if (i >= sv.size() || !(sv(i) > rel_tol * smax)) null_cols.push_back(i);
  for (Eigen::Index p = 0; p < n; ++p) {
    double proj = 0.0;
    for (Eigen::Index c : null_cols) proj += svd.matrixV()(p, c) * svd.matrixV()(p, c);
    if (zero[static_cast<std::size_t>(p)] || proj > threshold) out.push_back(p);
  }
  return out;
}

}  // namespace zeeline::polarimetry::detail
