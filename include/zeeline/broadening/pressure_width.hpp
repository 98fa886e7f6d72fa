// zeeline/broadening/pressure_width.hpp -- collision (pressure) broadening in the impact approximation with
// hard-sphere collisions (phase interruption).
//
// Lorentz's interruption model: every collision with a perturber ends the radiator's wave train, so the line
// is Lorentzian with FWHM delta_nu = nu_coll / pi, nu_coll the mean collision rate (Lorentz 1906; e.g.
// Demtroeder, "Laser Spectroscopy" vol. 1, 2008, sect. 3.3; Corney, "Atomic and Laser Spectroscopy", 1977,
// ch. 8; from memory). For hard spheres of (mean) collision diameter d in a gas of perturber density
// n = P / (k T) (ideal gas):
//   nu_coll = n pi d^2 v_rel,   v_rel = sqrt(8 k T / (pi mu)),   mu = m m_p / (m + m_p)
//   delta_nu (FWHM) = nu_coll / pi = n d^2 v_rel
// so at fixed pressure the width goes as P T^(-1/2), at fixed density as T^(1/2).
// Validity tests reported with the width:
//   * binary collisions: n pi d^3 << 1 (we flag >= 0.1);
//   * impact limit: the mean time between collisions 1/nu_coll is long against a collision's duration
//     d / v_rel (the same ratio as above) -- and the Lorentzian shape holds only within about
//     v_rel / (2 pi d) of the line centre (Hz);
//   * Dicke narrowing: when the mean free path v_rel/nu_coll is shorter than lambda0 / (2 pi) the Doppler part
//     is narrowed by collisions (Dicke 1953, Phys. Rev. 89, 472) and the Doppler entry is an upper bound.
// Units: P in Pa, T in K, masses in u, d in nm.
#pragma once

#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

struct ImpactCollisions {
  double perturber_density_m3 = 0.0;  ///< n = P / kT
  double mean_relative_speed_m_s = 0.0;
  double collision_rate_per_s = 0.0;
  double fwhm_hz = 0.0;
  double packing = 0.0;               ///< n pi d^3
  double mean_free_path_m = 0.0;      ///< v_rel / nu_coll
  double impact_limit_hz = 0.0;       ///< v_rel / (2 pi d)
};

ImpactCollisions HardSphereCollisions(double pressure_Pa, double temperature_K, double mass_u,
                                      double perturber_mass_u, double collision_diameter_nm);

/// Pressure FWHM entry of the budget, with the validity tests as notes.
LineWidth PressureBroadening(double wavelength_nm, double pressure_Pa, double temperature_K, double mass_u,
                             double perturber_mass_u, double collision_diameter_nm);

}  // namespace zeeline
