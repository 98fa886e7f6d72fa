// zeeline/broadening/zeeman_width.hpp -- how much an unresolved Zeeman pattern widens a line.
//
// The pattern (atomic/zeeman_pattern.hpp) places component k at s_k Delta lambda_B (Lorentz units, LL04
// eq. 3.8 and 3.13) with strength S_k summing to 1 within each q group. Seen from all directions (or by an
// isotropic ensemble) each of the three q groups carries one third of the light (LL04 sect. 6.6: pi weighted
// sin^2(g)/2, each sigma (1 + cos^2 g)/4, whose averages over the sphere are 1/3 each). The pattern's
// width factor is its rms shift in Lorentz units,
//   z = sqrt( (1/3) sum_q sum_k S_k s_k^2 )      (normal triplet: z = sqrt(2/3))
// and the Zeeman broadening is counted as a Gaussian of the same second moment,
//   FWHM_Z = 2 sqrt(2 ln 2) z Delta lambda_B(B) ~ z lambda0^2 B
// which adds in quadrature to the Doppler and instrument widths. This is an approximation of our own: a
// pattern is not a Gaussian, and once it is resolved (sigma separation 2 g_eff Delta lambda_B above the line
// width) the line splits rather than widens; the budget prints the separation too. A line set in which every
// line has the same z lambda0^2 cannot tell a field from an extra shared width (broadening/diagnose.hpp).
#pragma once

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

/// rms shift of the isotropically weighted pattern, in Lorentz units (>= 0).
double ZeemanWidthFactor(const ZeemanPattern& pattern);

/// Zeeman FWHM entry (Gaussian of the same second moment) at field_gauss.
LineWidth ZeemanBroadening(double wavelength_nm, const ZeemanPattern& pattern, double field_gauss);

}  // namespace zeeline
