// zeeline/core/constants.hpp -- physical constants, CODATA 2018 (exact SI values where defined).
//
// Source: E. Tiesinga et al., "CODATA recommended values of the fundamental physical constants: 2018",
// Rev. Mod. Phys. 93, 025010 (2021). The tests compare these with scipy.constants.
#pragma once

namespace zeeline::constants {

inline constexpr double kPi = 3.14159265358979323846;
inline constexpr double kSpeedOfLight_m_s = 299792458.0;            // exact
inline constexpr double kElementaryCharge_C = 1.602176634e-19;      // exact
inline constexpr double kElectronMass_kg = 9.1093837015e-31;        // CODATA 2018
inline constexpr double kBoltzmann_J_K = 1.380649e-23;              // exact
inline constexpr double kAtomicMassUnit_kg = 1.66053906660e-27;     // CODATA 2018
inline constexpr double kPlanck_J_s = 6.62607015e-34;              // exact
inline constexpr double kVacuumPermittivity_F_m = 8.8541878128e-12; // CODATA 2018
inline constexpr double kBohrRadius_m = 5.29177210903e-11;          // CODATA 2018
/// Electron spin g-factor magnitude |g_e|, CODATA 2018 (g_e = -2.00231930436256).
inline constexpr double kElectronSpinG = 2.00231930436256;

/// Lorentz unit coefficient e / (4 pi m_e c) in m^-1 T^-1: Delta lambda_B = coeff * lambda0^2 * B.
/// Numerically 46.686 m^-1 T^-1 = 4.6686e-13 Angstrom^-1 G^-1.
inline constexpr double kLorentzCoeff_per_m_per_T =
    kElementaryCharge_C / (4.0 * kPi * kElectronMass_kg * kSpeedOfLight_m_s);

}  // namespace zeeline::constants
