// zeeline/broadening/doppler_width.hpp -- thermal (Doppler) width with microturbulence.
//
// A Maxwellian velocity distribution of temperature T and mass m, plus an isotropic Gaussian
// microturbulence of most-probable speed xi, gives a Gaussian profile of 1/e half-width
//   delta_lambda_D = (lambda0 / c) sqrt(2 k T / m + xi^2)
// and FWHM = 2 sqrt(ln 2) delta_lambda_D (e.g. Gray 2005, "The Observation and Analysis of Stellar
// Photospheres", ch. 11; Demtroeder 2008 sect. 3.2; from memory). This is the Doppler width of
// docs/conventions.md. The inverse gives the temperature a measured 1/e width implies:
//   T = m ((c delta_lambda_D / lambda0)^2 - xi^2) / (2 k).
// Units: T in K, m in u, xi in km/s.
#pragma once

#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

/// The 1/e half-width (nm).
double DopplerWidth_nm(double wavelength_nm, double temperature_K, double mass_u, double microturbulence_kms = 0.0);

/// Most-probable speed sqrt(2kT/m + xi^2) in km/s.
double DopplerSpeed_kms(double temperature_K, double mass_u, double microturbulence_kms = 0.0);

/// Temperature (K) implied by a most-probable speed (km/s); negative when xi exceeds the speed.
double TemperatureFromDopplerSpeed_K(double speed_kms, double mass_u, double microturbulence_kms = 0.0);

/// Doppler FWHM entry of the budget.
LineWidth DopplerBroadening(double wavelength_nm, double temperature_K, double mass_u, double microturbulence_kms);

}  // namespace zeeline
