// zeeline/io/spatial_wcs.hpp -- the spatial WCS of a cube or map: pixel <-> world coordinates and what a
// picture needs to label its axes.
//
// Input: the 2-D header cards of CubeInfo::spatial_wcs_header or of a map HDU (axis 1 = x, axis 2 = y).
// Transformations: wcslib wcsp2s / wcss2p (FITS WCS Papers I and II: Greisen & Calabretta 2002,
// Calabretta & Greisen 2002). wcslib reports celestial-type axes -- helioprojective HPLN/HPLT included --
// in degrees whatever CUNIT says, so world coordinates here are in the units wcslib returns: deg for a
// celestial pair, CUNIT otherwise. Pixels are 0-based (pixel centre of FITS pixel 1 is 0.0; FITS pixel p
// is p - 1).
#pragma once

#include <array>
#include <memory>
#include <string>

namespace zeeline {

class SpatialWcs {
 public:
  /// Parses the cards; throws FitsError when they cannot be read. Empty cards or cards without a WCS give
  /// a WCS without world coordinates (has_world() false).
  explicit SpatialWcs(const std::string& cards);
  ~SpatialWcs();
  SpatialWcs(SpatialWcs&&) noexcept;
  SpatialWcs& operator=(SpatialWcs&&) noexcept;

  bool has_world() const;
  /// Both axes helioprojective (CTYPE HPLN-xxx and HPLT-xxx).
  bool helioprojective() const;
  /// CTYPEi as written (i = 0 for x, 1 for y); empty without a WCS.
  std::string ctype(int axis) const;

  /// 0-based pixel (x, y) -> world (deg for a celestial pair). Throws FitsError when wcslib refuses.
  std::array<double, 2> PixelToWorld(double x, double y) const;
  /// World -> 0-based pixel. Throws FitsError when wcslib refuses (e.g. outside the projection).
  std::array<double, 2> WorldToPixel(double lon, double lat) const;
  /// Size of one pixel along x and along y at the image centre, in arcsec, from the world distance of the
  /// neighbouring pixels (celestial pairs only; NaN otherwise).
  std::array<double, 2> PixelScaleArcsec(double nx, double ny) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace zeeline
