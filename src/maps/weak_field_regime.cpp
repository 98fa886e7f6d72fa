#include "zeeline/maps/weak_field_regime.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "zeeline/core/units.hpp"

namespace zeeline {

std::string WeakFieldRegimeOptions::Validate() const {
  std::ostringstream m;
  if (!(weak_ratio > 0.0) || weak_ratio > 5.0) m << "weak ratio = " << weak_ratio << " must be in (0, 5]";
  else if (!(consistency_sigma > 0.0)) m << "consistency sigma = " << consistency_sigma << " must be > 0";
  else if (!(saturated_above >= 0.0)) m << "saturation threshold = " << saturated_above << " must be >= 0";
  return m.str();
}

namespace {
// chi2_red is scaled by an estimated noise variance, so it scatters like F(dof, noise_dof):
// relative variance 2/dof + 2/noise_dof around 1.
bool Consistent(double chi2_red, int dof, double noise_dof, double z) {
  if (!(dof > 0) || !std::isfinite(chi2_red)) return true;  // not testable
  const double inv_noise = noise_dof > 0.0 && std::isfinite(noise_dof) ? 2.0 / noise_dof : 0.0;
  return chi2_red <= 1.0 + z * std::sqrt(2.0 / dof + inv_noise);
}
}  // namespace

WeakFieldRegime AssessWeakFieldRegime(const WeakFieldResult& w, const CentreOfGravityResult* g, double g_eff,
                              double rest_wavelength_nm, TransverseRegion transverse, double fallback_width_nm,
                              const WeakFieldRegimeOptions& o) {
  WeakFieldRegime a;
  const double los = std::max(w.has_blos ? std::fabs(w.blos_gauss) : 0.0, g && g->ok ? std::fabs(g->blos_gauss) : 0.0);
  a.strength_gauss = std::hypot(los, w.has_btrans ? w.btrans_gauss : 0.0);
  a.saturation = w.core.ok ? w.core.saturation : 0.0;
  a.width_nm = w.core.ok ? w.core.doppler_width_nm : fallback_width_nm;
  a.ratio = std::fabs(g_eff) * LorentzUnit_nm(rest_wavelength_nm, a.strength_gauss) / a.width_nm;
  a.ratio_ok = std::isfinite(a.ratio) && a.ratio < o.weak_ratio;
  a.v_consistent = Consistent(w.chi2_v, w.dof_v, w.noise_dof, o.consistency_sigma);
  a.qu_consistent = Consistent(w.chi2_qu, w.dof_qu, w.noise_dof, o.consistency_sigma);
  a.saturated_textbook = w.has_btrans && a.saturation > o.saturated_above &&
                         (transverse == TransverseRegion::kWholeLine || transverse == TransverseRegion::kCore);
  a.weak = a.ratio_ok && a.v_consistent && a.qu_consistent;
  if (!o.explain) return a;
  char buf[200];
  if (!std::isfinite(a.ratio)) {
    a.reason = "no line width could be measured";
  } else if (!a.ratio_ok) {
    std::snprintf(buf, sizeof buf, "g_eff*dlambda_B/w_D = %.3g >= %.3g (splitting not small against the Doppler width)",
                  a.ratio, o.weak_ratio);
    a.reason = buf;
  } else if (!a.v_consistent) {
    std::snprintf(buf, sizeof buf, "V does not follow dI/dlambda (reduced chi2 %.3g over %d samples)", w.chi2_v,
                  w.dof_v + 1);
    a.reason = buf;
  } else if (!a.qu_consistent) {
    std::snprintf(buf, sizeof buf, "Q, U do not follow the weak-field transverse model (reduced chi2 %.3g)", w.chi2_qu);
    a.reason = buf;
  } else {
    std::snprintf(buf, sizeof buf, "g_eff*dlambda_B/w_D = %.3g < %.3g and the weak-field model fits V, Q, U", a.ratio,
                  o.weak_ratio);
    a.reason = buf;
  }
  return a;
}

SplitCheck CheckSplit(const SplittingResult& sp, const CentreOfGravityResult* g, double resolution_ratio) {
  SplitCheck c;
  char buf[240];
  const double ratio = sp.width_nm > 0.0 ? sp.half_separation_nm / sp.width_nm : 0.0;
  c.resolved = sp.ok && sp.resolved;
  if (!sp.ok) {
    c.reason = "the three-Gaussian fit failed";
    return c;
  }
  if (!c.resolved) {
    if (ratio < resolution_ratio)
      std::snprintf(buf, sizeof buf, "not resolved: half separation / 1/e half-width = %.3g < %.3g", ratio, resolution_ratio);
    else if (!(sp.half_separation_nm > 3.0 * sp.half_separation_err_nm))
      std::snprintf(buf, sizeof buf, "not resolved: half separation / 1/e half-width = %.3g >= %.3g but not 3 sigma significant",
                    ratio, resolution_ratio);
    else
      std::snprintf(buf, sizeof buf,
                    "not resolved: half separation / 1/e half-width = %.3g >= %.3g, but the fitted profile has no "
                    "separate dip at each sigma group (a saturated single core can imitate a split)",
                    ratio, resolution_ratio);
    c.reason = buf;
    return c;
  }
  // Against the noise of the centre of gravity alone: its model term is for B_LOS reading low (saturation),
  // which cannot explain a |B_LOS| above the split |B| (centre_of_gravity.hpp).
  if (g && g->ok &&
      std::fabs(g->blos_gauss) > sp.field_gauss + 3.0 * std::hypot(sp.field_err_gauss, g->blos_noise_err_gauss)) {
    c.inconsistent = true;
    std::snprintf(buf, sizeof buf, "|B| = %.4g G is below the centre-of-gravity |B_LOS| = %.4g G", sp.field_gauss,
                  std::fabs(g->blos_gauss));
    c.reason = buf;
    return c;
  }
  c.valid = true;
  std::snprintf(buf, sizeof buf, "resolved: half separation / 1/e half-width = %.3g >= %.3g", ratio, resolution_ratio);
  c.reason = buf;
  return c;
}

}  // namespace zeeline
