// zeeline/core/units.hpp -- unit-aware parsing of wavelengths, fields, velocities and angles.
//
// The command line accepts a number immediately followed (optionally after spaces) by a unit:
//   wavelength: nm (default when no unit is given), A / Angstrom / AA, m, um / micron, pm, cm
//   field:      G (default), kG, T, mT, uT
//   velocity:   km/s (default), m/s, cm/s
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

/// Lorentz unit Delta lambda_B = e lambda0^2 B / (4 pi m_e c), in nm, for lambda0 in nm and B in gauss.
/// Source: Landi Degl'Innocenti & Landolfi (2004), eq. (3.8) (written in wavelength units).
double LorentzUnit_nm(double wavelength_nm, double field_gauss);

}  // namespace zeeline
