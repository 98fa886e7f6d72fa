// zeeline/broadening/voigt_fwhm.hpp -- the FWHM of a Voigt profile from its Gaussian and Lorentzian FWHM.
//
// Olivero & Longbothum (1977, JQSRT 17, 233), with f_G, f_L the Gaussian and Lorentzian FWHM:
//   f_V ~ 0.5346 f_L + sqrt(0.2166 f_L^2 + f_G^2)
// stated accuracy 0.02 % (from memory); against the numerical FWHM of scipy.special.wofz we measure a largest
// deviation of 0.0237 % at f_L / f_G = 0.29 (tests/broadening/line_widths_test.cpp). Independent parts combine as: Gaussian FWHMs in quadrature,
// Lorentzian FWHMs summed (a convolution of Gaussians is Gaussian, of Lorentzians Lorentzian).
// The numerical FWHM solves H(a, v) = H(a, 0) / 2 for v by bisection on the Voigt function of
// synth/voigt.hpp (libcerf), with Gaussian 1/e half-width w = f_G / (2 sqrt(ln 2)) and a = f_L / (2 w).
#pragma once

namespace zeeline {

/// Accuracy of the Olivero-Longbothum formula (relative): stated 2e-4, measured largest deviation 2.37e-4.
inline constexpr double kOliveroLongbothumAccuracy = 2.4e-4;

double VoigtFwhmOliveroLongbothum(double gaussian_fwhm, double lorentzian_fwhm);

/// Numerical FWHM (same unit as the inputs); exact to ~1e-10 relative.
double VoigtFwhmNumerical(double gaussian_fwhm, double lorentzian_fwhm);

}  // namespace zeeline
