// zeeline/broadening/stark_hydrogen.hpp -- an order-of-magnitude estimate of the linear Stark width of a
// hydrogen line n_u -> n_l in a plasma.
//
// Quasi-static ions produce the Holtsmark distribution of electric fields, whose scale is the normal field
//   F0 = 2 pi (4/15)^(2/3) e N^(2/3) / (4 pi eps0) = 2.603 e N^(2/3) / (4 pi eps0)
// (Holtsmark 1919, Ann. Phys. 58, 577; Griem 1974, "Spectral Line Broadening by Plasmas", ch. 2; from
// memory), N the density of singly charged ions = n_e. A hydrogen level n shifts linearly in a field F by
//   delta_E = (3/2) n k e a0 F,  k = n1 - n2 in -(n-1) .. (n-1)
// (Bethe & Salpeter 1957, sect. 51; from memory), so its extreme shifts are about +-(3/2) n^2 e a0 F. The
// estimate used here takes the FWHM as the difference of the two levels' extreme shifts at the normal field,
//   delta_nu (FWHM) ~ (3/2) (n_u^2 - n_l^2) e a0 F0 / h   ~ n_e^(2/3),
// counted as a Lorentzian in the total. It is an ORDER-OF-MAGNITUDE estimate (a factor ~2-3 either way:
// electron impacts, ion dynamics and the exact component pattern are ignored); use tabulated Stark profiles
// (e.g. Griem 1974; Gigosos & Cardenoso 1996, J. Phys. B 29, 4795) for a measurement of n_e. Example:
// H-alpha at n_e = 1e17 cm^-3 gives about 1.1 nm, against about 1 nm tabulated (from memory).
#pragma once

#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

/// Holtsmark normal field (V/m) for an ion density N (cm^-3).
double HoltsmarkNormalField_V_m(double ion_density_cm3);

/// FWHM in Hz of the estimate above.
double LinearStarkWidth_hz(double electron_density_cm3, int n_upper, int n_lower);

LineWidth StarkBroadening(double wavelength_nm, double electron_density_cm3, int n_upper, int n_lower);

}  // namespace zeeline
