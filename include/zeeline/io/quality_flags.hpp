// zeeline/io/quality_flags.hpp -- bits of the QUALITY map written with every field-map file.
//
// QUALITY is a 32-bit integer image (BITPIX = 32, BUNIT absent); 0 means the pixel's estimates are
// usable. Each bit records one reason for doubt; several may be set. The list is documented in
// docs/fits.md and must only grow (bits keep their meaning across versions).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace zeeline {

enum QualityBit : std::uint32_t {
  kQualityNonFiniteInput = 1u << 0,  ///< the pixel's input spectra contain NaN or Inf samples
  kQualityLowSignal = 1u << 1,       ///< polarisation signal below the detection threshold
  kQualityNotConverged = 1u << 2,    ///< iterative fit did not converge (or hit its iteration limit)
  kQualityOutOfRange = 1u << 3,      ///< estimate outside the method's validity range (e.g. weak-field)
  kQualityMasked = 1u << 4,          ///< pixel not processed (user mask or off-target)
  kQualityBadFit = 1u << 5,          ///< fit residual (CHI2) above the acceptance threshold
  kQualityNoContinuum = 1u << 6,     ///< continuum intensity not positive / not found
  kQualitySaturatedLine = 1u << 7,   ///< saturated line and a transverse form that saturation biases
  kQualityModelMismatch = 1u << 8,   ///< the method's model does not describe the observed profile shapes
  kQualityInconsistent = 1u << 9,    ///< the method's outputs contradict each other or another estimate
  kQualityLowTransverse = 1u << 10,  ///< linear polarisation too weak: B_T, |B|, inclination, azimuth noise-dominated
  kQualityAbsurdInput = 1u << 11,    ///< a sample beyond the type's plausible range or 1e8 x the cube's level
  kQualityNonPositiveI = 1u << 12,   ///< continuum Stokes I <= 0 (maps/data_sanity.hpp)
  kQualityPolExceedsI = 1u << 13,    ///< |Q|, |U| or |V| > I beyond the noise (maps/data_sanity.hpp)
};

/// Names of the bits set in `flags`, e.g. {"NONFINITE_INPUT", "LOW_SIGNAL"}.
std::vector<std::string> QualityBitNames(std::uint32_t flags);

}  // namespace zeeline
