#include "zeeline/broadening/stark_hydrogen.hpp"

#include <cmath>

#include "zeeline/core/constants.hpp"

namespace zeeline {

double HoltsmarkNormalField_V_m(double ion_density_cm3) {
  using namespace constants;
  const double coeff = 2.0 * kPi * std::pow(4.0 / 15.0, 2.0 / 3.0);  // 2.603
  const double n_m3 = ion_density_cm3 * 1e6;
  return coeff * kElementaryCharge_C * std::pow(n_m3, 2.0 / 3.0) / (4.0 * kPi * kVacuumPermittivity_F_m);
}

double LinearStarkWidth_hz(double electron_density_cm3, int n_upper, int n_lower) {
  using namespace constants;
  const double f0 = HoltsmarkNormalField_V_m(electron_density_cm3);
  const double levels = static_cast<double>(n_upper * n_upper - n_lower * n_lower);
  return 1.5 * levels * kElementaryCharge_C * kBohrRadius_m * f0 / kPlanck_J_s;
}

LineWidth StarkBroadening(double wavelength_nm, double electron_density_cm3, int n_upper, int n_lower) {
  const double hz = LinearStarkWidth_hz(electron_density_cm3, n_upper, n_lower);
  LineWidth w = MakeLineWidth("stark", ProfileKind::kLorentzian, FrequencyToWavelengthWidth_nm(hz, wavelength_nm),
                              wavelength_nm);
  w.formula = "delta_nu ~ (3/2)(n_u^2 - n_l^2) e a0 F0 / h, F0 = 2.603 e n_e^(2/3) / (4 pi eps0)";
  w.source = "Holtsmark 1919 normal field; linear Stark effect, Bethe & Salpeter 1957 sect. 51";
  w.notes.push_back(
      "ORDER-OF-MAGNITUDE estimate (factor ~2-3); use tabulated Stark profiles (Griem 1974; Gigosos & Cardenoso "
      "1996) to measure n_e; counted as a Lorentzian in the total");
  return w;
}

}  // namespace zeeline
