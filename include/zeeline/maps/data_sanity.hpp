// zeeline/maps/data_sanity.hpp -- is a pixel's input fit to be inverted at all? Checks made on every pixel's
// Stokes spectra before any estimator sees them.
//
// A pixel fails, and gets NaN maps with the QUALITY bits below (io/quality_flags.hpp) and no inversion, when
//   NONFINITE_INPUT  a sample of I, Q, U or V is NaN or Inf (IEEE 754: not a finite number);
//   ABSURD_INPUT     a finite sample's magnitude exceeds the plausible range of the file's type
//                    (|x| > 1e-3 x the largest finite value of BITPIX -32 or -64: FLT_MAX = 3.40282e38,
//                    DBL_MAX = 1.79769e308, IEEE 754-2008 binary32/binary64; values near them are fill values,
//                    not light), or lies more than kAbsurdOrders (8) orders of magnitude above the cube's median
//                    level (the median |I| of the first tile's clean samples, MedianLevel below; no real
//                    scene spans 1e8 in intensity within one cube, while a stray 3e38 or 1e20 does);
//   NONPOSITIVE_I    the continuum intensity Ic (mean of I over the continuum samples) is <= 0: intensity
//                    is positive by definition, so a negative or zero Ic means a bad background subtraction,
//                    a sign flip or an empty pixel, and every estimator divides by it;
//   POL_EXCEEDS_I    at some sample |Q|, |U| or |V| exceeds I by more than excess_sigma times the noise of the
//                    difference, hypot(sigma_X, sigma_I), plus 1e-6 Ic for rounding: I^2 >= Q^2 + U^2 + V^2 for any beam (Stokes 1852;
//                    Chandrasekhar 1950, Radiative Transfer, sect. 15, from memory), so beyond noise this is a
//                    calibration or cube-layout error (e.g. V/I stored in place of V with I normalised).
// Only the first two are checked when a sample is non-finite or absurd (the rest would compare garbage).
// The check depends on the pixel's own samples and on cube-wide constants fixed before the first pixel, never
// on its neighbours, so a bad pixel does not spread and the maps do not depend on the tiling.
// Cost: one pass over the pixel's samples plus the continuum estimate (pixel_spectrum.hpp), which the runs
// overload hands on to the estimators.
#pragma once

#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

/// Orders of magnitude above the cube's median level beyond which a sample is absurd.
constexpr double kAbsurdOrders = 8.0;

/// Cube-wide constants of the check, fixed once before the first pixel.
struct DataSanityLimits {
  double abs_limit = HUGE_VAL;     ///< |x| above this is ABSURD_INPUT (the type's plausible range)
  double level_ceiling = HUGE_VAL; ///< |x| above this is ABSURD_INPUT (1e8 x the cube's median level)
  double noise_rel = 0.0;          ///< > 0: noise = noise_rel * Ic instead of the measured noise
  double excess_sigma = 5.0;       ///< POL_EXCEEDS_I tolerance in noise sigmas

  std::string Validate() const;
};

/// Plausible magnitude of a sample stored with this FITS BITPIX after BSCALE/BZERO: 1e-3 of the largest
/// finite float32 / float64 for BITPIX -32 / -64; unlimited for integer types (every scaled value is possible).
double TypeAbsLimit(int bitpix);

/// The cube's median level: the median of |x| over `i_samples` (Stokes I samples of the first tile's pixels
/// without non-finite or fill values; callers stride them to ~1e6), 0 when there is none.
double MedianLevel(std::vector<double> i_samples);

/// Limits for a cube: type range from `bitpix`, ceiling from `median_level` (no ceiling when it is <= 0).
DataSanityLimits MakeSanityLimits(int bitpix, double median_level, double noise_rel);

/// Non-finite or absurd samples only (no continuum needed): the test that keeps bad pixels out of cube-wide
/// averages. Returns kQualityNonFiniteInput | kQualityAbsurdInput bits.
std::uint32_t CheckSampleRange(const PixelSpectrum& s, const DataSanityLimits& limits);

/// The whole check (file comment): QUALITY bits of the failed tests, 0 for a usable pixel.
std::uint32_t CheckPixelSanity(const PixelSpectrum& s, const std::vector<std::size_t>& continuum_samples,
                               const DataSanityLimits& limits);
/// The same check on the continuum samples' runs (pixel_spectrum.hpp, worked out once per grid), handing on
/// what it measured: when it returns 0, `continuum` is EstimateContinuum(s, continuum_runs, limits.noise_rel)
/// bit for bit, so the estimators of a usable pixel need not measure the level and the noise again.
std::uint32_t CheckPixelSanity(const PixelSpectrum& s, const ContinuumRuns& continuum_runs,
                               const DataSanityLimits& limits, ContinuumEstimate& continuum);

/// QUALITY bits set by CheckPixelSanity.
constexpr std::uint32_t kQualityInputRejected =
    kQualityNonFiniteInput | kQualityAbsurdInput | kQualityNonPositiveI | kQualityPolExceedsI;

/// Throws FitsError naming `path` when no pixel of the map passed the check ("no usable pixel"), with the
/// number of pixels failing each test.
void RequireUsablePixel(const std::vector<std::int32_t>& quality, const std::string& path);
/// The same from counts (a map that is not held whole): `usable` pixels passed, `rejected` failed
/// NaN/Inf, absurd values, continuum I <= 0, |Q|,|U|,|V| > I; nothing happens when usable > 0 or pixels == 0.
void RequireUsablePixel(std::int64_t usable, std::int64_t pixels, const std::int64_t (&rejected)[4],
                        const std::string& path);

}  // namespace zeeline
