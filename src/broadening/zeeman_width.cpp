#include "zeeline/broadening/zeeman_width.hpp"

#include <cmath>
#include <cstdio>

#include "zeeline/core/units.hpp"

namespace zeeline {

double ZeemanWidthFactor(const ZeemanPattern& pattern) {
  double second_moment = 0.0;
  for (const ZeemanComponent& c : pattern.components)
    second_moment += c.strength * c.shift_lorentz * c.shift_lorentz / 3.0;
  return std::sqrt(second_moment);
}

LineWidth ZeemanBroadening(double wavelength_nm, const ZeemanPattern& pattern, double field_gauss) {
  const double unit_nm = LorentzUnit_nm(wavelength_nm, std::fabs(field_gauss));
  const double z = ZeemanWidthFactor(pattern);
  const double fwhm_nm = 2.0 * std::sqrt(2.0 * std::log(2.0)) * z * unit_nm;
  LineWidth w = MakeLineWidth("zeeman", ProfileKind::kZeemanPattern, fwhm_nm, wavelength_nm);
  w.formula = "FWHM = 2 sqrt(2 ln 2) z dlambda_B, z = rms pattern shift (isotropic weights)";
  w.source = "Zeeman pattern LL04 eqs. 3.8, 3.13; Gaussian of equal second moment (zeeline approximation)";
  char buf[200];
  std::snprintf(buf, sizeof buf, "width factor z = %.4f, g_eff = %.4f; sigma separation 2 g_eff dlambda_B = %.4g nm",
                z, pattern.g_eff, 2.0 * std::fabs(pattern.g_eff) * unit_nm);
  w.notes.push_back(buf);
  w.notes.push_back("counted as a Gaussian of equal second moment; a resolved pattern splits the line instead");
  return w;
}

}  // namespace zeeline
