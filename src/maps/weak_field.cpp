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
    case TransverseRegion::kCore: return "core";
    case TransverseRegion::kWings: return "wings";
    case TransverseRegion::kCoreAndWings: return "core+wings";
    case TransverseRegion::kWholeLine: return "whole";
  }
  return "?";
}

TransverseRegion TransverseRegionFromString(const std::string& text) {
  if (text == "core") return TransverseRegion::kCore;
  if (text == "wings") return TransverseRegion::kWings;
  if (text == "core+wings") return TransverseRegion::kCoreAndWings;
  if (text == "whole") return TransverseRegion::kWholeLine;
  throw OptionError("transverse region '" + text + "': expected core, wings, core+wings or whole");
}

std::string WeakFieldOptions::Validate() const {
  const std::string line = ValidateLineOptions(rest_wavelength_nm, g_eff, window_halfwidth_nm);
  if (!line.empty()) return line;
  std::ostringstream m;
  if (!(core_halfwidth_nm >= 0.0))
    m << "core_halfwidth_nm = " << core_halfwidth_nm << " must be >= 0";
  else if ((transverse == TransverseRegion::kWings || transverse == TransverseRegion::kCoreAndWings) &&
           !(wing_start_nm > 0.0))
    m << "wing_start_nm = " << wing_start_nm << " must be > 0 for the '" << ToString(transverse)
      << "' transverse fit";
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
      const double var = (noise.noise_V * noise.noise_V + (k * r.blos_gauss) * (k * r.blos_gauss) * sigma_d * sigma_d) /
                         (k * k * sdd);
      r.blos_err_gauss = std::sqrt(var);
      r.has_blos = true;
    }
  }

  // ---- B_T and azimuth from Q, U
  if (s.Q && s.U && std::fabs(o.G) > 1e-9) {
    SecondDerivative(s.wavelength_nm + a, s.I + a, b - a, work.d2.data() + a);
    const double core = o.core_halfwidth_nm > 0.0 ? o.core_halfwidth_nm : 1e300;
    double sxx = 0.0, sqx = 0.0, sux = 0.0;
    std::size_t used = 0;
    for (std::size_t i = win.begin; i < win.end; ++i) {
      const double dl = s.wavelength_nm[i] - r.line_centre_nm;
      double x = 0.0;  // model regressor: Q = x * a_Q
      bool use = false;
      switch (o.transverse) {
        case TransverseRegion::kWholeLine:
          x = -0.25 * C * C * o.G * work.d2[i];
          use = true;
          break;
        case TransverseRegion::kCore:
          use = std::fabs(dl) <= core;
          x = -0.25 * C * C * o.G * work.d2[i];
          break;
        case TransverseRegion::kWings:
          use = std::fabs(dl) >= o.wing_start_nm;
          x = 0.75 * C * C * o.G * work.d1[i] / dl;
          break;
        case TransverseRegion::kCoreAndWings:
          if (std::fabs(dl) <= core && std::fabs(dl) < o.wing_start_nm) {
            use = true;
            x = -0.25 * C * C * o.G * work.d2[i];
          } else if (std::fabs(dl) >= o.wing_start_nm) {
            use = true;
            x = 0.75 * C * C * o.G * work.d1[i] / dl;
          }
          break;
      }
      if (!use) continue;
      sxx += x * x;
      sqx += s.Q[i] * x;
      sux += s.U[i] * x;
      ++used;
    }
    if (used >= 3 && sxx > 0.0) {
      const double aq = sqx / sxx, au = sux / sxx;
      const double sigma_q = noise.noise_Q / std::sqrt(sxx), sigma_u = noise.noise_U / std::sqrt(sxx);
      const double p = std::hypot(aq, au);  // = B_T^2
      r.btrans_gauss = std::sqrt(p);
      double chi = 0.5 * std::atan2(au, aq) * 180.0 / 3.14159265358979323846;
      if (chi < 0.0) chi += 180.0;
      if (chi >= 180.0) chi -= 180.0;
      r.azimuth_deg = chi;
      // First-order propagation: var(p) = (aq^2 sq^2 + au^2 su^2)/p^2; B_T = sqrt(p) -> sigma = sigma_p/(2 B_T).
      const double sigma_avg = std::sqrt(0.5 * (sigma_q * sigma_q + sigma_u * sigma_u));
      if (p > 0.0) {
        const double sigma_p = std::sqrt((aq * aq * sigma_q * sigma_q + au * au * sigma_u * sigma_u)) / p;
        r.btrans_err_gauss = sigma_p / (2.0 * r.btrans_gauss);
        r.azimuth_err_deg = 0.5 * sigma_avg / p * 180.0 / 3.14159265358979323846;
      } else {
        r.btrans_err_gauss = std::sqrt(sigma_avg);
        r.azimuth_err_deg = 90.0;
      }
      if (r.azimuth_err_deg > 90.0) r.azimuth_err_deg = 90.0;
      r.has_btrans = true;
    }
  }
  r.ok = r.has_blos || r.has_btrans;
  return r;
}

}  // namespace zeeline
