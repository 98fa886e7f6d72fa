// zeeline/broadening/inglis_teller.hpp -- electron density from the last resolved line of a hydrogen series.
//
// Inglis & Teller (1939, ApJ 90, 439): the series merges where the Stark width of the upper levels reaches
// their separation; in its published form, with N the density of charged perturbers in cm^-3 and n_m the
// principal quantum number of the last resolved line,
//   log10 N = 23.26 - 7.5 log10 n_m          (from memory)
// and its inverse n_m = 10^((23.26 - log10 N) / 7.5). Worked value: n_m = 10 gives N = 10^15.76 =
// 5.75e15 cm^-3. The relation is an estimate (quasi-static ions, hydrogenic levels, T-independent); it is
// sensitive to how "resolved" is judged.
#pragma once

namespace zeeline {

inline constexpr double kInglisTellerConstant = 23.26;
inline constexpr double kInglisTellerSlope = 7.5;

/// Electron density (cm^-3) for the last resolved upper level n_m (> 1; any real value accepted).
double InglisTellerDensity_cm3(double last_resolved_n);

/// Last resolved upper level (real number) for an electron density (cm^-3, > 0).
double InglisTellerLastResolved(double electron_density_cm3);

}  // namespace zeeline
