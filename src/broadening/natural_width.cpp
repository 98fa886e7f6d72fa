#include "zeeline/broadening/natural_width.hpp"

#include "zeeline/core/constants.hpp"

namespace zeeline {

LineWidth NaturalWidth(double wavelength_nm, double upper_decay_rate_per_s, double lower_decay_rate_per_s) {
  const double fwhm_hz = (upper_decay_rate_per_s + lower_decay_rate_per_s) / (2.0 * constants::kPi);
  LineWidth w = MakeLineWidth("natural", ProfileKind::kLorentzian,
                              FrequencyToWavelengthWidth_nm(fwhm_hz, wavelength_nm), wavelength_nm);
  w.formula = "delta_nu = (Gamma_u + Gamma_l) / (2 pi)";
  w.source = "Weisskopf & Wigner 1930; Demtroeder, Laser Spectroscopy vol. 1, sect. 3.1";
  if (lower_decay_rate_per_s == 0.0) w.notes.push_back("lower level taken as ground or metastable (Gamma_l = 0)");
  return w;
}

}  // namespace zeeline
