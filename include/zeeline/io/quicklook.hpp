// zeeline/io/quicklook.hpp -- PNG quicklook pictures of maps (cairo): one map per picture with title,
// unit, colour bar (or a legend for METHOD and QUALITY) and axis ticks -- in arcsec for helioprojective
// axes (linear in the pixel index, from the HDU's WCS at the image centre, pixel scale in the axis
// label), otherwise in FITS pixel numbers (1 = first pixel) -- and a summary sheet with several panels.
// North-up convention of FITS viewers: y increases upward.
//
// Colour maps (docs/fits.md, "Quicklook colour maps"):
//  * diverging (signed quantities: B_LOS, V_LOS; B_INCL around 90 deg): Moreland (2009), "Diverging
//    Color Maps for Scientific Visualization", ISVC 2009, LNCS 5876, 92: interpolation in the Msh
//    (polar CIELAB) space between cool (59, 76, 192) and warm (180, 4, 38) through a white-ish point
//    M = max(M1, M2, 88); CIELAB with the D65 white (0.9505, 1, 1.089) and sRGB (IEC 61966-2-1).
//  * categorical (METHOD, QUALITY): one colour per method / QUALITY bit (a pixel with several bits takes
//    its lowest bit's colour), named in a legend; OK (0) is white.
//  * sequential (magnitudes: B_TOTAL, B_TRANS, CHI2, *_SIGMA): cubehelix, Green (2011), Bull. Astr.
//    Soc. India 39, 289, eq. 2, with start = 0.3, rotations = -0.9, hue = 1.4, gamma = 1 over fraction
//    0.08 .. 0.92 (dark violet -> teal -> green -> pale yellow; brightness rises monotonically).
//  * cyclic (B_AZIM, 0-180 deg, or 0-360 deg after disambiguation): constant lightness and chroma circle in CIELAB, L* = 65,
//    C* = 35 (inside the sRGB gamut for every hue), hue angle = 2 pi t + 0.6 rad.
//  NaN / Inf pixels are drawn neutral grey (128, 128, 128).
// Colour limits: robust percentiles of the finite values (numpy "linear" definition), symmetric about
// the centre for diverging maps; fixed 0..180 deg for B_INCL and B_AZIM (0..360 after disambiguation).
// Faded pixels (FadeWeakAzimuth) are blended 70 % toward white.
// Errors: FitsError naming the PNG file (cannot write, would overwrite).
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/io/quality_flags.hpp"

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

/// One code of a categorical picture (METHOD, QUALITY): its value, name and colour.
struct QuicklookCategory {
  double value = 0.0;
  std::string name;
  std::array<unsigned char, 3> rgb{};
};

/// World coordinate along one image axis, linear in the pixel index: world = origin + step * i (i 0-based).
struct QuicklookWorldAxis {
  std::string label;  ///< e.g. "helioprojective x [arcsec]"
  double origin = 0.0, step = 1.0;
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
  /// Non-empty: a categorical picture with one colour and legend entry per code instead of a colour bar.
  /// With bit_flags, a value is a sum of 2^bit codes and a pixel takes the colour of its lowest set bit.
  std::vector<QuicklookCategory> categories;
  bool bit_flags = false;
  std::vector<unsigned char> faded;  ///< empty, or per pixel: 1 = drawn faded (e.g. azimuth of a weak field)
  std::string fade_note;             ///< legend text for the faded pixels
  std::optional<QuicklookWorldAxis> x_world, y_world;  ///< axes in world units (else FITS pixel numbers)
};

/// A QuicklookMap from a 2-D image HDU with the colour map, fixed limits and centre of its name:
/// B_AZIM on 0-360 deg when the HDU says AZRANGE = 360 (written after disambiguation) or holds values
/// >= 180, else 0-180; METHOD and QUALITY categorical (names from the METHn / QBITn keywords, else the
/// library's lists); axes in arcsec when the HDU's WCS is helioprojective (pixel scale in the label).
QuicklookMap QuicklookFromHdu(const ImageHdu& hdu);

/// Fades `azimuth` where b_trans < detection_sigma x b_trans_sigma (or either is not finite): the azimuth
/// of a field below its detection threshold is noise.
void FadeWeakAzimuth(QuicklookMap& azimuth, const std::vector<double>& b_trans, const std::vector<double>& b_trans_sigma,
                     double detection_sigma);

/// Gives every map the same colour limits: those of all their values together (the first map's fixed
/// limits win when it has them). Used for a truth map and the result it is compared with.
void ShareColourLimits(const std::vector<QuicklookMap*>& maps, const QuicklookOptions& options);

/// Colour limits actually used for a map.
std::array<double, 2> ColourLimits(const QuicklookMap& map, const QuicklookOptions& options);

/// Writes one PNG (atomic; refuses to overwrite unless options.overwrite).
void WriteMapPng(const std::string& path, const QuicklookMap& map, const QuicklookOptions& options = {});

/// Writes a sheet with one panel per map, sheet_columns panels per row.
void WriteSummaryPng(const std::string& path, const std::vector<QuicklookMap>& maps, const std::string& title,
                     const QuicklookOptions& options = {});

}  // namespace zeeline
