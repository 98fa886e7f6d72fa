// zeeline/maps/spectral_derivative.hpp -- first and second wavelength derivatives of a sampled spectrum.
//
// Method: central finite differences of fourth order on a uniform grid,
//   f'(x)  ~ [-f(x+2h) + 8 f(x+h) - 8 f(x-h) + f(x-2h)] / (12 h)
//   f''(x) ~ [-f(x+2h) + 16 f(x+h) - 30 f(x) + 16 f(x-h) - f(x-2h)] / (12 h^2)
// (Abramowitz & Stegun 1964, 25.3.6 and 25.3.24), falling back to the second-order three-point formulas
// on a non-uniform grid (Fornberg 1988 weights for three points) and at the two samples next to each end;
// the end samples themselves use one-sided second-order formulas. Truncation error O(h^4) keeps the bias
// far below the noise for a line sampled at >= 2 points per Doppler width, and the white-noise gain of the
// first-derivative stencil is sqrt(130)/12 = 0.950/h (vs 0.707/h for the three-point formula), so noise
// in I is not amplified much; the weak-field error bars include it (NoiseGainFirst).
// We use finite differences rather than an FFT derivative because spectra are short, not periodic and
// often irregularly sampled; an FFT derivative would need apodisation that biases the line wings.
#pragma once

#include <cstddef>

namespace zeeline {

/// d f / d lambda into `out` (length n >= 3). `x` strictly increasing.
void FirstDerivative(const double* x, const double* f, std::size_t n, double* out);
/// d^2 f / d lambda^2 into `out` (length n >= 3).
void SecondDerivative(const double* x, const double* f, std::size_t n, double* out);

/// White-noise gain of FirstDerivative at an interior sample of a uniform grid of step h: sigma_f' / sigma_f.
inline double NoiseGainFirst(double h) { return 0.9501461875825213 / h; }  // sqrt(130)/12
/// Same for SecondDerivative: sqrt(1 + 256 + 900 + 256 + 1)/12 / h^2 = sqrt(1414)/12 / h^2.
inline double NoiseGainSecond(double h) { return 3.1336288815095513 / (h * h); }

}  // namespace zeeline
