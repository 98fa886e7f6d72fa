// zeeline/io/cube_reader.hpp -- reading spectropolarimetric FITS cubes (Stokes I,Q,U,V x wavelength x 2-D
// spatial grid) tile by tile.
//
// What is accepted (docs/fits.md has the full rules):
//  * The first image HDU with data (cfitsio fits_open_image), or the one named with cfitsio's extended
//    filename syntax: "cube.fits[2]", "cube.fits[STOKES]". Exactly four axes, any order, any BITPIX;
//    BSCALE/BZERO are applied and integer BLANK pixels become NaN (cfitsio).
//  * The WCS is parsed by wcslib (wcspih + wcsset, FITS WCS Papers I-III, Greisen & Calabretta 2002,
//    Calabretta & Greisen 2002, Greisen et al. 2006). The spectral axis is the one wcslib identifies as
//    spectral with CTYPE WAVE, AWAV (air), FREQ or WAVN, linear or with a non-linear algorithm code
//    (e.g. WAVE-LOG); the STOKES axis has CTYPE 'STOKES' with values 1..4 = I,Q,U,V (Paper I, table 7;
//    any subset, any order, no repeats). The remaining two axes are spatial: x is the one that comes
//    first in the file, y the other (docs/conventions.md).
//  * Wavelengths are returned in nm, strictly increasing (a decreasing axis, e.g. FREQ, is reversed on
//    read), in the file's frame (AWAV = air; WAVE, FREQ, WAVN = vacuum) or converted to
//    CubeReadOptions::frame with io/air_vacuum.hpp. lambda = c / nu for FREQ, 1 / sigma for WAVN.
//  * V is multiplied by CubeReadOptions::v_sign (-1 for data reduced to the IAU 1974 sign, see
//    docs/conventions.md).
//
// Memory: the header sizes are checked against the file size before anything is allocated; tiles hold
// a block of whole spatial rows sized by CubeReadOptions::max_tile_mib, so peak memory does not grow
// with the cube. NaN/Inf samples are passed through unchanged and counted per pixel (never spread).
// Errors: FitsError naming the file, HDU and keyword.
#pragma once

#include <array>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "zeeline/core/wavelength_frame.hpp"

namespace zeeline {

/// FITS WCS Paper I STOKES codes.
enum class StokesParameter { kI = 1, kQ = 2, kU = 3, kV = 4 };

/// "I", "Q", "U", "V".
std::string ToString(StokesParameter s);

enum class AxisRole { kSpatialX, kSpatialY, kSpectral, kStokes };

/// "x", "y", "spectral", "stokes".
std::string ToString(AxisRole role);

struct CubeReadOptions {
  /// Frame of the returned wavelength grid; unset = the file's own frame.
  std::optional<WavelengthFrame> frame;
  /// +1 keeps V as stored; -1 negates it (data following the IAU 1974 sign, docs/conventions.md).
  int v_sign = +1;
  /// Upper bound on one tile's buffer in MiB (at least one spatial row is always read).
  double max_tile_mib = 64.0;
  /// Scan the whole cube once on open: data range, NaN/Inf counts; throws FitsError if no sample is
  /// finite (all-NaN cube).
  bool scan_statistics = false;
  /// Threads used to reorder a tile into pixel-major order (0 = all available, OpenMP).
  int threads = 0;
  /// Read the data unit of an uncompressed, unscaled float32 cube on a local disk with pread() into the tile
  /// (the file's bytes, swapped when gathered: one copy less than cfitsio's read and byte swap). Everything
  /// else (compressed or gzipped files, BSCALE/BZERO, other BITPIX, image sections, short runs) is read by
  /// cfitsio either way. false = cfitsio always.
  bool direct_read = true;

  /// Empty when valid, otherwise a message naming the field, its value and the allowed range.
  std::string Validate() const;
};

struct CubeAxis {
  int fits_axis = 0;  ///< 1-based FITS axis number (NAXISn)
  AxisRole role = AxisRole::kSpatialX;
  long size = 0;
  std::string ctype, cunit;  ///< as written in the header (CUNIT may be empty)
};

struct CubeStatistics {
  double min = 0.0, max = 0.0;                  ///< over finite samples (V after v_sign)
  std::vector<double> min_per_stokes, max_per_stokes;  ///< same order as CubeInfo::stokes
  std::int64_t finite_samples = 0;
  std::int64_t nan_samples = 0;
  std::int64_t inf_samples = 0;
  std::int64_t pixels_with_nonfinite = 0;  ///< spatial pixels with at least one NaN/Inf sample
};

struct CubeInfo {
  std::string path;      ///< as given (may include an extended-syntax HDU selector)
  int hdu = 0;           ///< HDU index as in the FITS extended file name file.fits[n]: 0 = primary
  std::string extname;   ///< empty for an unnamed HDU
  int bitpix = 0;
  std::array<CubeAxis, 4> axes;  ///< in FITS order (axes[0] is NAXIS1)
  int x_axis = 0, y_axis = 0, spectral_axis = 0, stokes_axis = 0;  ///< 0-based indices into axes
  long nx = 0, ny = 0;
  std::vector<double> wavelength_nm;  ///< strictly increasing, in `frame`
  bool spectral_reversed = false;     ///< the file stores wavelengths decreasing
  WavelengthFrame file_frame = WavelengthFrame::kVacuum;  ///< frame of the file's spectral axis
  WavelengthFrame frame = WavelengthFrame::kVacuum;       ///< frame of wavelength_nm
  std::string spectral_ctype;         ///< e.g. "AWAV", "FREQ"
  std::vector<StokesParameter> stokes;  ///< in file order; tiles keep this order
  /// FITS header cards (80-character records, concatenated) of the WCS of the two spatial axes as a
  /// 2-D image (axis 1 = x, axis 2 = y), produced by wcslib wcssub + wcshdo. Empty axes give a linear
  /// pixel WCS.
  std::string spatial_wcs_header;
  std::optional<CubeStatistics> statistics;  ///< set when scanned

  /// Position of a Stokes parameter in the tile's stokes dimension, or -1 when absent.
  int StokesIndex(StokesParameter s) const;
  long n_wavelength() const { return static_cast<long>(wavelength_nm.size()); }
  int n_stokes() const { return static_cast<int>(stokes.size()); }
};

/// A block of whole spatial rows y_begin .. y_begin + y_count - 1.
/// data[((p * n_stokes) + s) * n_wavelength + w] with pixel p = (y - y_begin) * nx + x.
template <class T>
struct CubeTileT {
  long y_begin = 0, y_count = 0, nx = 0;
  int n_stokes = 0;
  long n_wavelength = 0;
  std::vector<T> data;
  std::vector<std::uint32_t> nonfinite;  ///< per pixel: number of NaN/Inf samples (0 = clean)

  long n_pixels() const { return y_count * nx; }
  const T* Spectrum(long pixel, int stokes_index) const {
    return data.data() + (pixel * n_stokes + stokes_index) * n_wavelength;
  }
};
using CubeTile = CubeTileT<double>;
using CubeTileF = CubeTileT<float>;

/// A block of whole spatial rows in FITS axis order, no reorder: samples as float for float32 and 8/16-bit
/// integer data (exact) and as double otherwise (BSCALE/BZERO applied, BLANK -> NaN), as cfitsio delivers
/// them, except that a plain float32 cube read directly (file_byte_order) keeps the file's big-endian bytes in
/// data_f: read samples through Gather/GatherBlock, which swap, not from data_f. Gather() copies one pixel's
/// spectra into the pixel-major order of CubeTile. For a consumer that
/// visits every pixel once (the map runner) this replaces the reorder pass of ReadRows: the gather runs in
/// the consumer's cache and threads, and the tile holds 4 bytes per sample instead of 8.
struct RawCubeTile {
  long y_begin = 0, y_count = 0, nx = 0;
  int n_stokes = 0;
  long n_wavelength = 0;
  bool as_float = true;        ///< samples in data_f (else data_d)
  bool file_byte_order = false;  ///< data_f holds the file's big-endian float32 bytes (direct read); Gather swaps
  std::vector<float> data_f;
  std::vector<double> data_d;
  long stride_x = 0, stride_y = 0, stride_spectral = 0, stride_stokes = 0;  ///< in samples
  bool spectral_reversed = false;  ///< the file stores wavelengths decreasing
  int v_index = -1;                ///< Stokes index of V (-1: none)
  double v_sign = 1.0;

  long n_pixels() const { return y_count * nx; }
  /// out[s * n_wavelength + w] (wavelengths increasing, V times v_sign) for pixel p = (y - y_begin) * nx + x,
  /// the same values ReadRows gives; returns the number of NaN/Inf samples of the pixel.
  std::uint32_t Gather(long pixel, double* out) const;
  /// Gather without counting NaN/Inf (for a caller whose own checks find them, e.g. data_sanity.hpp).
  void GatherSamples(long pixel, double* out) const;
  /// GatherSamples of pixels first_pixel .. first_pixel + count - 1, pixel j at out + j * n_stokes * n_wavelength;
  /// the same values, read plane by plane (fewer cache lines and pages per pixel when the spectral axis is slow).
  void GatherBlock(long first_pixel, long count, double* out) const;
};

class CubeReader {
 public:
  /// Opens and validates the cube; throws FitsError (file/HDU/keyword in the message) or OptionError.
  explicit CubeReader(const std::string& path, const CubeReadOptions& options = {});
  ~CubeReader();
  CubeReader(const CubeReader&) = delete;
  CubeReader& operator=(const CubeReader&) = delete;
  CubeReader(CubeReader&&) noexcept;
  CubeReader& operator=(CubeReader&&) noexcept;

  const CubeInfo& info() const;
  /// Rows per tile chosen from CubeReadOptions::max_tile_mib.
  long rows_per_tile() const;
  /// True when long runs of the data unit are read with pread() (CubeReadOptions::direct_read and a plain
  /// float32 file), false when cfitsio reads all of it.
  bool reads_data_directly() const;

  /// Reads rows [y_begin, y_begin + y_count) into `tile` (buffers are reused).
  template <class T>
  void ReadRows(long y_begin, long y_count, CubeTileT<T>& tile);

  /// Reads rows [y_begin, y_begin + y_count) without reordering (see RawCubeTile; buffers are reused).
  void ReadRowsRaw(long y_begin, long y_count, RawCubeTile& tile);

  /// Sequential iteration: fills the next tile, returns false after the last one.
  template <class T>
  bool NextTile(CubeTileT<T>& tile);
  /// Restart NextTile from the first row.
  void Rewind();

  /// Scans the whole cube (tile by tile) and stores the result in info().statistics.
  /// Throws FitsError if no sample is finite.
  const CubeStatistics& ScanStatistics();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Convenience: open, read the header (and statistics if asked) and close.
CubeInfo ReadCubeInfo(const std::string& path, const CubeReadOptions& options = {});

}  // namespace zeeline
