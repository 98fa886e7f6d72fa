#include "zeeline/measure/stokes_characteristics.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <random>
#include <vector>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {

std::string CharacteristicsOptions::Validate() const {
  if (!(rest_wavelength_nm > 0.0)) return "rest_wavelength_nm = " + std::to_string(rest_wavelength_nm) + ": must be > 0";
  if (!(window_halfwidth_nm >= 0.0))
    return "window_halfwidth_nm = " + std::to_string(window_halfwidth_nm) + ": must be >= 0";
  if (realisations < 0 || realisations > 100000)
    return "realisations = " + std::to_string(realisations) + ": expected 0 to 100000";
  return {};
}

namespace {

const double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kRadToDeg = 180.0 / constants::kPi;

// Quantities in a fixed order (so the noise realisations can be summarised in one loop).
enum Q : int {
  kLineArea,
  kLineCentre,
  kBlueAmp,
  kRedAmp,
  kBluePos,
  kRedPos,
  kBlueArea,
  kRedArea,
  kAmpAsym,
  kAreaAsym,
  kZeroCross,
  kZeroCrossV,
  kPeakSep,
  kNcp,
  kNcpC,
  kLinPol,
  kLinPolC,
  kAngle,
  kAngleCore,
  kCount
};
using Values = std::array<double, kCount>;
bool IsAngle(int q) { return q == kAngle || q == kAngleCore; }

struct Window {
  const double* x;
  std::size_t n;
};

// Integral of the linear interpolant of y over [a, b] (a <= b, inside [x0, xn-1]).
double IntegrateLinear(const double* x, const double* y, std::size_t n, double a, double b) {
  double sum = 0.0;
  for (std::size_t i = 0; i + 1 < n; ++i) {
    const double lo = std::max(a, x[i]), hi = std::min(b, x[i + 1]);
    if (hi <= lo) continue;
    const double h = x[i + 1] - x[i];
    auto at = [&](double t) { return y[i] + (y[i + 1] - y[i]) * (t - x[i]) / h; };
    sum += 0.5 * (at(lo) + at(hi)) * (hi - lo);
  }
  return sum;
}

// Vertex of the parabola through samples k-1, k, k+1 (or the sample itself at an edge).
void RefineExtremum(const double* x, const double* y, std::size_t n, std::size_t k, double& pos, double& amp) {
  pos = x[k];
  amp = y[k];
  if (k == 0 || k + 1 >= n) return;
  const double x0 = x[k - 1] - x[k], x2 = x[k + 1] - x[k];
  const double y0 = y[k - 1] - y[k], y2 = y[k + 1] - y[k];
  // y = b t + c t^2 through (x0, y0), (0, 0), (x2, y2)
  const double det = x0 * x2 * (x2 - x0);
  if (det == 0.0) return;
  const double c = (y2 * x0 - y0 * x2) / det;
  const double b = (y0 * x2 * x2 - y2 * x0 * x0) / det;
  if (c == 0.0) return;
  const double t = std::clamp(-b / (2.0 * c), x0, x2);
  pos = x[k] + t;
  amp = y[k] + b * t + c * t * t;
}

Values Compute(const Window& w, const double* I, const double* Qp, const double* Up, const double* V, double ic,
               double l0) {
  Values out;
  out.fill(kNaN);
  const std::size_t n = w.n;
  const double* x = w.x;
  const double c_kms = constants::kSpeedOfLight_m_s * 1e-3;
  std::vector<double> depth(n), diff(n);
  for (std::size_t i = 0; i < n; ++i) {
    depth[i] = std::fabs(ic - I[i]);
    diff[i] = I[i] - ic;
  }
  const double lo = x[0], hi = x[n - 1];
  const double eq_width = IntegrateLinear(x, depth.data(), n, lo, hi);
  out[kLineArea] = IntegrateLinear(x, diff.data(), n, lo, hi);
  {
    std::vector<double> xd(n);
    for (std::size_t i = 0; i < n; ++i) xd[i] = x[i] * depth[i];
    out[kLineCentre] = IntegrateLinear(x, xd.data(), n, lo, hi) / eq_width;
  }
  const bool ic_positive = ic > 0.0;
  if (V) {
    const double area_v = IntegrateLinear(x, V, n, lo, hi);
    out[kNcp] = area_v / eq_width;
    if (ic_positive) out[kNcpC] = area_v / ic;
    const std::size_t imax = static_cast<std::size_t>(std::max_element(V, V + n) - V);
    const std::size_t imin = static_cast<std::size_t>(std::min_element(V, V + n) - V);
    if (imax != imin) {
      const std::size_t ib = std::min(imax, imin), ir = std::max(imax, imin);
      double pb, ab, pr, ar;
      RefineExtremum(x, V, n, ib, pb, ab);
      RefineExtremum(x, V, n, ir, pr, ar);
      out[kBlueAmp] = ab;
      out[kRedAmp] = ar;
      out[kBluePos] = pb;
      out[kRedPos] = pr;
      out[kPeakSep] = pr - pb;
      out[kAmpAsym] = (std::fabs(ab) - std::fabs(ar)) / (std::fabs(ab) + std::fabs(ar));
      // Zero crossing between the lobes, closest to their midpoint.
      const double mid = 0.5 * (pb + pr);
      double best = kNaN, best_dist = std::numeric_limits<double>::infinity();
      std::size_t best_j = ib;
      for (std::size_t j = ib; j < ir; ++j) {
        if (!((V[j] > 0.0 && V[j + 1] <= 0.0) || (V[j] < 0.0 && V[j + 1] >= 0.0))) continue;
        const double t = V[j] / (V[j] - V[j + 1]);
        const double z = x[j] + t * (x[j + 1] - x[j]);
        if (std::fabs(z - mid) < best_dist) {
          best_dist = std::fabs(z - mid);
          best = z;
          best_j = j;
        }
      }
      if (best == best) {
        // Straight-line fit to two samples on each side of the sign change.
        const std::size_t a = best_j > ib ? best_j - 1 : best_j;
        const std::size_t b = std::min(best_j + 2, ir);
        double sx = 0, sy = 0, sxx = 0, sxy = 0, m = 0;
        for (std::size_t k = a; k <= b; ++k) {
          const double t = x[k] - x[best_j];
          sx += t;
          sy += V[k];
          sxx += t * t;
          sxy += t * V[k];
          m += 1;
        }
        const double den = m * sxx - sx * sx;
        if (den > 0.0) {
          const double slope = (m * sxy - sx * sy) / den;
          const double icpt = (sy - slope * sx) / m;
          if (slope != 0.0) {
            const double z = x[best_j] - icpt / slope;
            if (z >= x[best_j] - (x[best_j + 1] - x[best_j]) && z <= x[best_j + 1] + (x[best_j + 1] - x[best_j]))
              best = z;
          }
        }
        out[kZeroCross] = best;
        out[kZeroCrossV] = c_kms * (best - l0) / l0;
        const double Ab = IntegrateLinear(x, V, n, lo, best), Ar = IntegrateLinear(x, V, n, best, hi);
        out[kBlueArea] = Ab;
        out[kRedArea] = Ar;
        const double sb = ab >= 0.0 ? 1.0 : -1.0;
        out[kAreaAsym] = sb * (Ab + Ar) / (std::fabs(Ab) + std::fabs(Ar));
      }
    }
  }
  if (Qp && Up) {
    std::vector<double> lin(n);
    for (std::size_t i = 0; i < n; ++i) lin[i] = std::hypot(Qp[i], Up[i]);
    const double L = IntegrateLinear(x, lin.data(), n, lo, hi);
    out[kLinPol] = L / eq_width;
    if (ic_positive) out[kLinPolC] = L / ic;
    const double sq = IntegrateLinear(x, Qp, n, lo, hi), su = IntegrateLinear(x, Up, n, lo, hi);
    auto angle = [](double q, double u) {
      double a = 0.5 * std::atan2(u, q) * kRadToDeg;
      if (a < 0.0) a += 180.0;
      if (a >= 180.0) a -= 180.0;
      return a;
    };
    out[kAngle] = angle(sq, su);
    // Line core: within half the FWHM of the strongest peak of the depth profile around the line centroid.
    const std::size_t ipk = static_cast<std::size_t>(std::max_element(depth.begin(), depth.end()) - depth.begin());
    std::size_t a = ipk, b = ipk;
    while (a > 0 && depth[a - 1] > 0.5 * depth[ipk]) --a;
    while (b + 1 < n && depth[b + 1] > 0.5 * depth[ipk]) ++b;
    const double core_half = 0.5 * std::max(x[b] - x[a], 0.0);
    const double centre = out[kLineCentre];
    double cq = 0.0, cu = 0.0;
    for (std::size_t i = 0; i < n; ++i)
      if (std::fabs(x[i] - centre) <= core_half) {
        cq += Qp[i];
        cu += Up[i];
      }
    out[kAngleCore] = angle(cq, cu);
  }
  return out;
}

}  // namespace

StokesCharacteristics MeasureStokesCharacteristics(const PixelSpectrum& s, const ContinuumEstimate& c,
                                                   const CharacteristicsOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  StokesCharacteristics r;
  r.has_v = s.V != nullptr;
  r.has_qu = s.Q != nullptr && s.U != nullptr;
  r.continuum = c.continuum;
  std::size_t first = 0, last = s.n;
  if (o.window_halfwidth_nm > 0.0) {
    while (first < s.n && s.wavelength_nm[first] < o.rest_wavelength_nm - o.window_halfwidth_nm) ++first;
    last = first;
    while (last < s.n && s.wavelength_nm[last] <= o.rest_wavelength_nm + o.window_halfwidth_nm) ++last;
  }
  const std::size_t n = last - first;
  if (n < 5) return r;
  const Window w{s.wavelength_nm + first, n};
  const double* Qp = r.has_qu ? s.Q + first : nullptr;
  const double* Up = r.has_qu ? s.U + first : nullptr;
  const double* Vp = r.has_v ? s.V + first : nullptr;
  const Values nominal = Compute(w, s.I + first, Qp, Up, Vp, c.continuum, o.rest_wavelength_nm);
  if (r.has_v && c.noise_V > 0.0) {
    double m = 0.0;
    for (std::size_t i = 0; i < n; ++i) m = std::max(m, std::fabs(Vp[i]));
    r.v_signal_sigma = m / c.noise_V;
  }

  // Noise realisations.
  Values sum{}, sum2{};
  std::array<int, kCount> count{};
  if (o.realisations > 1) {
    std::mt19937_64 rng(o.seed);
    std::normal_distribution<double> gauss(0.0, 1.0);
    std::vector<double> I(n), Q(n), U(n), V(n);
    for (int k = 0; k < o.realisations; ++k) {
      for (std::size_t i = 0; i < n; ++i) {
        I[i] = s.I[first + i] + c.noise_I * gauss(rng);
        if (Qp) {
          Q[i] = Qp[i] + c.noise_Q * gauss(rng);
          U[i] = Up[i] + c.noise_U * gauss(rng);
        }
        if (Vp) V[i] = Vp[i] + c.noise_V * gauss(rng);
      }
      const Values v = Compute(w, I.data(), Qp ? Q.data() : nullptr, Up ? U.data() : nullptr,
                               Vp ? V.data() : nullptr, c.continuum, o.rest_wavelength_nm);
      for (int q = 0; q < kCount; ++q) {
        if (!(v[q] == v[q]) || !(nominal[q] == nominal[q])) continue;
        double d = v[q] - nominal[q];
        if (IsAngle(q)) d = std::remainder(d, 180.0);  // wrap into [-90, 90]
        sum[q] += d;
        sum2[q] += d * d;
        ++count[q];
      }
    }
  }
  auto get = [&](int q) {
    Measured m;
    m.value = nominal[q];
    if (count[q] > 1) {
      const double mean = sum[q] / count[q];
      m.err = std::sqrt(std::max(sum2[q] / count[q] - mean * mean, 0.0) * count[q] / (count[q] - 1));
    }
    return m;
  };
  r.line_area_nm = get(kLineArea);
  r.line_centre_nm = get(kLineCentre);
  r.v_blue_amplitude = get(kBlueAmp);
  r.v_red_amplitude = get(kRedAmp);
  r.v_blue_position_nm = get(kBluePos);
  r.v_red_position_nm = get(kRedPos);
  r.v_blue_area_nm = get(kBlueArea);
  r.v_red_area_nm = get(kRedArea);
  r.amplitude_asymmetry = get(kAmpAsym);
  r.area_asymmetry = get(kAreaAsym);
  r.zero_crossing_nm = get(kZeroCross);
  r.zero_crossing_vlos_kms = get(kZeroCrossV);
  r.v_peak_separation_nm = get(kPeakSep);
  r.net_circular_polarisation = get(kNcp);
  r.net_circular_polarisation_per_continuum_nm = get(kNcpC);
  r.linear_polarisation = get(kLinPol);
  r.linear_polarisation_per_continuum_nm = get(kLinPolC);
  r.linear_polarisation_angle_deg = get(kAngle);
  r.linear_polarisation_angle_core_deg = get(kAngleCore);
  return r;
}

}  // namespace zeeline
