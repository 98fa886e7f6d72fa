#include "zeeline/polarimetry/modulation.hpp"

#include <stdexcept>

#include "zeeline/polarimetry/mueller.hpp"

namespace zeeline::polarimetry {

Eigen::Vector4d Efficiencies(const DemodulationMatrix& demodulation) {
  const double n = static_cast<double>(demodulation.cols());
  Eigen::Vector4d eps;
  for (int i = 0; i < 4; ++i) eps(i) = 1.0 / std::sqrt(n * demodulation.row(i).squaredNorm());
  return eps;
}

DemodulationResult Demodulate(const ModulationMatrix& modulation) {
  if (modulation.rows() < 4)
    throw std::invalid_argument("modulation matrix has " + std::to_string(modulation.rows()) +
                                " states; at least 4 are needed to measure I, Q, U and V");
  Eigen::JacobiSVD<ModulationMatrix> svd(modulation);
  const auto& sv = svd.singularValues();
  DemodulationResult r;
  r.condition_number = sv(0) / sv(3);
  if (!(sv(3) > 1e-12 * sv(0)))
    throw std::invalid_argument("modulation matrix is singular (condition number " +
                                std::to_string(r.condition_number) + "): the states do not span I,Q,U,V");
  const Eigen::Matrix4d normal = modulation.transpose() * modulation;
  r.demodulation = normal.ldlt().solve(modulation.transpose());
  r.efficiency = Efficiencies(r.demodulation);
  return r;
}

Eigen::Matrix4d Crosstalk(const DemodulationMatrix& demodulation, const ModulationMatrix& true_modulation) {
  return demodulation * true_modulation;
}

ModulationMatrix RotatingRetarderModulation(const Eigen::VectorXd& angles_deg, double retardance_deg,
                                            double analyser_deg) {
  ModulationMatrix o(angles_deg.size(), 4);
  const Mueller analyser = LinearPolariser(analyser_deg);
  for (Eigen::Index k = 0; k < angles_deg.size(); ++k)
    o.row(k) = (analyser * LinearRetarder(angles_deg(k), retardance_deg)).row(0);
  return o;
}

}  // namespace zeeline::polarimetry
