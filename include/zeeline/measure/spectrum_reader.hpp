// zeeline/measure/spectrum_reader.hpp -- one polarised spectrum (wavelength, I[, Q, U, V]) read from a plain
// table or a FITS file, for `zeeline measure` (formats in docs/measure.md).
//
// Table: one sample per line, cells separated by commas (when the line has a comma) or by whitespace;
// '#' starts a comment; blank lines are skipped. An optional header line (the first non-comment line
// whose first cell is not a number) names the columns in any order: `wavelength_<unit>` (unit nm, A,
// Angstrom, pm, um or m; bare `wavelength` is nm), `I`, and optionally `Q`, `U` (together) and `V`
// (names case-insensitive). Without a header the columns are wavelength_nm, I, then V (3 columns) or
// Q, U, V (5 columns). Wavelengths must increase strictly. Every problem throws SpectrumError naming the
// file, the line, the column (number and name) and what was expected.
//
// FITS: (a) a 1-D primary image = I, with optional 1-D image extensions EXTNAME = Q, U, V; (b) an empty
// primary with 1-D image extensions EXTNAME = I (required), Q, U, V; (c) a 2-D image with NAXIS1 =
// wavelength and NAXIS2 = Stokes, CTYPE2 = 'STOKES' (Stokes codes 1..4 = I, Q, U, V; FITS WCS paper III,
// Greisen et al. 2006, table 7). The spectral axis is axis 1 with CTYPE1 = 'WAVE' (vacuum) or 'AWAV' (air)
// and an explicit CUNIT1; the world coordinates come from wcslib (wcspih, unitfix, wcsset, wcsp2s) and
// are converted to nm. A decreasing grid is reversed. Every problem throws SpectrumError naming the file,
// the HDU and the keyword.
//
// V sign: zeeline's V (docs/conventions.md); `v_sign = -1` negates V on input for data that follow the
// IAU 1974 sense.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "zeeline/core/wavelength_frame.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

struct Spectrum1D {
  std::vector<double> wavelength_nm;  ///< strictly increasing
  std::vector<double> I, Q, U, V;     ///< Q, U, V empty when absent (Q and U come together)
  std::optional<WavelengthFrame> frame;  ///< from CTYPE1 (FITS); unset for tables (same frame as the line)
  std::string source;                 ///< file name, for messages

  std::size_t size() const { return wavelength_nm.size(); }
  bool has_qu() const { return !Q.empty() && !U.empty(); }
  bool has_v() const { return !V.empty(); }
  /// Non-owning view for the estimators (maps/pixel_spectrum.hpp).
  PixelSpectrum View() const;
};

struct SpectrumReadOptions {
  int v_sign = 1;  ///< +1, or -1 to negate V (IAU 1974 sense on input)

  std::string Validate() const;
};

/// Minimum number of samples accepted.
inline constexpr std::size_t kMinSpectrumSamples = 8;

/// Reads a table or a FITS file (FITS recognised by its first card "SIMPLE  ="). Throws SpectrumError.
Spectrum1D ReadSpectrum(const std::string& path, const SpectrumReadOptions& options = {});

/// Parses table text already in memory; `origin` names it in error messages.
Spectrum1D ParseSpectrumTable(const std::string& text, const std::string& origin);

/// Reads a FITS spectrum (layouts a-c above; cfitsio extended file names allowed).
Spectrum1D ReadSpectrumFits(const std::string& path);

}  // namespace zeeline
