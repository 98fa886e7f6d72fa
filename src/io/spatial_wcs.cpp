#include "zeeline/io/spatial_wcs.hpp"

#include <cmath>
#include <limits>

#include "io/fits_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {

struct SpatialWcs::Impl {
  io_detail::WcsHolder wcs;
  bool world = false;
};

SpatialWcs::SpatialWcs(const std::string& cards) : impl_(std::make_unique<Impl>()) {
  if (cards.empty()) return;
  std::string error;
  const int nkeys = static_cast<int>(cards.size() / 80);
  if (!io_detail::ParseHeaderWcs(cards, nkeys, impl_->wcs, error)) {
    if (!error.empty()) throw FitsError("spatial WCS: " + error);
    return;
  }
  if (impl_->wcs.w.naxis != 2) throw FitsError("spatial WCS: expected 2 axes, found " + std::to_string(impl_->wcs.w.naxis));
  const int st = wcsset(&impl_->wcs.w);
  if (st != 0) throw FitsError("spatial WCS: " + io_detail::WcsMessage(impl_->wcs.w, st));
  impl_->world = true;
}

SpatialWcs::~SpatialWcs() = default;
SpatialWcs::SpatialWcs(SpatialWcs&&) noexcept = default;
SpatialWcs& SpatialWcs::operator=(SpatialWcs&&) noexcept = default;

bool SpatialWcs::has_world() const { return impl_->world; }

std::string SpatialWcs::ctype(int axis) const {
  if (!impl_->world || axis < 0 || axis > 1) return "";
  return io_detail::Trim(impl_->wcs.w.ctype[axis]);
}

bool SpatialWcs::helioprojective() const {
  return ctype(0).rfind("HPLN", 0) == 0 && ctype(1).rfind("HPLT", 0) == 0;
}

std::array<double, 2> SpatialWcs::PixelToWorld(double x, double y) const {
  if (!impl_->world) return {x, y};
  double pix[2] = {x + 1.0, y + 1.0}, img[2], phi, theta, world[2];
  int stat = 0;
  const int st = wcsp2s(&impl_->wcs.w, 1, 2, pix, img, &phi, &theta, world, &stat);
  if (st != 0) throw FitsError("spatial WCS: pixel -> world: " + io_detail::WcsMessage(impl_->wcs.w, st));
  return {world[0], world[1]};
}

std::array<double, 2> SpatialWcs::WorldToPixel(double lon, double lat) const {
  if (!impl_->world) return {lon, lat};
  double world[2] = {lon, lat}, img[2], phi, theta, pix[2];
  int stat = 0;
  const int st = wcss2p(&impl_->wcs.w, 1, 2, world, &phi, &theta, img, pix, &stat);
  if (st != 0) throw FitsError("spatial WCS: world -> pixel: " + io_detail::WcsMessage(impl_->wcs.w, st));
  return {pix[0] - 1.0, pix[1] - 1.0};
}

std::array<double, 2> SpatialWcs::PixelScaleArcsec(double nx, double ny) const {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  if (!impl_->world || impl_->wcs.w.lng < 0 || impl_->wcs.w.lat < 0) return {nan, nan};
  const double cx = 0.5 * (nx - 1.0), cy = 0.5 * (ny - 1.0);
  // Angular distance (haversine) between two world points in deg.
  auto dist = [](std::array<double, 2> a, std::array<double, 2> b) {
    constexpr double kDeg = 3.14159265358979323846 / 180.0;
    const double s1 = std::sin(0.5 * (b[1] - a[1]) * kDeg), s2 = std::sin(0.5 * (b[0] - a[0]) * kDeg);
    const double h = s1 * s1 + std::cos(a[1] * kDeg) * std::cos(b[1] * kDeg) * s2 * s2;
    return 2.0 * std::asin(std::sqrt(std::min(1.0, h))) / kDeg * 3600.0;
  };
  const auto c = PixelToWorld(cx, cy);
  return {dist(c, PixelToWorld(cx + 1.0, cy)), dist(c, PixelToWorld(cx, cy + 1.0))};
}

}  // namespace zeeline
