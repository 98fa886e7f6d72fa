// array_inputs.hpp -- numpy arrays as the inputs of `measure` and `map`.
//
// A spectrum: 1-D arrays wavelength_nm, I and optionally Q with U, and V, held to the rules of a spectrum
// table (measure/spectrum_reader.hpp): equal lengths, at least kMinSpectrumSamples samples, finite values,
// strictly increasing wavelengths. Any dtype numpy can cast to float64; any strides (copied).
//
// A cube: a 4-D array (Stokes, wavelength, y, x) -- numpy's C order, so x varies fastest as NAXIS1 of a
// FITS cube -- with a uniform, strictly increasing wavelength_nm grid (to 1e-6 of the step, the rule of a
// linear CDELT3). It is handed to the same cube reader as a file, through a temporary FITS file in
// $TMPDIR (float32 arrays as BITPIX -32, everything else as -64, so no value changes on the way); the
// file is removed when the object goes away.
#pragma once

#include <string>

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include "zeeline/core/wavelength_frame.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline::python {

/// V is multiplied by v_sign (+1, or -1 for data in the IAU 1974 sense) as a file reader does. Throws
/// pybind11::value_error naming the array, the index and what was expected; OptionError for a bad v_sign.
Spectrum1D SpectrumFromArrays(const pybind11::handle& wavelength_nm, const pybind11::handle& I,
                              const pybind11::handle& Q, const pybind11::handle& U, const pybind11::handle& V,
                              int v_sign);

class TemporaryCubeFile {
 public:
  /// `stokes`: the Stokes parameter of each plane of axis 0, e.g. "IQUV" or "IV" (codes in arithmetic
  /// progression, as a linear STOKES axis needs). Throws pybind11::value_error for wrong shapes or grids,
  /// OSError (via FitsError) when the file cannot be written.
  TemporaryCubeFile(const pybind11::handle& cube, const pybind11::handle& wavelength_nm, const std::string& stokes,
                    WavelengthFrame frame);
  ~TemporaryCubeFile();
  TemporaryCubeFile(const TemporaryCubeFile&) = delete;
  TemporaryCubeFile& operator=(const TemporaryCubeFile&) = delete;

  const std::string& path() const { return path_; }

 private:
  std::string path_;
};

}  // namespace zeeline::python
