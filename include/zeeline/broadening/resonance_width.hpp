// zeeline/broadening/resonance_width.hpp -- resonance (self-) broadening of a resonance line by like atoms
// in its lower level.
//
// The resonant dipole-dipole interaction between a radiator and like atoms in the lower (ground) level of the
// line gives a Lorentzian of FWHM (angular frequency)
//   delta_omega = sqrt(g_l / g_u) e^2 f_lu N_l / (eps0 m_e omega0)
// in SI units, i.e. 4 pi sqrt(g_l/g_u) (e^2 / (4 pi eps0)) f N_l / (m_e omega0)
// (Ali & Griem 1965, Phys. Rev. 140, A1044, and 1966, Phys. Rev. 144, 366; from memory), with g = 2J + 1 the
// statistical weights, f_lu the absorption oscillator strength, N_l the density of perturbers in the lower
// level and omega0 = 2 pi c / lambda0. delta_nu = delta_omega / (2 pi) is proportional to N f / nu and
// independent of temperature to first order. It applies only to a resonance line (lower level = ground
// level); the budget says so. Worked value: Rb D2 (780.2 nm, f = 0.695, g_l/g_u = 2/4) gives
// delta_nu / N = 1.03e-7 Hz cm^3 (Weller et al. 2011, J. Phys. B 44, 195006; from memory).
// Units: N in cm^-3.
#pragma once

#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

/// FWHM in Hz for lower-level density N (cm^-3), oscillator strength f and statistical weights.
double ResonanceWidth_hz(double wavelength_nm, double lower_density_cm3, double oscillator_strength,
                         double g_lower_weight, double g_upper_weight);

LineWidth ResonanceBroadening(double wavelength_nm, double lower_density_cm3, double oscillator_strength,
                              double g_lower_weight, double g_upper_weight);

}  // namespace zeeline
