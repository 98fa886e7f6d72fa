#include "zeeline/maps/line_core.hpp"

#include <cmath>

namespace zeeline {

double CoreShapeRatio(double u) { return std::log(2.0 + u) / (1.0 + u); }

namespace {
// R(u) and du/dR = 1 / R'(u) on a grid u_i = 1e3 (i / kGrid)^3 (dense where R changes fast), for the starting
// point; R'(u) = (1/(2 + u) - R(u)) / (1 + u).
constexpr int kGrid = 512;
struct RatioTable {
  double u[kGrid + 1], r[kGrid + 1], du_dr[kGrid + 1];
  RatioTable() {
    for (int i = 0; i <= kGrid; ++i) {
      const double t = static_cast<double>(i) / kGrid;
      u[i] = 1e3 * t * t * t;
      r[i] = CoreShapeRatio(u[i]);
      du_dr[i] = (1.0 + u[i]) / (1.0 / (2.0 + u[i]) - r[i]);
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
  // R decreases monotonically with u: the table brackets the root, the cubic Hermite interpolant of u(R)
  // between the two nodes (values and slopes) starts within ~1e-9 (1 + u) of it, then Newton steps on
  // R(u) - ratio, kept inside the bracket (a bisection step whenever Newton would leave it). Newton converges
  // quadratically, so a step below 1e-8 (1 + u) leaves an error of order its square (~1e-16): its result is
  // returned. Usually one logarithm per pixel (measured: 1.0-1.3 on u = 1e-3..1e3, within 2e-15 (1 + u) of the
  // root found at 40 digits; a linear start and a step test at 1e-15 took 5-10).
  int a = 0, b = kGrid;  // r[a] > ratio >= r[b]
  while (b - a > 1) {  // 9 halvings; selects rather than branches (the outcome is unpredictable)
    const int m = (a + b) / 2;
    const bool above = t.r[m] > ratio;
    a = above ? m : a;
    b = above ? b : m;
  }
  double lo = t.u[a], hi = t.u[b];
  const double h = t.r[b] - t.r[a], s = (ratio - t.r[a]) / h, s1 = 1.0 - s;
  double u = s1 * s1 * ((1.0 + 2.0 * s) * t.u[a] + s * h * t.du_dr[a]) +
             s * s * ((3.0 - 2.0 * s) * t.u[b] - s1 * h * t.du_dr[b]);
  if (!(u > lo && u < hi)) u = lo + (hi - lo) * (t.r[a] - ratio) / (t.r[a] - t.r[b]);
  for (int it = 0; it < 100; ++it) {
    const double r = CoreShapeRatio(u);
    (r > ratio ? lo : hi) = u;
    const double slope = (1.0 / (2.0 + u) - r) / (1.0 + u);
    double next = u - (r - ratio) / slope;
    const bool newton = next > lo && next < hi;
    if (!newton) next = 0.5 * (lo + hi);
    if (std::fabs(next - u) <= (newton ? 1e-8 : 1e-15) * (1.0 + u) || hi - lo <= 1e-15 * (1.0 + u)) return next;
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
  // y = sign (I - I_k) against z = (l - l_k) / dz (centred and scaled so the normal equations are well
  // conditioned), y = c0 + c1 z + c2 z^2; c2 by Cramer's rule on the 3x3 normal equations (their moments S_p =
  // sum z^p, T_p = sum y z^p), which needs none of the general solver's pivoting for this small system.
  const double dz = 0.5 * (s.wavelength_nm[k + 1] - s.wavelength_nm[k - 1]);
  const double ik = s.I[k];
  double S0 = 0.0, S1 = 0.0, S2 = 0.0, S3 = 0.0, S4 = 0.0, T0 = 0.0, T1 = 0.0, T2 = 0.0;
  for (long j = -h; j <= h; ++j) {
    const std::size_t i = static_cast<std::size_t>(static_cast<long>(k) + j);
    const double z = (s.wavelength_nm[i] - r.extremum_nm) / dz, z2 = z * z;
    const double y = sign * (s.I[i] - ik);
    S0 += 1.0;
    S1 += z;
    S2 += z2;
    S3 += z2 * z;
    S4 += z2 * z2;
    T0 += y;
    T1 += y * z;
    T2 += y * z2;
  }
  const double m02 = S1 * S3 - S2 * S2;
  const double det = S0 * (S2 * S4 - S3 * S3) - S1 * (S1 * S4 - S2 * S3) + S2 * m02;
  const double c2 = (T2 * (S0 * S2 - S1 * S1) - T1 * (S0 * S3 - S1 * S2) + T0 * m02) / det;
  const double curvature = 2.0 * c2 / (dz * dz);  // of sign * I: positive at an absorption minimum
  if (!(curvature > 0.0) || !std::isfinite(curvature)) return r;
  const double ratio = curvature * r.half_depth_halfwidth_nm * r.half_depth_halfwidth_nm / (2.0 * best);
  r.saturation = r.emission ? 0.0 : SaturationFromCoreShape(ratio);
  r.doppler_width_nm = r.half_depth_halfwidth_nm / std::sqrt(std::log(2.0 + r.saturation));
  r.surface_source = r.saturation > 0.0 ? s.I[k] - best / r.saturation : -HUGE_VAL;
  r.ok = std::isfinite(r.doppler_width_nm) && r.doppler_width_nm > 0.0;
  return r;
}

}  // namespace zeeline
