// zeeline/measure/cube_pixel.hpp -- the spectrum of one spatial pixel of a Stokes cube, as a Spectrum1D
// for MeasureSpectrum (`zeeline measure CUBE --pixel X,Y` / `--world LON,LAT`).
//
// The cube is read by io/cube_reader.hpp (any axis order, the file's wavelength frame, V times v_sign), one
// spatial row only. Pixels are 0-based here; the command line takes them 1-based like FITS (pixel 1 is the
// first). Errors: FitsError from the reader, SpectrumError for a pixel outside the image or a cube whose
// Stokes set cannot be measured (Q without U).
#pragma once

#include <string>

#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline {

/// Stokes I (and Q, U, V when the cube has them) of pixel (x, y), 0-based; `source` names the file and the
/// 1-based pixel, e.g. "cube.fits pixel (12, 7)".
Spectrum1D ReadCubePixelSpectrum(const std::string& cube_path, long x, long y, const SpectrumReadOptions& options);

}  // namespace zeeline
