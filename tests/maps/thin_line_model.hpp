// thin_line_model.hpp -- an independent, optically thin Zeeman line model for testing the estimators.
//
// Absorption profiles of the three component groups (LL04 sect. 6.6 / del Toro Iniesta 2003 ch. 6, thin limit):
//   phi_q(l) = sum_i S_i exp(-((l - l_c - shift_i Delta lambda_B) / w)^2)  for q = -1 (blue), 0, +1 (red)
//   eta_I = 1/2 [phi_0 sin^2 g + 1/2 (phi_-1 + phi_+1)(1 + cos^2 g)]
//   eta_Q = 1/2 [phi_0 - 1/2 (phi_-1 + phi_+1)] sin^2 g cos 2chi,   eta_U likewise with sin 2chi
//   eta_V = 1/2 (phi_+1 - phi_-1) cos g
// and for a thin absorbing layer I = Ic (1 - d eta_I), Q = -Ic d eta_Q, U = -Ic d eta_U, V = -Ic d eta_V
// (emission: the same with d < 0 and Ic the background). The signs reproduce docs/conventions.md
// (V > 0 in the blue wing for g < 90 deg, Q < 0 at line centre for chi = 0) and, expanded to second
// order in the splitting, the weak-field relations of LL04 eqs. 9.77 and 9.83. It shares no code with
// src/synth: the Zeeman pattern comes from the atomic module, which has its own outside checks.
#pragma once

#include <cmath>
#include <random>
#include <vector>

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline::testing {

struct ThinLine {
  double rest_nm = 630.25;
  double field_gauss = 0.0, inclination_deg = 0.0, azimuth_deg = 0.0, vlos_kms = 0.0;
  double width_nm = 0.003;  // 1/e half-width
  double depth = 0.6;       // d (negative for emission)
  double continuum = 1.0;
};

struct Spectra {
  std::vector<double> wl, I, Q, U, V;
  PixelSpectrum View() const { return {wl.data(), wl.size(), I.data(), Q.data(), U.data(), V.data()}; }
};

inline std::vector<double> Grid(double centre, double halfrange, int n) {
  std::vector<double> wl(n);
  for (int i = 0; i < n; ++i) wl[i] = centre - halfrange + 2.0 * halfrange * i / (n - 1);
  return wl;
}

inline Spectra MakeThinLine(const ThinLine& t, const ZeemanPattern& p, const std::vector<double>& wl) {
  constexpr double kDeg = constants::kPi / 180.0;
  Spectra s;
  s.wl = wl;
  const std::size_t n = wl.size();
  s.I.assign(n, 0.0);
  s.Q.assign(n, 0.0);
  s.U.assign(n, 0.0);
  s.V.assign(n, 0.0);
  const double dlb = LorentzUnit_nm(t.rest_nm, t.field_gauss);
  const double lc = t.rest_nm * (1.0 + t.vlos_kms / (constants::kSpeedOfLight_m_s * 1e-3));
  const double g = t.inclination_deg * kDeg, chi = t.azimuth_deg * kDeg;
  for (std::size_t i = 0; i < n; ++i) {
    double phi[3] = {0.0, 0.0, 0.0};
    for (const auto& c : p.components) {
      const double x = (wl[i] - lc - c.shift_lorentz * dlb) / t.width_nm;
      phi[c.q + 1] += c.strength * std::exp(-x * x);
    }
    const double s2 = std::sin(g) * std::sin(g), c1 = std::cos(g);
    const double eta_i = 0.5 * (phi[1] * s2 + 0.5 * (phi[0] + phi[2]) * (1.0 + c1 * c1));
    const double lin = 0.5 * (phi[1] - 0.5 * (phi[0] + phi[2])) * s2;
    const double eta_v = 0.5 * (phi[2] - phi[0]) * c1;
    s.I[i] = t.continuum * (1.0 - t.depth * eta_i);
    s.Q[i] = -t.continuum * t.depth * lin * std::cos(2.0 * chi);
    s.U[i] = -t.continuum * t.depth * lin * std::sin(2.0 * chi);
    s.V[i] = -t.continuum * t.depth * eta_v;
  }
  return s;
}

inline void AddNoise(Spectra& s, double sigma, std::mt19937_64& rng) {
  std::normal_distribution<double> n(0.0, sigma);
  for (std::size_t i = 0; i < s.wl.size(); ++i) {
    s.I[i] += n(rng);
    s.Q[i] += n(rng);
    s.U[i] += n(rng);
    s.V[i] += n(rng);
  }
}

}  // namespace zeeline::testing
