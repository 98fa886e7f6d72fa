// zeeline/broadening/line_width.hpp -- one broadening mechanism's full width at half maximum, expressed in
// wavelength, frequency and velocity, with the shape of its profile.
//
// Conversions at rest wavelength lambda0 (first order in the width, common practice):
//   delta_nu = c delta_lambda / lambda0^2,    delta_v = c delta_lambda / lambda0
// Profile kinds: Lorentzian (natural, pressure, resonance; hydrogen Stark is counted here, see
// stark_hydrogen.hpp), Gaussian (Doppler, instrument) and the Zeeman pattern, which is neither and enters the
// total as a Gaussian of the same second moment (zeeman_width.hpp).
#pragma once

#include <string>
#include <vector>

namespace zeeline {

enum class ProfileKind { kLorentzian, kGaussian, kZeemanPattern };

/// "lorentzian", "gaussian", "zeeman-pattern".
std::string ToString(ProfileKind kind);

struct LineWidth {
  std::string name;              ///< natural, doppler, pressure, resonance, stark, zeeman, instrument
  ProfileKind profile = ProfileKind::kGaussian;
  double fwhm_nm = 0.0;
  double fwhm_hz = 0.0;          ///< c fwhm / lambda0^2
  double fwhm_kms = 0.0;         ///< c fwhm / lambda0
  std::string formula;           ///< the formula used, one line
  std::string source;            ///< where it comes from (author year)
  std::vector<std::string> notes;  ///< validity tests and caveats, one sentence each
};

/// Fills fwhm_hz and fwhm_kms from fwhm_nm at wavelength_nm.
LineWidth MakeLineWidth(std::string name, ProfileKind profile, double fwhm_nm, double wavelength_nm);

/// Wavelength FWHM (nm) of a frequency FWHM (Hz) at wavelength_nm: lambda0^2 delta_nu / c.
double FrequencyToWavelengthWidth_nm(double fwhm_hz, double wavelength_nm);

}  // namespace zeeline
