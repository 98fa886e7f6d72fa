#include "zeeline/maps/centre_of_gravity.hpp"

#include <cmath>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline {

std::string CentreOfGravityOptions::Validate() const {
  return ValidateLineOptions(rest_wavelength_nm, g_eff, window_halfwidth_nm);
}

namespace {
// Trapezoid weight of sample i of l[0..n), n >= 2.
double TrapezoidWeight(const double* l, std::size_t n, std::size_t i) {
  const double left = i > 0 ? l[i] - l[i - 1] : l[1] - l[0];
  const double right = i + 1 < n ? l[i + 1] - l[i] : l[n - 1] - l[n - 2];
  return 0.5 * (left + right);
}

// The estimate over the samples of `win` with weight(i) (computed on the spot or read from a prepared grid).
template <class Weight>
CentreOfGravityResult Estimate(const PixelSpectrum& s, const ContinuumEstimate& noise, const CentreOfGravityOptions& o,
                               const SampleRange win, Weight weight) {
  CentreOfGravityResult r;
  const double* l = s.wavelength_nm;
  double np = 0.0, dp = 0.0, nm = 0.0, dm = 0.0;
  for (std::size_t i = win.begin; i < win.end; ++i) {
    const double w = weight(i);
    const double ap = (noise.continuum - s.I[i] - s.V[i]) * w;
    const double am = (noise.continuum - s.I[i] + s.V[i]) * w;
    np += l[i] * ap;
    dp += ap;
    nm += l[i] * am;
    dm += am;
  }
  const double scale = std::fabs(noise.continuum) > 0.0 ? std::fabs(noise.continuum) : 1.0;
  if (!(std::fabs(dp) > 1e-12 * scale) || !(std::fabs(dm) > 1e-12 * scale) || dp * dm <= 0.0) return r;
  r.centroid_plus_nm = np / dp;
  r.centroid_minus_nm = nm / dm;
  const double C = LorentzUnit_nm(o.rest_wavelength_nm, 1.0);
  r.blos_gauss = (r.centroid_plus_nm - r.centroid_minus_nm) / (2.0 * C * o.g_eff);
  const double mean = 0.5 * (r.centroid_plus_nm + r.centroid_minus_nm);
  const double c_kms = constants::kSpeedOfLight_m_s * 1e-3;
  r.vlos_kms = c_kms * (mean - o.rest_wavelength_nm) / o.rest_wavelength_nm;

  // Propagation: d l_+/d I_i = -(l_i - l_+) w_i / dp, d l_+/d V_i = -(l_i - l_+) w_i / dp;
  //              d l_-/d I_i = -(l_i - l_-) w_i / dm, d l_-/d V_i = +(l_i - l_-) w_i / dm.
  double var_diff = 0.0, var_mean = 0.0;
  for (std::size_t i = win.begin; i < win.end; ++i) {
    const double w = weight(i);
    const double gp = -(l[i] - r.centroid_plus_nm) * w / dp;
    const double gm = -(l[i] - r.centroid_minus_nm) * w / dm;
    const double dI_diff = gp - gm, dV_diff = gp + gm;
    const double dI_mean = 0.5 * (gp + gm), dV_mean = 0.5 * (gp - gm);
    var_diff += dI_diff * dI_diff * noise.noise_I * noise.noise_I + dV_diff * dV_diff * noise.noise_V * noise.noise_V;
    var_mean += dI_mean * dI_mean * noise.noise_I * noise.noise_I + dV_mean * dV_mean * noise.noise_V * noise.noise_V;
  }
  r.blos_err_gauss = std::sqrt(var_diff) / (2.0 * C * std::fabs(o.g_eff));
  r.vlos_err_kms = c_kms * std::sqrt(var_mean) / o.rest_wavelength_nm;
  r.ok = std::isfinite(r.blos_gauss) && std::isfinite(r.vlos_kms);
  return r;
}

}  // namespace

CentreOfGravityResult CentreOfGravityEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                              const CentreOfGravityOptions& o) {
  if (s.n < 3 || !s.V) return {};
  const std::size_t n = s.n;
  const double* l = s.wavelength_nm;
  return Estimate(s, noise, o, WindowRange(l, n, o.rest_wavelength_nm, o.window_halfwidth_nm),
                  [l, n](std::size_t i) { return TrapezoidWeight(l, n, i); });
}

void CentreOfGravityGrid::Prepare(const double* l, std::size_t n, const CentreOfGravityOptions& o) {
  weight.assign(n, 0.0);
  window = SampleRange{};
  if (n < 3) return;
  window = WindowRange(l, n, o.rest_wavelength_nm, o.window_halfwidth_nm);
  for (std::size_t i = 0; i < n; ++i) weight[i] = TrapezoidWeight(l, n, i);
}

CentreOfGravityResult CentreOfGravityEstimatePrepared(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                                      const CentreOfGravityOptions& o, const CentreOfGravityGrid& grid) {
  if (s.n < 3 || !s.V) return {};
  const double* w = grid.weight.data();
  return Estimate(s, noise, o, grid.window, [w](std::size_t i) { return w[i]; });
}

}  // namespace zeeline
