#include "zeeline/maps/centre_of_gravity.hpp"

#include <cmath>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
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
}  // namespace

void CentreOfGravityWorkspace::Prepare(const double* l, std::size_t samples, const CentreOfGravityOptions& o) {
  wavelength_nm = l;
  n = samples;
  weight.assign(n, 0.0);
  window = SampleRange{};
  if (n < 3) return;
  window = WindowRange(l, n, o.rest_wavelength_nm, o.window_halfwidth_nm);
  for (std::size_t i = 0; i < n; ++i) weight[i] = TrapezoidWeight(l, n, i);
}

CentreOfGravityResult CentreOfGravityEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                              const CentreOfGravityOptions& o) {
  CentreOfGravityWorkspace work;
  work.Prepare(s.wavelength_nm, s.n, o);
  return CentreOfGravityEstimatePrepared(s, noise, o, work);
}

CentreOfGravityResult CentreOfGravityEstimatePrepared(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                                      const CentreOfGravityOptions& o, CentreOfGravityWorkspace& work) {
  CentreOfGravityResult r;
  if (s.wavelength_nm != work.wavelength_nm || s.n != work.n)
    throw OptionError("CentreOfGravityEstimatePrepared: the pixel's wavelength grid is not the prepared one");
  if (s.n < 3 || !s.V) return r;
  const SampleRange win = work.window;
  const double* l = s.wavelength_nm;
  const double* I = s.I;
  const double* V = s.V;
  const double* weight = work.weight.data();
  double np = 0.0, dp = 0.0, nm = 0.0, dm = 0.0;
  for (std::size_t i = win.begin; i < win.end; ++i) {
    const double w = weight[i];
    const double ap = (noise.continuum - I[i] - V[i]) * w;
    const double am = (noise.continuum - I[i] + V[i]) * w;
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
  // Each sample's terms are added in sample order as they are formed.
  const double cp = r.centroid_plus_nm, cm = r.centroid_minus_nm;
  const double nI = noise.noise_I, nV = noise.noise_V;
  double var_diff = 0.0, var_mean = 0.0;
  for (std::size_t i = win.begin; i < win.end; ++i) {
    const double w = weight[i];
    const double gp = -(l[i] - cp) * w / dp;
    const double gm = -(l[i] - cm) * w / dm;
    const double dI_diff = gp - gm, dV_diff = gp + gm;
    const double dI_mean = 0.5 * (gp + gm), dV_mean = 0.5 * (gp - gm);
    var_diff += dI_diff * dI_diff * nI * nI + dV_diff * dV_diff * nV * nV;
    var_mean += dI_mean * dI_mean * nI * nI + dV_mean * dV_mean * nV * nV;
  }
  r.blos_err_gauss = std::sqrt(var_diff) / (2.0 * C * std::fabs(o.g_eff));
  r.vlos_err_kms = c_kms * std::sqrt(var_mean) / o.rest_wavelength_nm;
  r.ok = std::isfinite(r.blos_gauss) && std::isfinite(r.vlos_kms);
  return r;
}

}  // namespace zeeline
