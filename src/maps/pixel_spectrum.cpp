#include "zeeline/maps/pixel_spectrum.hpp"

#include <cmath>

namespace zeeline {

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

namespace {
// Mean and standard deviation (about the mean) over the samples, skipping non-finite values.
void MeanStd(const double* f, const std::vector<std::size_t>& idx, double* mean, double* sd) {
  double s = 0.0, s2 = 0.0;
  std::size_t k = 0;
  for (std::size_t i : idx) {
    if (!std::isfinite(f[i])) continue;
    s += f[i];
    ++k;
  }
  *mean = k ? s / static_cast<double>(k) : std::nan("");
  for (std::size_t i : idx) {
    if (!std::isfinite(f[i])) continue;
    const double d = f[i] - *mean;
    s2 += d * d;
  }
  *sd = k > 1 ? std::sqrt(s2 / static_cast<double>(k - 1)) : std::nan("");
}
}  // namespace

ContinuumEstimate EstimateContinuum(const PixelSpectrum& s, const std::vector<std::size_t>& samples,
                                    double given_noise_rel) {
  ContinuumEstimate c;
  c.samples = samples.size();
  double unused;
  MeanStd(s.I, samples, &c.continuum, &c.noise_I);
  if (s.Q) MeanStd(s.Q, samples, &unused, &c.noise_Q);
  if (s.U) MeanStd(s.U, samples, &unused, &c.noise_U);
  if (s.V) MeanStd(s.V, samples, &unused, &c.noise_V);
  if (given_noise_rel > 0.0) {
    const double sigma = given_noise_rel * std::fabs(c.continuum);
    c.noise_I = c.noise_Q = c.noise_U = c.noise_V = sigma;
  }
  return c;
}

}  // namespace zeeline
