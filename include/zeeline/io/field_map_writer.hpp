// zeeline/io/field_map_writer.hpp -- writing field maps and Stokes cubes as multi-extension FITS.
//
// Field-map file layout (docs/fits.md):
//   HDU 0  primary, no data (NAXIS = 0), provenance keywords: CREATOR (tool and ZEELINE_VERSION),
//          DATE (UTC, written by cfitsio), ZLMETHOD, ZLLINE, ZLINPUT, ZLCMD (long strings use the FITS
//          4.0 CONTINUE convention), HISTORY lines, caller-supplied keywords.
//   HDU 1+ one 2-D image per map, EXTNAME = B_TOTAL, B_INCL, B_AZIM, B_LOS, B_TRANS, V_LOS, CHI2,
//          METHOD, <NAME>_SIGMA for uncertainties, QUALITY (int32 bit flags, io/quality_flags.hpp) or any
//          other name; BUNIT per map ('G', 'deg', 'km/s'); the spatial WCS of the input cube (cards
//          from CubeInfo::spatial_wcs_header: wcslib wcssub + wcshdo) on every map.
// Stokes-cube layout (WriteStokesCube): primary HDU = 4-D float32 cube with NAXIS1 = x, NAXIS2 = y,
//   NAXIS3 = wavelength (CTYPE3 'AWAV' for air, 'WAVE' for vacuum, CUNIT3 'nm', linear), NAXIS4 =
//   STOKES (CTYPE4 'STOKES', Paper I codes), the spatial WCS on axes 1-2; then the extra 2-D images.
//
// Files are written to a temporary file in the destination directory and renamed on success; an
// existing destination is never replaced unless FitsWriteOptions::overwrite is set. Errors: FitsError
// naming the file, the HDU (EXTNAME) and the problem.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "zeeline/core/wavelength_frame.hpp"
#include "zeeline/io/cube_reader.hpp"

namespace zeeline {

/// Standard map names (EXTNAME) and their units (BUNIT).
namespace map_names {
inline constexpr const char* kField = "B_TOTAL";       // G, |B|
inline constexpr const char* kInclination = "B_INCL";  // deg, 0 = toward the observer
inline constexpr const char* kAzimuth = "B_AZIM";      // deg, [0, 180), from +x toward +y
inline constexpr const char* kBlos = "B_LOS";          // G, positive toward the observer
inline constexpr const char* kBtrans = "B_TRANS";      // G, >= 0
inline constexpr const char* kVlos = "V_LOS";          // km/s, positive = redshift
inline constexpr const char* kChi2 = "CHI2";           // dimensionless
inline constexpr const char* kMethod = "METHOD";       // integer code of the method used per pixel
inline constexpr const char* kQuality = "QUALITY";     // int32 bit flags
inline constexpr const char* kErrorSuffix = "_SIGMA";  // B_TOTAL_SIGMA etc., same unit as the map
}  // namespace map_names

/// BUNIT of a standard map name ("G", "deg", "km/s"; "" for CHI2, METHOD, QUALITY and unknown names).
/// NAME_SIGMA gets the unit of NAME.
std::string StandardMapUnit(const std::string& extname);

enum class FitsPixelType { kFloat32, kFloat64, kInt16, kInt32 };

/// One header keyword with a string, real, integer or logical value.
struct HeaderValue {
  std::string key;  ///< at most 8 characters, A-Z 0-9 - _
  std::variant<std::string, double, long long, bool> value;
  std::string comment;
};

/// A generic image HDU (maps, truth maps, small cubes).
struct ImageHdu {
  std::string extname;        ///< unique in the file; A-Z, 0-9, '_' only
  std::string bunit;          ///< physical unit ('' = dimensionless, BUNIT omitted)
  std::vector<long> naxes;    ///< FITS order: {nx, ny} for a map (NAXIS1 = x varies fastest)
  std::vector<double> values; ///< FITS order: values[y * nx + x] for a map; NaN = undefined (floats)
  /// Alternative payload of a kFloat32 image, used when `values` is empty: large maps are written from
  /// their float samples without a double copy (the file is the same).
  std::vector<float> values_f32;
  FitsPixelType type = FitsPixelType::kFloat32;
  /// Copy the file's spatial WCS onto axes 1-2 (2-D images and cubes whose first two axes are x, y).
  bool spatial_wcs = true;
  /// WCS cards for this HDU only (replaces the file's spatial WCS when non-empty); filled on read.
  std::string wcs_header;
  std::vector<HeaderValue> keywords;  ///< extra keywords
};

/// Convenience: a 2-D float32 map with the standard unit of its name.
ImageHdu MakeMap(const std::string& extname, long nx, long ny, std::vector<double> values);

struct Provenance {
  std::string command_line;  ///< ZLCMD
  std::string method;        ///< ZLMETHOD, e.g. "wfa"
  std::string line;          ///< ZLLINE, e.g. "Fe I 630.2494 nm air g_eff=2.5"
  std::string input;         ///< ZLINPUT, the input cube path
  std::vector<std::string> history;    ///< HISTORY cards (wrapped at 70 characters)
  std::vector<HeaderValue> keywords;   ///< extra primary-header keywords
};

struct FitsWriteOptions {
  bool overwrite = false;  ///< replace an existing destination file
  Provenance provenance;

  /// Empty when valid, otherwise a message naming the bad field.
  std::string Validate() const;
};

/// Writes a field-map file: empty primary with provenance, then one image HDU per entry of `maps`.
/// `spatial_wcs_header` is CubeInfo::spatial_wcs_header of the input (may be empty: no WCS).
void WriteFieldMaps(const std::string& path, const std::vector<ImageHdu>& maps,
                    const std::string& spatial_wcs_header, const FitsWriteOptions& options);

/// A field-map file written row block by row block, so that a map run need not hold its maps (the file is
/// the one WriteFieldMaps writes from the same HDUs). The primary HDU and every image HDU of `layout` (2-D,
/// no values: headers, types and keywords only) are created at once; cfitsio reserves each image's data area
/// when the next HDU is created. Rows are then written in any order; Commit removes the HDUs the caller
/// drops (maps without a finite value), closes the file and moves it onto `path` (never before: nothing
/// appears under `path` on failure; an existing `path` is replaced only with options.overwrite).
/// The working file is a temporary one in the destination directory, removed unless committed; or, with a
/// `work_path`, that file, kept when not committed so that a later run can reopen it (`reopen`: the file
/// must hold the same HDUs; its primary header gets this run's provenance at Commit) and continue.
/// Errors: FitsError naming the file, the HDU and the problem. Memory: cfitsio's buffers only.
class FieldMapFileStream {
 public:
  FieldMapFileStream(const std::string& path, std::vector<ImageHdu> layout, const std::string& spatial_wcs_header,
                     const FitsWriteOptions& options, const std::string& work_path = "", bool reopen = false);
  ~FieldMapFileStream();
  FieldMapFileStream(const FieldMapFileStream&) = delete;
  FieldMapFileStream& operator=(const FieldMapFileStream&) = delete;

  /// Rows [first_row, first_row + rows) of image `hdu` (index into the layout), x fastest.
  void WriteRows(std::size_t hdu, long first_row, long rows, const float* values);
  void WriteRows(std::size_t hdu, long first_row, long rows, const std::int16_t* values);
  void WriteRows(std::size_t hdu, long first_row, long rows, const std::int32_t* values);
  /// Reads rows back (a reopened file's finished rows).
  void ReadRows(std::size_t hdu, long first_row, long rows, float* values);
  /// Hands everything written so far to the operating system (it survives the end of the process).
  void Flush();
  /// Removes the images whose keep[i] is false, finishes the file and moves it onto `path`.
  void Commit(const std::vector<bool>& keep);
  const std::vector<ImageHdu>& layout() const;

 private:
  struct State;
  std::unique_ptr<State> state_;
};

/// A Stokes cube in memory, laid out like CubeTile: values[((p * n_stokes) + s) * n_wavelength + w]
/// with p = y * nx + x.
struct StokesCubeData {
  long nx = 0, ny = 0;
  std::vector<StokesParameter> stokes;  ///< codes must form an arithmetic sequence (I,Q,U,V; I,V; V)
  std::vector<float> values;
  std::string bunit;  ///< e.g. "" (relative to the continuum) or "W m-2 nm-1 sr-1"
};

/// Writes a 4-D Stokes cube (primary HDU, layout in the header comment) plus `extra_hdus` (e.g. truth
/// maps B_TOTAL, B_INCL, ...). `wavelength_nm` must be uniform (to 1e-6 of the step) and strictly
/// increasing; `frame` selects CTYPE3 'AWAV' (air) or 'WAVE' (vacuum).
void WriteStokesCube(const std::string& path, const StokesCubeData& data, const std::vector<double>& wavelength_nm,
                     WavelengthFrame frame, const std::string& spatial_wcs_header,
                     const std::vector<ImageHdu>& extra_hdus, const FitsWriteOptions& options);

/// A linear 2-D spatial WCS (helper for synthetic data without an input cube): helioprojective
/// HPLN-TAN / HPLT-TAN in arcsec, pixel scale `arcsec_per_pixel`, reference pixel at the image centre
/// pointing at (x0_arcsec, y0_arcsec). Returned as header cards like CubeInfo::spatial_wcs_header.
std::string MakeHelioprojectiveWcs(long nx, long ny, double arcsec_per_pixel, double x0_arcsec = 0.0,
                                   double y0_arcsec = 0.0);

/// Reads every 2-D image HDU of a file written by WriteFieldMaps (or any FITS file): EXTNAME, BUNIT,
/// values as double, the HDU's WCS cards in wcs_header, the quicklook keywords (METHn, QBITn, AZRANGE, DETSIG)
/// in keywords. HDUs without EXTNAME are named HDU<n>, n as in file.fits[n].
std::vector<ImageHdu> ReadImageHdus(const std::string& path);

}  // namespace zeeline
