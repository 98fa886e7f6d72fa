// zeeline/maps/pixel_spectrum.hpp -- one pixel's Stokes spectra as seen by the field estimators, and the
// continuum/noise helpers every estimator shares.
//
// Spectra are non-owning views (pointer + length) so the estimators run straight on a tile's buffer
// without copies. Q, U, V may be null when the cube lacks them (an I+V cube still gives B_LOS).
// The continuum level Ic is the mean of I over the continuum samples; the noise of each Stokes
// parameter comes from second differences of consecutive continuum samples,
//   sigma^2 = < (f[i-1] - 2 f[i] + f[i+1])^2 > / 6,
// which is blind to offsets and linear trends such as a damping wing reaching into the continuum window
// (a standard robust estimator, common practice), unless the caller gives a noise level (units of Ic).
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace zeeline {

struct PixelSpectrum {
  const double* wavelength_nm = nullptr;  ///< strictly increasing
  std::size_t n = 0;
  const double* I = nullptr;
  const double* Q = nullptr;  ///< may be null
  const double* U = nullptr;  ///< may be null
  const double* V = nullptr;  ///< may be null
};

/// Continuum level and per-Stokes noise (absolute units, same as the data).
struct ContinuumEstimate {
  double continuum = 0.0;
  double noise_I = 0.0, noise_Q = 0.0, noise_U = 0.0, noise_V = 0.0;
  std::size_t samples = 0;  ///< continuum samples used
  /// Degrees of freedom of the noise estimate (NoiseDegreesOfFreedom); infinite when the noise was given.
  double noise_dof = 0.0;
};

/// The checks every single-line estimator makes on its options: a positive rest wavelength, a magnetically
/// sensitive line (|g_eff| > 1e-6) and a non-negative window. Empty when valid, else the message.
std::string ValidateLineOptions(double rest_wavelength_nm, double g_eff, double window_halfwidth_nm);

/// Half-open index range [begin, end) of the samples within `halfwidth_nm` of `centre_nm` (inclusive) on an
/// increasing grid; the whole grid when halfwidth_nm <= 0.
struct SampleRange {
  std::size_t begin = 0, end = 0;
  std::size_t size() const { return end - begin; }
};
SampleRange WindowRange(const double* wavelength_nm, std::size_t n, double centre_nm, double halfwidth_nm);
/// The same range found by stepping from `near` (a range close to it, e.g. the window around the rest wavelength
/// for one around a pixel's observed line centre): a few comparisons instead of two binary searches when the
/// centre has moved by a few samples, the same answer from any start.
SampleRange WindowRangeFrom(const double* wavelength_nm, std::size_t n, double centre_nm, double halfwidth_nm,
                            SampleRange near);

/// Sample indices whose wavelength lies in [lo_nm, hi_nm] (inclusive).
std::vector<std::size_t> SamplesInWindow(const double* wavelength_nm, std::size_t n, double lo_nm, double hi_nm);

/// Continuum samples: all samples farther than `exclude_halfwidth_nm` from `centre_nm`.
std::vector<std::size_t> ContinuumSamples(const double* wavelength_nm, std::size_t n, double centre_nm,
                                          double exclude_halfwidth_nm);

/// Effective degrees of freedom of the noise variance from second differences over `continuum_samples`
/// (Satterthwaite: 2 E[s^2]^2 / var(s^2), for white Gaussian noise, finite samples). The m differences of a run
/// of consecutive samples are correlated (-2/3 at lag 1, 1/6 at lag 2), so a long run gives 18/35 m = 0.514 m
/// dof, not m, and each break between runs adds a little (exact sum in MakeContinuumRuns, derived there). With
/// fewer than 3 differences the noise is the standard deviation about the mean: n - 1 dof.
double NoiseDegreesOfFreedom(const std::vector<std::size_t>& continuum_samples);

/// Continuum level and noise from the given samples. `given_noise_rel` > 0 overrides the measured noise
/// for Q, U, V (and I) with given_noise_rel * continuum.
ContinuumEstimate EstimateContinuum(const PixelSpectrum& s, const std::vector<std::size_t>& continuum_samples,
                                    double given_noise_rel = 0.0);

/// A list of continuum samples as the runs of consecutive indices it is made of, in list order: the list
/// is the concatenation of begin, begin + 1, ..., end - 1 over the runs (e.g. {3, 4, 5, 9, 10} is [3, 6),
/// [9, 11)). Worked out once per grid (MakeContinuumRuns), it lets the per-pixel estimate walk each run as a
/// plain loop: the noise's second differences are exactly the triples inside one run, so no index list is
/// read and no contiguity is tested per sample.
struct ContinuumRuns {
  std::vector<SampleRange> runs;
  std::size_t samples = 0;  ///< length of the list
  double noise_dof = 0.0;   ///< NoiseDegreesOfFreedom of the list (a property of the list alone)
};
ContinuumRuns MakeContinuumRuns(const std::vector<std::size_t>& continuum_samples);

/// The same estimate from the runs of the list (bit for bit: every sum adds the same terms in the same order).
ContinuumEstimate EstimateContinuum(const PixelSpectrum& s, const ContinuumRuns& runs, double given_noise_rel = 0.0);

/// The same estimate for a caller that has already summed the level: `level` must be the mean of I over the
/// runs with every sample finite (as the data-sanity check finds it), which is what EstimateContinuum would
/// compute; only the noise is measured here.
ContinuumEstimate EstimateContinuumAtLevel(const PixelSpectrum& s, const ContinuumRuns& runs, double level,
                                           double given_noise_rel = 0.0);

}  // namespace zeeline
