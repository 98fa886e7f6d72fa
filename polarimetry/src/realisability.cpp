#include "zeeline/polarimetry/realisability.hpp"

#include "zeeline/polarimetry/jones.hpp"

namespace zeeline::polarimetry {

Realisability CheckRealisability(const Mueller& m, double tolerance) {
  const Eigen::Matrix4cd a = CoherencyToStokes();
  const Eigen::Matrix4cd n = a.inverse() * m.cast<std::complex<double>>() * a;
  Eigen::Matrix4cd h;
  for (int p = 0; p < 2; ++p)
    for (int q = 0; q < 2; ++q)
      for (int r = 0; r < 2; ++r)
        for (int s = 0; s < 2; ++s) h(2 * p + r, 2 * q + s) = 0.5 * n(2 * p + q, 2 * r + s);
  h = 0.5 * (h + h.adjoint()).eval();
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix4cd> eig(h);
  Realisability r;
  r.eigenvalues = eig.eigenvalues();
  const double scale = std::max(std::abs(m(0, 0)), 1e-300);
  r.physical = r.eigenvalues(0) >= -tolerance * scale;
  r.max_transmittance = m(0, 0) + m.block<1, 3>(0, 1).norm();
  r.passive = r.max_transmittance <= 1.0 + tolerance;
  return r;
}

}  // namespace zeeline::polarimetry
