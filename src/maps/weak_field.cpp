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
  else if (!(corrected_model_error >= 0.0 && corrected_model_error <= 0.2))
    m << "corrected_model_error = " << corrected_model_error << " must be in [0, 0.2]";
  return m.str();
}

void PrepareWeakFieldGrid(const double* wavelength_nm, std::size_t n, const WeakFieldOptions& o,
                          WeakFieldWorkspace& work) {
  WeakFieldGrid& g = work.grid;
  g.wavelength_nm = wavelength_nm;
  g.n = n;
  g.usable = false;
  work.d1.resize(n);
  work.d2.resize(n);
  work.x.resize(n);
  work.xn.resize(n);
  if (n < 5) return;
  // Derivatives only over the window and two samples either side (what the stencils need).
  g.window = WindowRange(wavelength_nm, n, o.rest_wavelength_nm, o.window_halfwidth_nm);
  if (g.window.size() < 3) return;
  g.span_begin = g.window.begin >= 2 ? g.window.begin - 2 : 0;
  g.span_end = std::min(n, g.window.end + 2);
  g.stencil.Prepare(wavelength_nm + g.span_begin, g.span_end - g.span_begin);
  g.lorentz_nm_per_gauss = LorentzUnit_nm(o.rest_wavelength_nm, 1.0);
  g.step_nm = (wavelength_nm[n - 1] - wavelength_nm[0]) / static_cast<double>(n - 1);
  g.usable = true;
}

WeakFieldResult WeakFieldEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                  const WeakFieldOptions& o, WeakFieldWorkspace& work) {
  PrepareWeakFieldGrid(s.wavelength_nm, s.n, o, work);
  return WeakFieldEstimatePrepared(s, noise, o, work);
}

WeakFieldResult WeakFieldEstimatePrepared(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                          const WeakFieldOptions& o, WeakFieldWorkspace& work) {
  WeakFieldResult r;
  const WeakFieldGrid& grid = work.grid;
  if (s.wavelength_nm != grid.wavelength_nm || s.n != grid.n)
    throw OptionError("WeakFieldEstimatePrepared: the pixel's wavelength grid is not the prepared one");
  if (!grid.usable) return r;
  const SampleRange win = grid.window;
  const std::size_t a = grid.span_begin;
  double* const d1 = work.d1.data();
  double* const d2 = work.d2.data();
  const double* const I = s.I;
  const double* const l = s.wavelength_nm;
  // Both derivatives in one pass when the transverse field is wanted (below), else the first alone; on the
  // window only (the span's two extra samples either side feed the stencils, their derivatives are not used).
  const bool transverse = s.Q && s.U && std::fabs(o.G) > 1e-9;
  if (transverse) grid.stencil.FirstAndSecond(I + a, d1 + a, d2 + a, win.begin - a, win.end - a);
  else grid.stencil.First(I + a, d1 + a, win.begin - a, win.end - a);
  const double C = grid.lorentz_nm_per_gauss;  // nm per gauss
  const double h = grid.step_nm;

  // One pass over the window: the observed line centre (centroid of |Ic - I|) and the sums of the B_LOS fit.
  double wsum = 0.0, lsum = 0.0, sdd = 0.0, svd = 0.0;
  if (s.V) {
    const double* const V = s.V;
    for (std::size_t i = win.begin; i < win.end; ++i) {
      const double depth = std::fabs(noise.continuum - I[i]);
      wsum += depth;
      lsum += depth * l[i];
      sdd += d1[i] * d1[i];
      svd += V[i] * d1[i];
    }
  } else {
    for (std::size_t i = win.begin; i < win.end; ++i) {
      const double depth = std::fabs(noise.continuum - I[i]);
      wsum += depth;
      lsum += depth * l[i];
    }
  }
  r.line_centre_nm = wsum > 0.0 ? lsum / wsum : o.rest_wavelength_nm;

  r.noise_dof = noise.noise_dof;
  r.core = MeasureLineCore(s, noise.continuum, r.line_centre_nm, o.window_halfwidth_nm > 0.0 ? o.window_halfwidth_nm : 0.0,
                           win);  // the fit window is that around the rest wavelength, a few samples off

  // ---- B_LOS from V
  if (s.V) {
    const std::size_t used = win.size();
    if (used >= 3 && sdd > 0.0) {
      const double k = C * o.g_eff;
      r.blos_gauss = -svd / (k * sdd);
      const double sigma_d = noise.noise_I * NoiseGainFirst(h);
      const double var_sample = noise.noise_V * noise.noise_V + (k * r.blos_gauss) * (k * r.blos_gauss) * sigma_d * sigma_d;
      r.blos_err_gauss = std::sqrt(var_sample / (k * k * sdd));
      r.has_blos = true;
      if (var_sample > 0.0) {
        double chi2 = 0.0;
        const double kb = k * r.blos_gauss;
        for (std::size_t i = win.begin; i < win.end; ++i) {
          const double res = s.V[i] + kb * d1[i];
          chi2 += res * res;
        }
        r.dof_v = static_cast<int>(used) - 1;
        r.chi2_v = chi2 / var_sample / r.dof_v;
      }
    }
  }

  // ---- B_T and azimuth from Q, U
  if (transverse) {
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
    double* const xs = work.x.data();
    double* const xns = work.xn.data();
    const double* const Q = s.Q;
    const double* const U = s.U;
    if (o.transverse == TransverseRegion::kCorrected || o.transverse == TransverseRegion::kWholeLine) {
      // Every window sample is used: the regressor x (Q = x a_Q) and its noise sigma_x in a loop without
      // branches or reductions (vectorised), then the sums.
      if (correct) {
        const double kn = k2 * noise.noise_I, g2 = gain2 * gain2;
        for (std::size_t i = win.begin; i < win.end; ++i) {
          const double t = I[i] - s0;
          xs[i] = -k2 * (d2[i] - 2.0 * d1[i] * d1[i] / t);
          const double g1 = 4.0 * std::fabs(d1[i]) / t * gain1;  // finite, moderate: no hypot needed
          xns[i] = kn * std::sqrt(g2 + g1 * g1);
        }
      } else {
        const double xn = k2 * noise.noise_I * gain2;
        for (std::size_t i = win.begin; i < win.end; ++i) {
          xs[i] = -k2 * d2[i];
          xns[i] = xn;
        }
      }
      for (std::size_t i = win.begin; i < win.end; ++i) {
        const double x = xs[i], xn = xns[i];
        sxx += x * x;
        sqx += Q[i] * x;
        sux += U[i] * x;
        sxn += xn * xn;
      }
      used = win.size();
    } else {
      // Regressor x and its noise sigma_x for sample i; false when the sample is not used.
      auto regressor = [&](std::size_t i, double& x, double& xn) {
        const double dl = l[i] - r.line_centre_nm;
        const bool in_core = std::fabs(dl) <= core, in_wing = std::fabs(dl) >= wing_start;
        auto second = [&] {
          x = -k2 * d2[i];
          xn = k2 * noise.noise_I * gain2;
        };
        auto wing = [&] {
          x = 3.0 * k2 * d1[i] / dl;
          xn = 3.0 * k2 * noise.noise_I * gain1 / std::fabs(dl);
        };
        switch (o.transverse) {
          case TransverseRegion::kCore: if (!in_core) return false; second(); return true;
          case TransverseRegion::kWings: if (!in_wing) return false; wing(); return true;
          case TransverseRegion::kCoreAndWings:
            if (in_wing) wing();
            else if (in_core) second();
            else return false;
            return true;
          default: return false;  // kCorrected, kWholeLine: above
        }
      };
      for (std::size_t i = win.begin; i < win.end; ++i) {
        double x = 0.0, xn = 0.0;
        if (!regressor(i, x, xn)) {
          xs[i] = std::nan("");
          continue;
        }
        xs[i] = x;
        sxx += x * x;
        sqx += Q[i] * x;
        sux += U[i] * x;
        sxn += xn * xn;
        ++used;
      }
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
      r.btrans_noise_err_gauss = r.btrans_err_gauss;
      r.saturation_corrected = correct;
      if (correct && o.corrected_model_error > 0.0) {
        // Model accuracy of the saturation correction (file comment), in quadrature with the noise.
        const double f = o.corrected_model_error;
        r.btrans_err_gauss = std::sqrt(r.btrans_err_gauss * r.btrans_err_gauss + f * f * p0);
        r.btrans_sq_err_gauss2 = std::sqrt(sa * sa + 4.0 * f * f * p0 * p0);
      }
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
        if (used == win.size()) {
          // Every sample used (none NaN: sxx would be NaN): each term added in sample order as it is formed.
          for (std::size_t i = win.begin; i < win.end; ++i) {
            const double x = xs[i];
            const double rq = Q[i] - x * aq, ru = U[i] - x * au;
            chi2 += rq * rq / var_q + ru * ru / var_u;
          }
        } else {
          // Per-sample terms first (a loop without reductions, vectorised), then the sum of the used ones.
          double* const term = xns;
          for (std::size_t i = win.begin; i < win.end; ++i) {
            const double x = xs[i];
            const double rq = Q[i] - x * aq, ru = U[i] - x * au;
            term[i] = rq * rq / var_q + ru * ru / var_u;
          }
          for (std::size_t i = win.begin; i < win.end; ++i)
            if (!std::isnan(xs[i])) chi2 += term[i];
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
