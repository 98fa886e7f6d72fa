#include "zeeline/broadening/line_width.hpp"

#include <utility>

#include "zeeline/core/constants.hpp"

namespace zeeline {

std::string ToString(ProfileKind kind) {
  switch (kind) {
    case ProfileKind::kLorentzian: return "lorentzian";
    case ProfileKind::kGaussian: return "gaussian";
    case ProfileKind::kZeemanPattern: return "zeeman-pattern";
  }
  return "?";
}

LineWidth MakeLineWidth(std::string name, ProfileKind profile, double fwhm_nm, double wavelength_nm) {
  LineWidth w;
  w.name = std::move(name);
  w.profile = profile;
  w.fwhm_nm = fwhm_nm;
  const double lambda_m = wavelength_nm * 1e-9;
  w.fwhm_hz = constants::kSpeedOfLight_m_s * fwhm_nm * 1e-9 / (lambda_m * lambda_m);
  w.fwhm_kms = constants::kSpeedOfLight_m_s * 1e-3 * fwhm_nm / wavelength_nm;
  return w;
}

double FrequencyToWavelengthWidth_nm(double fwhm_hz, double wavelength_nm) {
  const double lambda_m = wavelength_nm * 1e-9;
  return lambda_m * lambda_m * fwhm_hz / constants::kSpeedOfLight_m_s * 1e9;
}

}  // namespace zeeline
