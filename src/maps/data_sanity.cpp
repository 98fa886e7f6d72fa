#include "zeeline/maps/data_sanity.hpp"

#include <algorithm>
#include <cfloat>
#include <cmath>
#include <sstream>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include "zeeline/core/errors.hpp"

namespace zeeline {

std::string DataSanityLimits::Validate() const {
  std::ostringstream m;
  if (!(abs_limit > 0.0)) m << "abs_limit = " << abs_limit << " must be > 0";
  else if (!(level_ceiling > 0.0)) m << "level_ceiling = " << level_ceiling << " must be > 0";
  else if (!(noise_rel >= 0.0) || noise_rel > 1.0) m << "noise_rel = " << noise_rel << " must be in [0, 1]";
  else if (!(excess_sigma >= 0.0) || !std::isfinite(excess_sigma))
    m << "excess_sigma = " << excess_sigma << " must be finite and >= 0";
  return m.str();
}

double TypeAbsLimit(int bitpix) {
  // Fill values sit at or near the largest finite number of the type; 1e-3 of it leaves every real signal.
  if (bitpix == -32) return 1e-3 * static_cast<double>(FLT_MAX);
  if (bitpix == -64) return 1e-3 * DBL_MAX;
  return HUGE_VAL;
}

double MedianLevel(std::vector<double> i_samples) {
  std::vector<double>& a = i_samples;
  for (double& x : a) x = std::fabs(x);
  a.erase(std::remove_if(a.begin(), a.end(), [](double x) { return !std::isfinite(x); }), a.end());
  if (a.empty()) return 0.0;
  auto mid = a.begin() + static_cast<std::ptrdiff_t>(a.size() / 2);
  std::nth_element(a.begin(), mid, a.end());
  return *mid;
}

DataSanityLimits MakeSanityLimits(int bitpix, double median_level, double noise_rel) {
  DataSanityLimits l;
  l.abs_limit = TypeAbsLimit(bitpix);
  if (median_level > 0.0 && std::isfinite(median_level)) l.level_ceiling = median_level * std::pow(10.0, kAbsurdOrders);
  l.noise_rel = noise_rel;
  return l;
}

namespace {
// Bits of one spectrum's range test; `limit` = min(abs_limit, level_ceiling).
std::uint32_t RangeBits(const double* f, std::size_t n, double limit) {
  if (!f) return 0;
  // Branch-free test first (NaN fails the comparison): the common case is none. Written as a select of doubles,
  // the form the compiler vectorises.
  double outside = 0.0;
  for (std::size_t k = 0; k < n; ++k) outside = std::fabs(f[k]) <= limit ? outside : 1.0;
  if (outside == 0.0) return 0;
  std::uint32_t bits = 0;
  for (std::size_t k = 0; k < n; ++k) {
    const double a = std::fabs(f[k]);
    if (!(a <= limit)) bits |= std::isfinite(a) ? kQualityAbsurdInput : kQualityNonFiniteInput;
  }
  return bits;
}

// max_k (|x_k| - I_k) over finite samples. Every sample is finite here, so the order in which the maximum is
// taken does not matter: two lanes of SSE2 (baseline on x86-64; maxpd(a, b) = a > b ? a : b) side by side.
double MaxExcess(const double* x, const double* I, std::size_t n) {
  double m = -HUGE_VAL;
  std::size_t k = 0;
#if defined(__SSE2__)
  const __m128d sign = _mm_set1_pd(-0.0);
  __m128d m0 = _mm_set1_pd(-HUGE_VAL), m1 = m0;
  for (; k + 4 <= n; k += 4) {
    const __m128d a = _mm_sub_pd(_mm_andnot_pd(sign, _mm_loadu_pd(x + k)), _mm_loadu_pd(I + k));
    const __m128d b = _mm_sub_pd(_mm_andnot_pd(sign, _mm_loadu_pd(x + k + 2)), _mm_loadu_pd(I + k + 2));
    m0 = _mm_max_pd(a, m0);
    m1 = _mm_max_pd(b, m1);
  }
  double lanes[2];
  _mm_storeu_pd(lanes, _mm_max_pd(m0, m1));
  m = std::max(lanes[0], lanes[1]);
#endif
  for (; k < n; ++k) m = std::max(m, std::fabs(x[k]) - I[k]);
  return m;
}

// The full-Stokes pixel in one pass: whether every sample of I, Q, U, V is within `limit` (NaN is not) and, for
// a pixel where they all are, the maxima of |X| - I for X = Q, U, V (else meaningless). Each sample is loaded
// once; the tests are those of RangeBits and MaxExcess, so the outcome is the same.
bool InRangeWithExcess(const PixelSpectrum& s, double limit, double excess[3]) {
  const double* const I = s.I;
  const double* const X[3] = {s.Q, s.U, s.V};
  const std::size_t n = s.n;
  double m[3] = {-HUGE_VAL, -HUGE_VAL, -HUGE_VAL};
  bool in_range = true;
  std::size_t k = 0;
#if defined(__SSE2__)
  const __m128d sign = _mm_set1_pd(-0.0), lim = _mm_set1_pd(limit);
  __m128d ok = _mm_castsi128_pd(_mm_set1_epi32(-1));
  __m128d mx[3] = {_mm_set1_pd(-HUGE_VAL), _mm_set1_pd(-HUGE_VAL), _mm_set1_pd(-HUGE_VAL)};
  for (; k + 2 <= n; k += 2) {
    const __m128d i = _mm_loadu_pd(I + k);
    ok = _mm_and_pd(ok, _mm_cmple_pd(_mm_andnot_pd(sign, i), lim));
    for (int p = 0; p < 3; ++p) {
      const __m128d a = _mm_andnot_pd(sign, _mm_loadu_pd(X[p] + k));
      ok = _mm_and_pd(ok, _mm_cmple_pd(a, lim));
      mx[p] = _mm_max_pd(_mm_sub_pd(a, i), mx[p]);
    }
  }
  in_range = _mm_movemask_pd(ok) == 3;
  for (int p = 0; p < 3; ++p) {
    double lanes[2];
    _mm_storeu_pd(lanes, mx[p]);
    m[p] = std::max(lanes[0], lanes[1]);
  }
#endif
  for (; k < n; ++k) {
    in_range = in_range && std::fabs(I[k]) <= limit;
    for (int p = 0; p < 3; ++p) {
      in_range = in_range && std::fabs(X[p][k]) <= limit;
      m[p] = std::max(m[p], std::fabs(X[p][k]) - I[k]);
    }
  }
  for (int p = 0; p < 3; ++p) excess[p] = m[p];
  return in_range;
}

}  // namespace

std::uint32_t CheckSampleRange(const PixelSpectrum& s, const DataSanityLimits& limits) {
  const double limit = std::min(limits.abs_limit, limits.level_ceiling);
  return RangeBits(s.I, s.n, limit) | RangeBits(s.Q, s.n, limit) | RangeBits(s.U, s.n, limit) |
         RangeBits(s.V, s.n, limit);
}

std::uint32_t CheckPixelSanity(const PixelSpectrum& s, const std::vector<std::size_t>& continuum_samples,
                               const DataSanityLimits& limits) {
  ContinuumEstimate unused;
  return CheckPixelSanity(s, MakeContinuumRuns(continuum_samples), limits, unused);
}

std::uint32_t CheckPixelSanity(const PixelSpectrum& s, const ContinuumRuns& continuum_runs,
                               const DataSanityLimits& limits, ContinuumEstimate& continuum) {
  // Full Stokes (the map's case): the range test and the |X| - I maxima in one pass over the samples.
  double excess[3] = {-HUGE_VAL, -HUGE_VAL, -HUGE_VAL};
  const bool full = s.Q && s.U && s.V;
  if (!full || !InRangeWithExcess(s, std::min(limits.abs_limit, limits.level_ceiling), excess)) {
    const std::uint32_t range = CheckSampleRange(s, limits);
    if (range) return range;
  }
  // Continuum level: the mean of I over the continuum samples, every one finite here (so EstimateContinuum's
  // mean, which skips non-finite samples, is the same number).
  double sum = 0.0;
  for (const SampleRange& r : continuum_runs.runs)
    for (std::size_t i = r.begin; i < r.end; ++i) sum += s.I[i];
  const std::size_t ns = continuum_runs.samples;
  const double ic = ns == 0 ? 0.0 : sum / static_cast<double>(ns);
  if (!(ic > 0.0)) return kQualityNonPositiveI;
  // The noise, which the test below may need and the estimators of a usable pixel always do: measured once.
  // (A sum that is not finite can only come from an infinite sample let through by an infinite limit, which
  // EstimateContinuum's mean skips: it is then left to that mean.)
  continuum = std::isfinite(sum) ? EstimateContinuumAtLevel(s, continuum_runs, ic, limits.noise_rel)
                                 : EstimateContinuum(s, continuum_runs, limits.noise_rel);
  // The largest |X| - I over Q, U, V; real data stay far below zero, so the noise test is only made for a
  // pixel that comes close.
  const double rounding = 1e-6 * ic;
  auto max_excess = [&](const double* x) { return x ? MaxExcess(x, s.I, s.n) : -HUGE_VAL; };
  const double eq = full ? excess[0] : max_excess(s.Q), eu = full ? excess[1] : max_excess(s.U),
               ev = full ? excess[2] : max_excess(s.V);
  if (std::max({eq, eu, ev}) <= rounding) return 0;
  const ContinuumEstimate& c = continuum;
  // The difference |X| - I carries the noise of both.
  auto tol = [&](double sigma_x) {
    const double sigma = std::hypot(sigma_x, c.noise_I);
    return limits.excess_sigma * (std::isfinite(sigma) ? sigma : 0.0) + rounding;
  };
  if (eq > tol(c.noise_Q) || eu > tol(c.noise_U) || ev > tol(c.noise_V)) return kQualityPolExceedsI;
  return 0;
}

void RequireUsablePixel(const std::vector<std::int32_t>& quality, const std::string& path) {
  if (quality.empty()) return;
  std::int64_t counts[4] = {0, 0, 0, 0};
  const std::uint32_t bits[4] = {kQualityNonFiniteInput, kQualityAbsurdInput, kQualityNonPositiveI,
                                 kQualityPolExceedsI};
  for (std::int32_t q : quality) {
    const auto u = static_cast<std::uint32_t>(q);
    if (!(u & kQualityInputRejected)) return;  // at least one pixel was inverted
    for (int b = 0; b < 4; ++b) counts[b] += (u & bits[b]) != 0;
  }
  RequireUsablePixel(0, static_cast<std::int64_t>(quality.size()), counts, path);
}

void RequireUsablePixel(std::int64_t usable, std::int64_t pixels, const std::int64_t (&rejected)[4],
                        const std::string& path) {
  if (usable > 0 || pixels <= 0) return;
  std::ostringstream m;
  m << path << ": no usable pixel: all " << pixels << " pixels fail the data-sanity check (" << rejected[0]
    << " with NaN/Inf samples, " << rejected[1] << " with absurd values, " << rejected[2]
    << " with continuum Stokes I <= 0, " << rejected[3]
    << " with |Q|, |U| or |V| > I); check the HDU, BSCALE/BZERO, the sign of I and the Stokes order (docs/errors.md)";
  throw FitsError(m.str());
}

}  // namespace zeeline
