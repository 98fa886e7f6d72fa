#include "zeeline/maps/pixel_spectrum.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

namespace zeeline {

std::string ValidateLineOptions(double rest_wavelength_nm, double g_eff, double window_halfwidth_nm) {
  std::ostringstream m;
  if (!(rest_wavelength_nm > 0.0) || !std::isfinite(rest_wavelength_nm))
    m << "rest_wavelength_nm = " << rest_wavelength_nm << " must be a positive wavelength";
  else if (!(std::fabs(g_eff) > 1e-6) || !std::isfinite(g_eff))
    m << "g_eff = " << g_eff << ": the line is magnetically insensitive (|g_eff| must exceed 1e-6)";
  else if (!(window_halfwidth_nm >= 0.0))
    m << "window_halfwidth_nm = " << window_halfwidth_nm << " must be >= 0";
  return m.str();
}

SampleRange WindowRange(const double* wavelength_nm, std::size_t n, double centre_nm, double halfwidth_nm) {
  if (halfwidth_nm <= 0.0) return {0, n};
  const double* lo = std::lower_bound(wavelength_nm, wavelength_nm + n, centre_nm - halfwidth_nm);
  const double* hi = std::upper_bound(lo, wavelength_nm + n, centre_nm + halfwidth_nm);
  return {static_cast<std::size_t>(lo - wavelength_nm), static_cast<std::size_t>(hi - wavelength_nm)};
}

SampleRange WindowRangeFrom(const double* wavelength_nm, std::size_t n, double centre_nm, double halfwidth_nm,
                            SampleRange near) {
  if (halfwidth_nm <= 0.0) return {0, n};
  const double* const l = wavelength_nm;
  const double lo_nm = centre_nm - halfwidth_nm, hi_nm = centre_nm + halfwidth_nm;
  // lower_bound: the first sample that is not below lo_nm ("below" holds for a leading part of the grid).
  std::size_t lo = std::min(near.begin, n);
  while (lo > 0 && !(l[lo - 1] < lo_nm)) --lo;
  while (lo < n && l[lo] < lo_nm) ++lo;
  // upper_bound from lo: the first sample above hi_nm.
  std::size_t hi = std::min(std::max(near.end, lo), n);
  while (hi < n && !(hi_nm < l[hi])) ++hi;
  while (hi > lo && hi_nm < l[hi - 1]) --hi;
  return {lo, hi};
}

std::vector<std::size_t> SamplesInWindow(const double* wavelength_nm, std::size_t n, double lo_nm, double hi_nm) {
  std::vector<std::size_t> out;
  for (std::size_t i = 0; i < n; ++i)
    if (wavelength_nm[i] >= lo_nm && wavelength_nm[i] <= hi_nm) out.push_back(i);
  return out;
}

std::vector<std::size_t> ContinuumSamples(const double* wavelength_nm, std::size_t n, double centre_nm,
                                          double exclude_halfwidth_nm) {
  std::vector<std::size_t> out;
  for (std::size_t i = 0; i < n; ++i)
    if (std::fabs(wavelength_nm[i] - centre_nm) > exclude_halfwidth_nm) out.push_back(i);
  return out;
}

ContinuumRuns MakeContinuumRuns(const std::vector<std::size_t>& continuum_samples) {
  ContinuumRuns r;
  r.samples = continuum_samples.size();
  for (std::size_t j = 0; j < continuum_samples.size();) {
    std::size_t e = j + 1;
    while (e < continuum_samples.size() && continuum_samples[e] == continuum_samples[e - 1] + 1) ++e;
    r.runs.push_back({continuum_samples[j], continuum_samples[j] + (e - j)});
    j = e;
  }
  // Degrees of freedom (NoiseDegreesOfFreedom). Second differences of white noise: var(d) = 6 sigma^2,
  // correlation -2/3 at lag 1 and 1/6 at lag 2 within a run, none across runs. For S = sum of the m squared
  // differences (d Gaussian, cov(d_i^2, d_j^2) = 2 cov(d_i, d_j)^2): var(S) = 72 sigma^4 sum over runs of
  // [m_r + (8/9)(m_r - 1)+ + (1/18)(m_r - 2)+], with m_r = (run length - 2)+, E[S] = 6 m sigma^2, and
  // dof = 2 E[S]^2 / var(S).
  double m = 0.0, v = 0.0;
  for (const SampleRange& run : r.runs) {
    const double mr = run.size() > 2 ? static_cast<double>(run.size() - 2) : 0.0;
    v += mr + (8.0 / 9.0) * std::max(mr - 1.0, 0.0) + (1.0 / 18.0) * std::max(mr - 2.0, 0.0);
    m += mr;
  }
  // Fewer than 3 differences: NoiseSigmas falls back to the standard deviation about the mean (n - 1 dof).
  r.noise_dof = m < 3.0 ? (r.samples > 1 ? static_cast<double>(r.samples - 1) : 0.0) : m * m / v;
  return r;
}

namespace {
// Mean over the samples, skipping non-finite values.
double Mean(const double* f, const ContinuumRuns& runs) {
  double s = 0.0;
  std::size_t k = 0;
  for (const SampleRange& r : runs.runs)
    for (std::size_t i = r.begin; i < r.end; ++i) {
      if (!std::isfinite(f[i])) continue;
      s += f[i];
      ++k;
    }
  return k ? s / static_cast<double>(k) : std::nan("");
}

#if defined(__SSE2__)
// Sums of d^2 over the second differences d = f[i-1] - 2 f[i] + f[i+1] inside the runs, and their counts: I, Q
// in one SSE2 register and U, V in another (baseline on x86-64), the same operations per lane, each sum in
// sample order. kTested: a non-finite d (d - d is not 0) adds +0 to a sum that is >= 0 (exact) and 0 to its
// count; untested, every triple is counted. Each run is a plain loop that carries its last two samples on.
template <bool kTested>
void SecondDifferenceSums(const double* const g[4], const ContinuumRuns& runs, double s2[4], std::size_t k[4]) {
  const __m128d two = _mm_set1_pd(2.0), zero = _mm_setzero_pd();
  __m128d acc[2] = {zero, zero};
  __m128i cnt[2] = {_mm_setzero_si128(), _mm_setzero_si128()};
  std::size_t triples = 0;
  for (const SampleRange& r : runs.runs) {
    if (r.size() < 3) continue;
    triples += r.size() - 2;
    __m128d fa[2], fb[2];
    for (int h = 0; h < 2; ++h) {
      fa[h] = _mm_set_pd(g[2 * h + 1][r.begin], g[2 * h][r.begin]);
      fb[h] = _mm_set_pd(g[2 * h + 1][r.begin + 1], g[2 * h][r.begin + 1]);
    }
    for (std::size_t c = r.begin + 2; c < r.end; ++c)
      for (int h = 0; h < 2; ++h) {
        const __m128d fc = _mm_set_pd(g[2 * h + 1][c], g[2 * h][c]);
        const __m128d d = _mm_add_pd(_mm_sub_pd(fa[h], _mm_mul_pd(two, fb[h])), fc);
        __m128d sq = _mm_mul_pd(d, d);
        if (kTested) {
          const __m128d finite = _mm_cmpeq_pd(_mm_sub_pd(d, d), zero);
          sq = _mm_and_pd(finite, sq);
          cnt[h] = _mm_sub_epi64(cnt[h], _mm_castpd_si128(finite));
        }
        acc[h] = _mm_add_pd(acc[h], sq);
        fa[h] = fb[h];
        fb[h] = fc;
      }
  }
  for (int h = 0; h < 2; ++h) {
    long long counts[2];
    _mm_storeu_pd(s2 + 2 * h, acc[h]);
    _mm_storeu_si128(reinterpret_cast<__m128i*>(counts), cnt[h]);
    k[2 * h] = kTested ? static_cast<std::size_t>(counts[0]) : triples;
    k[2 * h + 1] = kTested ? static_cast<std::size_t>(counts[1]) : triples;
  }
}
#endif

// White-noise sigma from second differences of consecutive samples, sigma^2 = <(f[i-1] - 2f[i] + f[i+1])^2>/6,
// which removes the mean and any linear trend (e.g. the far wing of a damped line) from the estimate.
// Falls back to the standard deviation about the mean when there are fewer than 3 consecutive triples.
// All spectra of `f` (I first and never null; null Q, U, V skipped) in one walk over the samples: their sums
// are independent, so they run side by side instead of one after the other (each sum still adds in sample
// order). The triples are those inside one run (ContinuumRuns).
void NoiseSigmas(const double* const f[4], const ContinuumRuns& runs, double sigma[4]) {
  double s2[4] = {0.0, 0.0, 0.0, 0.0};
  std::size_t k[4] = {0, 0, 0, 0};
  // f[0] (Stokes I) is always present; a null entry computes on it and its result is dropped.
  const double* const g[4] = {f[0], f[1] ? f[1] : f[0], f[2] ? f[2] : f[0], f[3] ? f[3] : f[0]};
#if defined(__SSE2__)
  // First without the finite test: when every d is finite (the rule: the data-sanity check lets no non-finite
  // sample through) the sums and counts are those of the tested walk, term for term; when a d is not, its
  // square makes a sum Inf or NaN and the tested walk is made instead.
  SecondDifferenceSums<false>(g, runs, s2, k);
  if (!(std::isfinite(s2[0]) && std::isfinite(s2[1]) && std::isfinite(s2[2]) && std::isfinite(s2[3])))
    SecondDifferenceSums<true>(g, runs, s2, k);
#else
  for (const SampleRange& r : runs.runs)
    for (std::size_t b = r.begin + 1; b + 1 < r.end; ++b)
      for (int p = 0; p < 4; ++p) {
        const double d = g[p][b - 1] - 2.0 * g[p][b] + g[p][b + 1];
        if (!std::isfinite(d)) continue;
        s2[p] += d * d;
        ++k[p];
      }
#endif
  for (int p = 0; p < 4; ++p) {
    if (!f[p]) continue;
    if (k[p] >= 3) {
      sigma[p] = std::sqrt(s2[p] / (6.0 * static_cast<double>(k[p])));
      continue;
    }
    const double m = Mean(f[p], runs);
    double v = 0.0;
    std::size_t n = 0;
    for (const SampleRange& r : runs.runs)
      for (std::size_t i = r.begin; i < r.end; ++i) {
        if (!std::isfinite(f[p][i])) continue;
        v += (f[p][i] - m) * (f[p][i] - m);
        ++n;
      }
    sigma[p] = n > 1 ? std::sqrt(v / static_cast<double>(n - 1)) : std::nan("");
  }
}
}  // namespace

ContinuumEstimate EstimateContinuum(const PixelSpectrum& s, const std::vector<std::size_t>& samples,
                                    double given_noise_rel) {
  return EstimateContinuum(s, MakeContinuumRuns(samples), given_noise_rel);
}

ContinuumEstimate EstimateContinuum(const PixelSpectrum& s, const ContinuumRuns& runs, double given_noise_rel) {
  return EstimateContinuumAtLevel(s, runs, Mean(s.I, runs), given_noise_rel);
}

ContinuumEstimate EstimateContinuumAtLevel(const PixelSpectrum& s, const ContinuumRuns& runs, double level,
                                           double given_noise_rel) {
  ContinuumEstimate c;
  c.samples = runs.samples;
  c.continuum = level;
  const double* const f[4] = {s.I, s.Q, s.U, s.V};
  double sigma[4] = {0.0, 0.0, 0.0, 0.0};
  if (!(given_noise_rel > 0.0)) NoiseSigmas(f, runs, sigma);  // else replaced below
  c.noise_I = sigma[0];
  c.noise_Q = sigma[1];
  c.noise_U = sigma[2];
  c.noise_V = sigma[3];
  if (given_noise_rel > 0.0) {
    const double sigma_rel = given_noise_rel * std::fabs(c.continuum);
    c.noise_I = c.noise_Q = c.noise_U = c.noise_V = sigma_rel;
    c.noise_dof = HUGE_VAL;
  } else {
    c.noise_dof = runs.noise_dof;  // NoiseDegreesOfFreedom of the list, worked out with the runs
  }
  return c;
}

double NoiseDegreesOfFreedom(const std::vector<std::size_t>& samples) { return MakeContinuumRuns(samples).noise_dof; }

}  // namespace zeeline
