#include "zeeline/broadening/doppler_width.hpp"

#include <cmath>

#include "zeeline/core/constants.hpp"

namespace zeeline {

double DopplerSpeed_kms(double temperature_K, double mass_u, double microturbulence_kms) {
  const double thermal_m2_s2 =
      2.0 * constants::kBoltzmann_J_K * temperature_K / (mass_u * constants::kAtomicMassUnit_kg);
  const double xi_m_s = microturbulence_kms * 1e3;
  return std::sqrt(thermal_m2_s2 + xi_m_s * xi_m_s) * 1e-3;
}

double DopplerWidth_nm(double wavelength_nm, double temperature_K, double mass_u, double microturbulence_kms) {
  return wavelength_nm * DopplerSpeed_kms(temperature_K, mass_u, microturbulence_kms) * 1e3 /
         constants::kSpeedOfLight_m_s;
}

double TemperatureFromDopplerSpeed_K(double speed_kms, double mass_u, double microturbulence_kms) {
  const double u2 = (speed_kms * speed_kms - microturbulence_kms * microturbulence_kms) * 1e6;
  return mass_u * constants::kAtomicMassUnit_kg * u2 / (2.0 * constants::kBoltzmann_J_K);
}

LineWidth DopplerBroadening(double wavelength_nm, double temperature_K, double mass_u, double microturbulence_kms) {
  const double fwhm_nm =
      2.0 * std::sqrt(std::log(2.0)) * DopplerWidth_nm(wavelength_nm, temperature_K, mass_u, microturbulence_kms);
  LineWidth w = MakeLineWidth("doppler", ProfileKind::kGaussian, fwhm_nm, wavelength_nm);
  w.formula = "FWHM = 2 sqrt(ln 2) (lambda0/c) sqrt(2kT/m + xi^2)";
  w.source = "Maxwell distribution; Gray 2005 ch. 11";
  return w;
}

}  // namespace zeeline
