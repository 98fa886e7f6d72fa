// zeeline/synth/stokes_synthesizer.hpp -- per-pixel forward model on a fixed uniform wavelength grid:
// Milne-Eddington synthesis (unno_rachkovsky.hpp) followed by one convolution that combines Gaussian
// macroturbulence and the instrument profile (instrument_profile.hpp), applied to the spectra and to
// every derivative.
//
// The macroturbulent Gaussian (1/e half-width macroturbulence_kms at the first line's wavelength) and a
// Gaussian instrument FWHM are merged into one Gaussian of FWHM sqrt(G_mac^2 + G_instr^2); a tabulated
// instrument response multiplies in Fourier space. Macroturbulence is a fixed (not fitted) quantity.
//
// Use: build one synthesizer per thread (it owns FFT buffers) and call Synthesize per pixel; no
// allocation once the output buffers have the grid size.
#pragma once

#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/synth/instrument_profile.hpp"
#include "zeeline/synth/me_parameters.hpp"
#include "zeeline/synth/unno_rachkovsky.hpp"

namespace zeeline {

struct SynthesisOptions {
  MeOptions me;                          ///< mu and Voigt method
  double macroturbulence_kms = 0.0;      ///< 1/e half-width of the Gaussian velocity distribution, >= 0
  InstrumentProfileOptions instrument;   ///< instrument profile (identity by default)

  std::string Validate() const;
};

class StokesSynthesizer {
 public:
  /// The grid must be uniform (relative step deviation < 1e-6) and ascending when a convolution is
  /// requested; throws OptionError otherwise or for invalid options/lines.
  StokesSynthesizer(const std::vector<MeLine>& lines, const Eigen::ArrayXd& wavelength_nm,
                    const SynthesisOptions& options = {});

  void Synthesize(const MeParameters& p, StokesArray& stokes, StokesJacobian* jacobian = nullptr);

  const Eigen::ArrayXd& wavelength_nm() const { return wavelength_nm_; }
  const MilneEddingtonModel& model() const { return model_; }
  /// Combined Gaussian FWHM (macroturbulence and Gaussian instrument), nm.
  double gaussian_fwhm_nm() const { return gaussian_fwhm_nm_; }

 private:
  MilneEddingtonModel model_;
  Eigen::ArrayXd wavelength_nm_;
  double gaussian_fwhm_nm_ = 0.0;
  ProfileConvolver convolver_;
};

/// A uniform grid of `points` samples spanning [centre - range/2, centre + range/2].
Eigen::ArrayXd UniformWavelengthGrid(double centre_nm, double range_nm, int points);

}  // namespace zeeline
