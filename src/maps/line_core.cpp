#include "zeeline/maps/line_core.hpp"

#include <Eigen/Dense>
#include <cmath>

namespace zeeline {

double CoreShapeRatio(double u) { return std::log(2.0 + u) / (1.0 + u); }

namespace {
// R(u) on a grid u_i = 1e3 (i / kGrid)^3 (dense where R changes fast), for the starting bracket.
constexpr int kGrid = 256;
struct RatioTable {
  double u[kGrid + 1], r[kGrid + 1];
  RatioTable() {
    for (int i = 0; i <= kGrid; ++i) {
      const double t = static_cast<double>(i) / kGrid;
      u[i] = 1e3 * t * t * t;
      r[i] = CoreShapeRatio(u[i]);
    }
  }
};
const RatioTable& Table() {
  static const RatioTable table;
  return table;
}
}  // namespace

double SaturationFromCoreShape(double ratio) {
  const RatioTable& t = Table();
  if (!(ratio < t.r[0])) return 0.0;          // r[0] = ln 2
  if (!(ratio > t.r[kGrid])) return 1e3;
  // R decreases monotonically with u: the table brackets the root, then Newton steps on R(u) - ratio,
  // R'(u) = (1/(2 + u) - R(u)) / (1 + u), kept inside the bracket (a bisection step whenever Newton would
  // leave it). Full precision in ~3 evaluations where plain bisection needs ~60 (this runs once per pixel).
  int a = 0, b = kGrid;  // r[a] > ratio >= r[b]
  while (b - a > 1) {  // 8 halvings; selects rather than branches (the outcome is unpredictable)
    const int m = (a + b) / 2;
    const bool above = t.r[m] > ratio;
    a = above ? m : a;
    b = above ? b : m;
  }
  double lo = t.u[a], hi = t.u[b];
  double u = lo + (hi - lo) * (t.r[a] - ratio) / (t.r[a] - t.r[b]);
  for (int it = 0; it < 100; ++it) {
    const double r = CoreShapeRatio(u);
    (r > ratio ? lo : hi) = u;
    const double slope = (1.0 / (2.0 + u) - r) / (1.0 + u);
    double next = u - (r - ratio) / slope;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::fabs(next - u) <= 1e-15 * (1.0 + u) || hi - lo <= 1e-15 * (1.0 + u)) return next;
    u = next;
  }
  return u;
}

LineCoreShape MeasureLineCore(const PixelSpectrum& s, double ic, double centre_nm, double window) {
  LineCoreShape r;
  const SampleRange win = WindowRange(s.wavelength_nm, s.n, centre_nm, window);
  if (win.size() < 7) return r;
  // Extremum of |Ic - I| in the window, and the sense of the line.
  std::size_t k = win.begin;
  double best = 0.0;
  for (std::size_t i = win.begin; i < win.end; ++i) {
    const double d = std::fabs(ic - s.I[i]);
    if (d > best) {
      best = d;
      k = i;
    }
  }
  if (!(best > 0.0) || k < win.begin + 3 || k + 4 > win.end) return r;
  r.emission = s.I[k] > ic;
  const double sign = r.emission ? -1.0 : 1.0;  // depth(i) = sign * (ic - I)
  auto depth = [&](std::size_t i) { return sign * (ic - s.I[i]) / best; };
  r.depth = best;
  r.extremum_nm = s.wavelength_nm[k];
  r.extremum_value = s.I[k];

  // Half-depth crossings on both sides (linear interpolation).
  double xh[2] = {0.0, 0.0};
  for (int side = 0; side < 2; ++side) {
    const long dir = side == 0 ? 1 : -1;
    long i = static_cast<long>(k);
    while (i > static_cast<long>(win.begin) && i + 1 < static_cast<long>(win.end) && depth(static_cast<std::size_t>(i)) > 0.5) i += dir;
    const double d0 = depth(static_cast<std::size_t>(i - dir)), d1 = depth(static_cast<std::size_t>(i));
    if (!(d1 <= 0.5) || !(d0 > d1)) return r;
    const double f = (d0 - 0.5) / (d0 - d1);
    const double l0 = s.wavelength_nm[i - dir], l1 = s.wavelength_nm[i];
    xh[side] = std::fabs(l0 + f * (l1 - l0) - r.extremum_nm);
  }
  r.half_depth_halfwidth_nm = 0.5 * (xh[0] + xh[1]);

  // Curvature at the extremum: least-squares parabola over 5..9 samples inside the top 10 % of the core.
  long h = 2;
  while (h < 4 && k >= win.begin + static_cast<std::size_t>(h + 1) && k + static_cast<std::size_t>(h + 1) < win.end &&
         depth(k + static_cast<std::size_t>(h + 1)) > 0.9 && depth(k - static_cast<std::size_t>(h + 1)) > 0.9)
    ++h;
  Eigen::Matrix3d A = Eigen::Matrix3d::Zero();
  Eigen::Vector3d b = Eigen::Vector3d::Zero();
  for (long j = -h; j <= h; ++j) {
    const std::size_t i = static_cast<std::size_t>(static_cast<long>(k) + j);
    const double x = s.wavelength_nm[i] - r.extremum_nm;
    const Eigen::Vector3d row(1.0, x, x * x);
    A.noalias() += row * row.transpose();
    b += row * (sign * s.I[i]);
  }
  const Eigen::Vector3d c = A.ldlt().solve(b);
  const double curvature = 2.0 * c[2];  // of sign * I: positive at an absorption minimum
  if (!(curvature > 0.0) || !std::isfinite(curvature)) return r;
  const double ratio = curvature * r.half_depth_halfwidth_nm * r.half_depth_halfwidth_nm / (2.0 * best);
  r.saturation = r.emission ? 0.0 : SaturationFromCoreShape(ratio);
  r.doppler_width_nm = r.half_depth_halfwidth_nm / std::sqrt(std::log(2.0 + r.saturation));
  r.surface_source = r.saturation > 0.0 ? s.I[k] - best / r.saturation : -HUGE_VAL;
  r.ok = std::isfinite(r.doppler_width_nm) && r.doppler_width_nm > 0.0;
  return r;
}

}  // namespace zeeline
