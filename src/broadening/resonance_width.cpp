#include "zeeline/broadening/resonance_width.hpp"

#include <cmath>

#include "zeeline/core/constants.hpp"

namespace zeeline {

double ResonanceWidth_hz(double wavelength_nm, double lower_density_cm3, double oscillator_strength,
                         double g_lower_weight, double g_upper_weight) {
  using namespace constants;
  const double omega0 = 2.0 * kPi * kSpeedOfLight_m_s / (wavelength_nm * 1e-9);
  const double n_m3 = lower_density_cm3 * 1e6;
  const double delta_omega = std::sqrt(g_lower_weight / g_upper_weight) * kElementaryCharge_C * kElementaryCharge_C *
                             oscillator_strength * n_m3 / (kVacuumPermittivity_F_m * kElectronMass_kg * omega0);
  return delta_omega / (2.0 * kPi);
}

LineWidth ResonanceBroadening(double wavelength_nm, double lower_density_cm3, double oscillator_strength,
                              double g_lower_weight, double g_upper_weight) {
  const double hz =
      ResonanceWidth_hz(wavelength_nm, lower_density_cm3, oscillator_strength, g_lower_weight, g_upper_weight);
  LineWidth w = MakeLineWidth("resonance", ProfileKind::kLorentzian, FrequencyToWavelengthWidth_nm(hz, wavelength_nm),
                              wavelength_nm);
  w.formula = "delta_omega = sqrt(g_l/g_u) e^2 f N_l / (eps0 m_e omega0)";
  w.source = "Ali & Griem 1965, Phys. Rev. 140, A1044";
  w.notes.push_back("applies to a resonance line only (lower level = ground level of the perturbing atoms)");
  return w;
}

}  // namespace zeeline
