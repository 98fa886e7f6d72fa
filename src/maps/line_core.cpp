#include "zeeline/maps/line_core.hpp"

#include <cmath>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

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

namespace {
// The root of R(u) C(u) = ratio on the branch that starts at u0 = SaturationFromCoreShape(ratio) (file comment);
// u0 itself where that reading is kept.
double RefineForSampling(double u0, double ratio, double kappa4, double kappa6) {
  if (!(u0 > kSampledCoreFrom) || !(u0 < 1e3) || !std::isfinite(kappa4) || !std::isfinite(kappa6)) return u0;
  // F(u) = R C(u) - ratio, C = 1 + kappa4 (u - 1) R + kappa6 (u^2 - 4u + 1) R^2, and its slope, from R(u) and
  // R'(u) = (1/(2 + u) - R) / (1 + u).
  auto F = [&](double u, double R, double& slope) {
    const double dR = (1.0 / (2.0 + u) - R) / (1.0 + u);
    const double p4 = kappa4 * (u - 1.0), p6 = kappa6 * (u * u - 4.0 * u + 1.0);
    const double C = 1.0 + p4 * R + p6 * R * R;
    slope = dR * C + R * (kappa4 * R + p4 * dR + kappa6 * (2.0 * u - 4.0) * R * R + 2.0 * p6 * R * dR);
    return R * C - ratio;
  };
  double slope = 0.0;
  double f = F(u0, ratio, slope);  // R(u0) = ratio: no logarithm for the first step
  if (!(f > 0.0)) return u0;       // no lift to undo: keep the plain reading
  // Newton steps inside the bracket [lo, hi], bisection where a step would leave it. A Newton step below
  // 1e-4 (1 + u) leaves an error of order its square (~1e-8 relative), far below what the noise allows (u
  // feeds S0 and w_D; the core's curvature carries percent-level noise).
  double lo = u0, hi = 1e3, u = u0;
  for (int it = 0; it < 100; ++it) {
    double next = slope < 0.0 ? u - f / slope : 0.5 * (lo + hi);
    const bool newton = next > lo && next < hi;
    if (!newton) next = 0.5 * (lo + hi);
    if (std::fabs(next - u) <= (newton ? 1e-4 : 1e-15) * (1.0 + u) || hi - lo <= 1e-15 * (1.0 + u)) {
      u = next;
      break;
    }
    u = next;
    f = F(u, CoreShapeRatio(u), slope);
    (f > 0.0 ? lo : hi) = u;
  }
  return u < 1e3 * (1.0 - 1e-9) ? u : u0;  // no root on this branch below u = 1e3: keep the plain reading
}
}  // namespace

double SaturationFromSampledCore(double ratio, double kappa4, double kappa6) {
  return RefineForSampling(SaturationFromCoreShape(ratio), ratio, kappa4, kappa6);
}

namespace {
// max(0, max_i |ic - I_i|) over the window, NaN terms skipped. A maximum is exact whatever the order, so two
// SSE2 lanes (baseline on x86-64; maxpd(a, b) = a > b ? a : b, which keeps b when a is NaN) side by side.
double MaxDepth(const double* I, SampleRange win, double ic) {
  double best = 0.0;
  std::size_t i = win.begin;
#if defined(__SSE2__)
  const __m128d sign = _mm_set1_pd(-0.0), c = _mm_set1_pd(ic);
  __m128d m = _mm_setzero_pd();
  for (; i + 2 <= win.end; i += 2) m = _mm_max_pd(_mm_andnot_pd(sign, _mm_sub_pd(c, _mm_loadu_pd(I + i))), m);
  double lanes[2];
  _mm_storeu_pd(lanes, m);
  best = lanes[0] > lanes[1] ? lanes[0] : lanes[1];
#endif
  for (; i < win.end; ++i) {
    const double d = std::fabs(ic - I[i]);
    best = d > best ? d : best;
  }
  return best;
}
}  // namespace

LineCoreShape MeasureLineCore(const PixelSpectrum& s, double ic, double centre_nm, double window) {
  return MeasureLineCore(s, ic, centre_nm, window, WindowRange(s.wavelength_nm, s.n, centre_nm, window));
}

LineCoreShape MeasureLineCore(const PixelSpectrum& s, double ic, double centre_nm, double window,
                              SampleRange near_window) {
  LineCoreShape r;
  const SampleRange win = WindowRangeFrom(s.wavelength_nm, s.n, centre_nm, window, near_window);
  if (win.size() < 7) return r;
  // Extremum of |Ic - I| in the window (its first sample), and the sense of the line.
  const double best = MaxDepth(s.I, win, ic);
  std::size_t k = win.begin;
  // The first sample at the maximum: best is one of these very values (the same IEEE operations), so the walk
  // stops inside the window.
  if (best > 0.0)
    while (!(std::fabs(ic - s.I[k]) == best)) ++k;
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
  // The z^2 coefficient of the fit to any data (t0, t1, t2) = (sum y, sum y z, sum y z^2) on these samples.
  const double w0 = m02 / det, w1 = -(S0 * S3 - S1 * S2) / det, w2 = (S0 * S2 - S1 * S1) / det;
  const double c2 = w2 * T2 + w1 * T1 + w0 * T0;
  const double curvature = 2.0 * c2 / (dz * dz);  // of sign * I: positive at an absorption minimum
  if (!(curvature > 0.0) || !std::isfinite(curvature)) return r;
  const double xh2 = r.half_depth_halfwidth_nm * r.half_depth_halfwidth_nm;
  const double ratio = curvature * xh2 / (2.0 * best);
  r.saturation = r.emission ? 0.0 : SaturationFromCoreShape(ratio);
  if (r.saturation > kSampledCoreFrom) {
    // The quartic and sextic terms of the core (file comment): K4, K6 = the z^2 coefficients of the fit to
    // (z - dv)^4 and (z - dv)^6 on the same samples, dv = -c1 / (2 c2) the fitted vertex (c1 by Cramer's
    // rule too), then in wavelength units K_n dz^(n-2).
    const double c1 = (S0 * (T1 * S4 - S3 * T2) - T0 * (S1 * S4 - S3 * S2) + S2 * (S1 * T2 - T1 * S2)) / det;
    const double dv = -c1 / (2.0 * c2);
    double q4[3] = {0.0, 0.0, 0.0}, q6[3] = {0.0, 0.0, 0.0};  // sums of (z - dv)^n z^p, p = 0, 1, 2
    for (long j = -h; j <= h; ++j) {
      const std::size_t i = static_cast<std::size_t>(static_cast<long>(k) + j);
      const double z = (s.wavelength_nm[i] - r.extremum_nm) / dz;
      const double e2 = (z - dv) * (z - dv), e4 = e2 * e2, e6 = e4 * e2;
      q4[0] += e4;
      q4[1] += e4 * z;
      q4[2] += e4 * z * z;
      q6[0] += e6;
      q6[1] += e6 * z;
      q6[2] += e6 * z * z;
    }
    const double dz2 = dz * dz;
    const double kappa4 = (w2 * q4[2] + w1 * q4[1] + w0 * q4[0]) * dz2 / (2.0 * xh2);
    const double kappa6 = (w2 * q6[2] + w1 * q6[1] + w0 * q6[0]) * dz2 * dz2 / (6.0 * xh2 * xh2);
    r.saturation = RefineForSampling(r.saturation, ratio, kappa4, kappa6);
  }
  r.doppler_width_nm = r.half_depth_halfwidth_nm / std::sqrt(std::log(2.0 + r.saturation));
  r.surface_source = r.saturation > 0.0 ? s.I[k] - best / r.saturation : -HUGE_VAL;
  r.ok = std::isfinite(r.doppler_width_nm) && r.doppler_width_nm > 0.0;
  return r;
}

}  // namespace zeeline
