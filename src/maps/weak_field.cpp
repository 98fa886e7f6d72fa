#include "zeeline/maps/weak_field.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/maps/spectral_derivative.hpp"

namespace zeeline {

std::string ToString(TransverseRegion r) {
  switch (r) {
    case TransverseRegion::kCorrected: return "corrected";
    case TransverseRegion::kCore: return "core";
    case TransverseRegion::kWings: return "wings";
    case TransverseRegion::kCoreAndWings: return "core+wings";
    case TransverseRegion::kWholeLine: return "whole";
  }
  return "?";
}

TransverseRegion TransverseRegionFromString(const std::string& text) {
  if (text == "corrected") return TransverseRegion::kCorrected;
  if (text == "core") return TransverseRegion::kCore;
  if (text == "wings") return TransverseRegion::kWings;
  if (text == "core+wings") return TransverseRegion::kCoreAndWings;
  if (text == "whole") return TransverseRegion::kWholeLine;
  throw OptionError("transverse region '" + text + "': expected corrected, core, wings, core+wings or whole");
}

std::string WeakFieldOptions::Validate() const {
  const std::string line = ValidateLineOptions(rest_wavelength_nm, g_eff, window_halfwidth_nm);
  if (!line.empty()) return line;
  std::ostringstream m;
  if (!(core_halfwidth_nm >= 0.0))
    m << "core_halfwidth_nm = " << core_halfwidth_nm << " must be >= 0";
  else if (!(wing_start_nm >= 0.0))
    m << "wing_start_nm = " << wing_start_nm << " must be >= 0 (0 = 4.8 Doppler widths)";
  return m.str();
}

WeakFieldResult WeakFieldEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                  const WeakFieldOptions& o, WeakFieldWorkspace& work) {
  WeakFieldResult r;
  const std::size_t n = s.n;
  if (n < 5) return r;
  // Derivatives only over the window and two samples either side (what the stencils need).
  const SampleRange win = WindowRange(s.wavelength_nm, n, o.rest_wavelength_nm, o.window_halfwidth_nm);
  if (win.size() < 3) return r;
  const std::size_t a = win.begin >= 2 ? win.begin - 2 : 0, b = std::min(n, win.end + 2);
  work.d1.resize(n);
  work.d2.resize(n);
  FirstDerivative(s.wavelength_nm + a, s.I + a, b - a, work.d1.data() + a);
  const double C = LorentzUnit_nm(o.rest_wavelength_nm, 1.0);  // nm per gauss
  const double h = (s.wavelength_nm[n - 1] - s.wavelength_nm[0]) / static_cast<double>(n - 1);

  // Observed line centre: centroid of |Ic - I| in the window.
  double wsum = 0.0, lsum = 0.0;
  for (std::size_t i = win.begin; i < win.end; ++i) {
    const double depth = std::fabs(noise.continuum - s.I[i]);
    wsum += depth;
    lsum += depth * s.wavelength_nm[i];
  }
  r.line_centre_nm = wsum > 0.0 ? lsum / wsum : o.rest_wavelength_nm;

  r.noise_dof = noise.noise_dof;
  r.core = MeasureLineCore(s, noise.continuum, r.line_centre_nm, o.window_halfwidth_nm > 0.0 ? o.window_halfwidth_nm : 0.0);

  // ---- B_LOS from V
  if (s.V) {
    double sdd = 0.0, svd = 0.0;
    std::size_t used = 0;
    for (std::size_t i = win.begin; i < win.end; ++i) {
      sdd += work.d1[i] * work.d1[i];
      svd += s.V[i] * work.d1[i];
      ++used;
    }
    if (used >= 3 && sdd > 0.0) {
      const double k = C * o.g_eff;
      r.blos_gauss = -svd / (k * sdd);
      const double sigma_d = noise.noise_I * NoiseGainFirst(h);
      const double var_sample = noise.noise_V * noise.noise_V + (k * r.blos_gauss) * (k * r.blos_gauss) * sigma_d * sigma_d;
      r.blos_err_gauss = std::sqrt(var_sample / (k * k * sdd));
      r.has_blos = true;
      if (var_sample > 0.0) {
        double chi2 = 0.0;
        for (std::size_t i = win.begin; i < win.end; ++i) {
          const double res = s.V[i] + k * r.blos_gauss * work.d1[i];
          chi2 += res * res;
        }
        r.dof_v = static_cast<int>(used) - 1;
        r.chi2_v = chi2 / var_sample / r.dof_v;
      }
    }
  }

  // ---- B_T and azimuth from Q, U
  if (s.Q && s.U && std::fabs(o.G) > 1e-9) {
    SecondDerivative(s.wavelength_nm + a, s.I + a, b - a, work.d2.data() + a);
    const double core = o.core_halfwidth_nm > 0.0 ? o.core_halfwidth_nm : 1e300;
    const double wing_start =
        o.wing_start_nm > 0.0 ? o.wing_start_nm : (r.core.ok ? 4.8 * r.core.doppler_width_nm : 1e300);
    // Saturation correction (kCorrected): needs a measured absorption core with u > 0.
    const bool correct = o.transverse == TransverseRegion::kCorrected && r.core.ok && !r.core.emission &&
                         r.core.saturation > 0.0;
    const double s0 = r.core.surface_source;
    const double k2 = 0.25 * C * C * o.G;
    const double gain1 = NoiseGainFirst(h), gain2 = NoiseGainSecond(h);
    double sxx = 0.0, sqx = 0.0, sux = 0.0, sxn = 0.0;  // sxn: sum of regressor noise variances
    std::size_t used = 0;
    // Regressor x (Q = x a_Q) and its noise sigma_x for sample i; false when the sample is not used.
    auto regressor = [&](std::size_t i, double& x, double& xn) {
      const double dl = s.wavelength_nm[i] - r.line_centre_nm;
      const bool in_core = std::fabs(dl) <= core, in_wing = std::fabs(dl) >= wing_start;
      auto second = [&] {
        x = -k2 * work.d2[i];
        xn = k2 * noise.noise_I * gain2;
      };
      auto wing = [&] {
        x = 3.0 * k2 * work.d1[i] / dl;
        xn = 3.0 * k2 * noise.noise_I * gain1 / std::fabs(dl);
      };
      switch (o.transverse) {
        case TransverseRegion::kCorrected:
          if (correct) {
            const double t = s.I[i] - s0;
            x = -k2 * (work.d2[i] - 2.0 * work.d1[i] * work.d1[i] / t);
            const double g1 = 4.0 * std::fabs(work.d1[i]) / t * gain1;  // finite, moderate: no hypot needed
            xn = k2 * noise.noise_I * std::sqrt(gain2 * gain2 + g1 * g1);
          } else {
            second();
          }
          return true;
        case TransverseRegion::kWholeLine: second(); return true;
        case TransverseRegion::kCore: if (!in_core) return false; second(); return true;
        case TransverseRegion::kWings: if (!in_wing) return false; wing(); return true;
        case TransverseRegion::kCoreAndWings:
          if (in_wing) wing();
          else if (in_core) second();
          else return false;
          return true;
      }
      return false;
    };
    work.x.resize(n);
    for (std::size_t i = win.begin; i < win.end; ++i) {
      double x = 0.0, xn = 0.0;
      if (!regressor(i, x, xn)) {
        work.x[i] = std::nan("");
        continue;
      }
      work.x[i] = x;
      sxx += x * x;
      sqx += s.Q[i] * x;
      sux += s.U[i] * x;
      sxn += xn * xn;
      ++used;
    }
    if (used >= 3 && sxx > 0.0) {
      const double aq = sqx / sxx, au = sux / sxx;
      const double sigma_q = noise.noise_Q / std::sqrt(sxx), sigma_u = noise.noise_U / std::sqrt(sxx);
      const double sa = std::sqrt(0.5 * (sigma_q * sigma_q + sigma_u * sigma_u));
      const double p = std::sqrt(aq * aq + au * au);  // = B_T^2, biased upward by noise (G^4 << DBL_MAX)
      const double p0 = std::sqrt(std::max(p * p - sa * sa, 0.0));  // Wardle & Kronberg (1974) debiasing
      r.btrans_snr = sa > 0.0 ? p / sa : HUGE_VAL;
      r.btrans_sq_err_gauss2 = sa;
      r.btrans_gauss = std::sqrt(p0);
      r.btrans_err_gauss = sa / std::sqrt(4.0 * std::max(p0 - 0.8 * sa, 0.0) + 0.8 * sa);
      if (p0 > 0.0) {
        double chi = 0.5 * std::atan2(au, aq) * 180.0 / 3.14159265358979323846;
        if (chi < 0.0) chi += 180.0;
        if (chi >= 180.0) chi -= 180.0;
        r.azimuth_deg = chi;
        r.azimuth_err_deg = std::min(90.0, 0.5 * sa / p * 180.0 / 3.14159265358979323846);
      } else {
        r.azimuth_deg = r.azimuth_err_deg = std::nan("");
      }
      r.has_btrans = true;
      // Consistency of the transverse model with the observed Q, U shapes.
      const double mean_xn2 = sxn / static_cast<double>(used);
      const double var_q = noise.noise_Q * noise.noise_Q + aq * aq * mean_xn2;
      const double var_u = noise.noise_U * noise.noise_U + au * au * mean_xn2;
      if (var_q > 0.0 && var_u > 0.0 && used > 2) {
        double chi2 = 0.0;
        for (std::size_t i = win.begin; i < win.end; ++i) {
          const double x = work.x[i];
          if (std::isnan(x)) continue;
          const double rq = s.Q[i] - x * aq, ru = s.U[i] - x * au;
          chi2 += rq * rq / var_q + ru * ru / var_u;
        }
        r.dof_qu = static_cast<int>(2 * used) - 2;
        r.chi2_qu = chi2 / r.dof_qu;
      }
    }
  }
  r.ok = r.has_blos || r.has_btrans;
  return r;
}

}  // namespace zeeline
