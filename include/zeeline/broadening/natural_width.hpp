// zeeline/broadening/natural_width.hpp -- natural (radiation-damping) width of a line.
//
// Each level decays at its total rate Gamma = sum of the Einstein A coefficients of all its downward
// transitions (s^-1); the line between levels u and l is Lorentzian with
//   delta_nu (FWHM) = (Gamma_u + Gamma_l) / (2 pi)
// (Weisskopf & Wigner 1930; e.g. Demtroeder, "Laser Spectroscopy" vol. 1, 4th ed. 2008, sect. 3.1; from
// memory). Gamma_l = 0 for a ground or metastable lower level. Units: s^-1 in, nm/Hz/km s^-1 out.
#pragma once

#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

/// Natural FWHM at wavelength_nm for total decay rates (s^-1) of the upper and lower level.
LineWidth NaturalWidth(double wavelength_nm, double upper_decay_rate_per_s, double lower_decay_rate_per_s);

}  // namespace zeeline
