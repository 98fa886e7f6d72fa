// zeeline/io/quicklook.hpp -- PNG quicklook pictures of maps (cairo): one map per picture with title,
// unit, colour bar and axis ticks in FITS pixel numbers (1 = first pixel), and a summary sheet with
// several panels. North-up convention of FITS viewers: y increases upward.
//
// Colour maps (docs/fits.md, "Quicklook colour maps"):
//  * diverging (signed quantities: B_LOS, V_LOS; B_INCL around 90 deg): Moreland (2009), "Diverging
//    Color Maps for Scientific Visualization", ISVC 2009, LNCS 5876, 92: interpolation in the Msh
//    (polar CIELAB) space between cool (59, 76, 192) and warm (180, 4, 38) through a white-ish point
//    M = max(M1, M2, 88); CIELAB with the D65 white (0.9505, 1, 1.089) and sRGB (IEC 61966-2-1).
//  * sequential (magnitudes: B_TOTAL, B_TRANS, CHI2, *_SIGMA, QUALITY): cubehelix, Green (2011), Bull. Astr.
//    Soc. India 39, 289, eq. 2, with start = 0.3, rotations = -0.9, hue = 1.4, gamma = 1 over fraction
//    0.08 .. 0.92 (dark violet -> teal -> green -> pale yellow; brightness rises monotonically).
//  * cyclic (B_AZIM, 180 deg period): constant lightness and chroma circle in CIELAB, L* = 65,
//    C* = 35 (inside the sRGB gamut for every hue), hue angle = 2 pi t + 0.6 rad.
//  NaN / Inf pixels are drawn neutral grey (128, 128, 128).
// Colour limits: robust percentiles of the finite values (numpy "linear" definition), symmetric about
// the centre for diverging maps; fixed 0..180 deg for B_AZIM and B_INCL.
// Errors: FitsError naming the PNG file (cannot write, would overwrite).
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "zeeline/io/field_map_writer.hpp"

namespace zeeline {

enum class ColourMapKind { kDiverging, kSequential, kCyclic };

/// "diverging", "sequential", "cyclic".
std::string ToString(ColourMapKind kind);

/// sRGB colour of fraction t in [0, 1] (clamped), components 0..255.
std::array<unsigned char, 3> ColourAt(ColourMapKind kind, double t);

/// Colour map used for a map name (B_LOS -> diverging, B_AZIM -> cyclic, ...).
ColourMapKind DefaultColourMap(const std::string& extname);

/// Percentile p (0..100) of the finite values, linear interpolation between order statistics
/// (numpy.percentile default). NaN when there is no finite value.
double Percentile(const std::vector<double>& values, double p);

struct QuicklookOptions {
  double lower_percentile = 1.0;   ///< colour-limit percentiles (0 <= lower < upper <= 100)
  double upper_percentile = 99.0;
  int panel_size_px = 420;         ///< longest side of the drawn map in the single-map PNG
  int sheet_panel_size_px = 300;   ///< same in the summary sheet
  int sheet_columns = 3;
  bool overwrite = false;          ///< replace existing PNG files

  /// Empty when valid, otherwise a message naming the field, its value and the allowed range.
  std::string Validate() const;
};

/// One picture's content.
struct QuicklookMap {
  std::string title;  ///< e.g. "B_LOS"
  std::string unit;   ///< e.g. "G" (shown as "[G]")
  long nx = 0, ny = 0;
  std::vector<double> values;  ///< values[y * nx + x]
  ColourMapKind kind = ColourMapKind::kSequential;
  std::optional<double> vmin, vmax;  ///< fixed limits (otherwise robust percentiles)
  double centre = 0.0;               ///< centre of a diverging map
};

/// A QuicklookMap from a 2-D image HDU with the colour map, fixed limits and centre of its name.
QuicklookMap QuicklookFromHdu(const ImageHdu& hdu);

/// Colour limits actually used for a map.
std::array<double, 2> ColourLimits(const QuicklookMap& map, const QuicklookOptions& options);

/// Writes one PNG (atomic; refuses to overwrite unless options.overwrite).
void WriteMapPng(const std::string& path, const QuicklookMap& map, const QuicklookOptions& options = {});

/// Writes a sheet with one panel per map, sheet_columns panels per row.
void WriteSummaryPng(const std::string& path, const std::vector<QuicklookMap>& maps, const std::string& title,
                     const QuicklookOptions& options = {});

}  // namespace zeeline
