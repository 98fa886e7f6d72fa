// zeeline/io/air_vacuum.hpp -- conversion between vacuum and standard-air wavelengths.
//
// Refractive index of standard dry air (15 C, 101 325 Pa, 450 ppm CO2) as adopted by the IAU and
// recommended by Morton (2000, ApJS 130, 403, eq. 8), which is the Birch & Downs (1994, Metrologia 31,
// 315) update of Edlen (1966, Metrologia 2, 71):
//
//   s = 1e4 / lambda_vac[Angstrom]            (vacuum wavenumber in 1/micrometre)
//   n - 1 = 8.34254e-5 + 2.406147e-2 / (130 - s^2) + 1.5998e-4 / (38.9 - s^2)
//   lambda_air = lambda_vac / n
//
// Vacuum -> air is explicit. Air -> vacuum solves lambda_vac = lambda_air * n(lambda_vac) by fixed-point
// iteration (converges to 1e-15 relative in < 6 steps: d(n)/d(lambda) * lambda ~ 1e-6). Valid range
// (common practice: air wavelengths are quoted only above 200 nm): vacuum wavelength 200 nm .. 20 um;
// outside it the functions throw OptionError naming the value. Accuracy of the formula against
// measured air dispersion: ~1e-8 in n in the visible (Birch & Downs 1994), i.e. ~0.006 pm at 600 nm.
// Units: nanometres in and out.
#pragma once

#include <vector>

#include "zeeline/core/wavelength_frame.hpp"

namespace zeeline {

inline constexpr double kAirVacuumMinVacuum_nm = 200.0;    ///< lower end of the valid range
inline constexpr double kAirVacuumMaxVacuum_nm = 20000.0;  ///< upper end of the valid range

/// Refractive index n of standard air at the given vacuum wavelength (Morton 2000 eq. 8).
double AirRefractiveIndex(double vacuum_nm);

/// Vacuum wavelength [nm] -> standard-air wavelength [nm].
double VacuumToAir_nm(double vacuum_nm);

/// Standard-air wavelength [nm] -> vacuum wavelength [nm] (iterative inverse of VacuumToAir_nm).
double AirToVacuum_nm(double air_nm);

/// Converts a wavelength between frames (identity when from == to).
double ConvertWavelength_nm(double wavelength_nm, WavelengthFrame from, WavelengthFrame to);

/// Element-wise ConvertWavelength_nm.
std::vector<double> ConvertWavelengths_nm(const std::vector<double>& wavelength_nm, WavelengthFrame from,
                                          WavelengthFrame to);

}  // namespace zeeline
