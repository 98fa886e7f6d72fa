// zeeline/core/units.hpp -- unit-aware parsing of wavelengths, fields, velocities and angles.
//
// The command line accepts a number immediately followed (optionally after spaces) by a unit:
//   wavelength: nm (default when no unit is given), A / Angstrom / AA, m, um / micron, pm, cm
//   field:      G (default), kG, T, mT, uT
//   velocity:   km/s (default), m/s, cm/s
//   temperature: K (default), kK, eV (k T = 1 eV, i.e. T = e / k_B = 11604.518 K)
//   pressure:   Pa (default), hPa, kPa, MPa, mbar, bar, Torr, mTorr, atm
//   number density: cm-3 (default; also cm^-3, /cm3), m-3 (also m^-3, /m3)
//   mass:       u (default; also amu, Da), kg
//   length:     the wavelength units (nm default)
//   rate:       s-1 (default; also /s, s^-1, Hz)
// Internally zeeline works in nm, gauss and km/s; names carry the unit (`wavelength_nm`, ...).
// Conversions: 1 A = 0.1 nm, 1 T = 1e4 G (exact by definition of the units).
#pragma once

#include <string>

namespace zeeline {

/// Parse a wavelength such as "630.2494nm", "6302.494A", "0.63um". Throws UnitError naming the text.
double ParseWavelength_nm(const std::string& text);
/// Parse a magnetic field such as "1200G", "1.2kG", "0.12T", "120mT". Throws UnitError.
double ParseField_gauss(const std::string& text);
/// Parse a velocity such as "0.5km/s", "500m/s", "0.5". Throws UnitError.
double ParseVelocity_kms(const std::string& text);

/// Parse a temperature such as "10000K", "1.5eV", "12kK". Must be positive. Throws UnitError.
double ParseTemperature_K(const std::string& text);
/// Parse a pressure such as "50000Pa", "1.3mbar", "10Torr". Must be >= 0. Throws UnitError.
double ParsePressure_Pa(const std::string& text);
/// Parse a number density such as "1e15cm-3", "1e21m-3" (bare numbers are cm^-3). Must be >= 0.
double ParseNumberDensity_cm3(const std::string& text);
/// Parse an atomic mass such as "4.0026u", "55.845amu", "6.64e-27kg" (bare numbers are u). Must be positive.
double ParseMass_u(const std::string& text);
/// Parse a length such as "0.36nm", "3.6A", "360pm" (bare numbers are nm). Must be positive.
double ParseLength_nm(const std::string& text);
/// Parse a rate such as "6.1e7/s", "6.1e7s-1" (bare numbers are s^-1). Must be >= 0.
double ParseRate_per_s(const std::string& text);

/// Lorentz unit Delta lambda_B = e lambda0^2 B / (4 pi m_e c), in nm, for lambda0 in nm and B in gauss.
/// Source: Landi Degl'Innocenti & Landolfi (2004), eq. (3.8) (written in wavelength units).
double LorentzUnit_nm(double wavelength_nm, double field_gauss);

}  // namespace zeeline
