#include "zeeline/broadening/pressure_width.hpp"

#include <cmath>
#include <cstdio>

#include "zeeline/core/constants.hpp"

namespace zeeline {

ImpactCollisions HardSphereCollisions(double pressure_Pa, double temperature_K, double mass_u,
                                      double perturber_mass_u, double collision_diameter_nm) {
  using namespace constants;
  ImpactCollisions c;
  const double d_m = collision_diameter_nm * 1e-9;
  const double mu_kg = mass_u * perturber_mass_u / (mass_u + perturber_mass_u) * kAtomicMassUnit_kg;
  c.perturber_density_m3 = pressure_Pa / (kBoltzmann_J_K * temperature_K);
  c.mean_relative_speed_m_s = std::sqrt(8.0 * kBoltzmann_J_K * temperature_K / (kPi * mu_kg));
  c.collision_rate_per_s = c.perturber_density_m3 * kPi * d_m * d_m * c.mean_relative_speed_m_s;
  c.fwhm_hz = c.collision_rate_per_s / kPi;
  c.packing = c.perturber_density_m3 * kPi * d_m * d_m * d_m;
  c.mean_free_path_m = c.collision_rate_per_s > 0.0 ? c.mean_relative_speed_m_s / c.collision_rate_per_s : INFINITY;
  c.impact_limit_hz = c.mean_relative_speed_m_s / (2.0 * kPi * d_m);
  return c;
}

LineWidth PressureBroadening(double wavelength_nm, double pressure_Pa, double temperature_K, double mass_u,
                             double perturber_mass_u, double collision_diameter_nm) {
  const ImpactCollisions c =
      HardSphereCollisions(pressure_Pa, temperature_K, mass_u, perturber_mass_u, collision_diameter_nm);
  LineWidth w = MakeLineWidth("pressure", ProfileKind::kLorentzian,
                              FrequencyToWavelengthWidth_nm(c.fwhm_hz, wavelength_nm), wavelength_nm);
  w.formula = "delta_nu = nu_coll / pi, nu_coll = n pi d^2 sqrt(8kT/(pi mu)), n = P/kT";
  w.source = "Lorentz 1906 impact (phase-interruption) model, hard spheres; Demtroeder vol. 1 sect. 3.3";
  char buf[320];
  std::snprintf(buf, sizeof buf, "binary collisions: n pi d^3 = %.3g (%s; needs << 1)", c.packing,
                c.packing < 0.1 ? "ok" : "NOT satisfied, impact theory does not apply");
  w.notes.push_back(buf);
  const double reduced_wavelength_m = wavelength_nm * 1e-9 / (2.0 * constants::kPi);
  std::snprintf(buf, sizeof buf, "mean free path %.3g m vs lambda/2pi = %.3g m: %s", c.mean_free_path_m,
                reduced_wavelength_m,
                c.mean_free_path_m > reduced_wavelength_m
                    ? "no Dicke narrowing"
                    : "Dicke narrowing: collisions narrow the Doppler part, its entry is an upper bound");
  w.notes.push_back(buf);
  std::snprintf(buf, sizeof buf,
                "impact limit: Lorentzian only within ~v_rel/(2 pi d) = %.3g GHz of the centre (width %.3g GHz)",
                c.impact_limit_hz * 1e-9, c.fwhm_hz * 1e-9);
  w.notes.push_back(buf);
  return w;
}

}  // namespace zeeline
