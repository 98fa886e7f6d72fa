#include "zeeline/broadening/voigt_fwhm.hpp"

#include <cmath>

#include "zeeline/synth/voigt.hpp"

namespace zeeline {

double VoigtFwhmOliveroLongbothum(double gaussian_fwhm, double lorentzian_fwhm) {
  return 0.5346 * lorentzian_fwhm +
         std::sqrt(0.2166 * lorentzian_fwhm * lorentzian_fwhm + gaussian_fwhm * gaussian_fwhm);
}

double VoigtFwhmNumerical(double gaussian_fwhm, double lorentzian_fwhm) {
  if (gaussian_fwhm <= 0.0) return lorentzian_fwhm;
  const double w = gaussian_fwhm / (2.0 * std::sqrt(std::log(2.0)));
  const double a = lorentzian_fwhm / (2.0 * w);
  const double half = 0.5 * VoigtH(a, 0.0);
  // H decreases monotonically in |v|; the half point lies below the sum of the half-widths (in w units).
  double lo = 0.0, hi = 0.5 * (gaussian_fwhm + lorentzian_fwhm) / w + 1.0;
  while (VoigtH(a, hi) > half) hi *= 2.0;
  for (int i = 0; i < 200 && hi - lo > 1e-13 * hi; ++i) {
    const double mid = 0.5 * (lo + hi);
    (VoigtH(a, mid) > half ? lo : hi) = mid;
  }
  return 2.0 * 0.5 * (lo + hi) * w;
}

}  // namespace zeeline
