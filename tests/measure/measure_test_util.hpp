// measure_test_util.hpp -- synthetic spectra with known truth for the measure tests.
//
// * Optically thin emission (a lamp line in a magnet), written here from the textbook emission
//   coefficients of the three component groups (LL04 sect. 6.6; del Toro Iniesta 2003 ch. 6, thin limit):
//     phi_q(l) = sum_{j in q} S_j H(a, (l - l_c - s_j dlB) / w) / (sqrt(pi) w)
//     I = Ic + E [phi_0 sin^2 g / 2 + (phi_b + phi_r)(1 + cos^2 g) / 4]
//     Q = E [phi_0 - (phi_b + phi_r)/2] sin^2 g cos 2chi / 2,   U likewise with sin 2chi
//     V = E (phi_r - phi_b) cos g / 2          (V < 0 in the blue wing for g < 90: docs/conventions.md)
//   with H from libcerf (VoigtReference) and the instrument profile applied by the FFT convolver of
//   src/synth (not by the analytic Voigt-Gaussian rule the fit uses).
// * Milne-Eddington absorption spectra from src/synth (StokesSynthesizer), optionally mixed from two
//   components.
#pragma once

#include <cmath>
#include <random>
#include <vector>

#include <Eigen/Core>

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/measure/spectrum_reader.hpp"
#include "zeeline/synth/instrument_profile.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"
#include "zeeline/synth/voigt.hpp"

namespace zeeline::testing {

struct LampLine {
  double rest_nm = 643.847;
  double field_gauss = 1e4;
  double inclination_deg = 90.0, azimuth_deg = 0.0;
  double vlos_kms = 0.0;
  double doppler_width_nm = 0.00058;  // Cd at ~500 K
  double damping = 0.02;
  double area = 2.0;                  // E (counts x nm)
  double background = 20.0;           // Ic
  double instrument_fwhm_nm = 0.002;
  double noise = 0.0;                 // Gaussian, all Stokes
  unsigned seed = 1;
};

inline Spectrum1D MakeLampSpectrum(const LampLine& t, const ZeemanPattern& p, double half_range_nm, int points) {
  constexpr double kDeg = constants::kPi / 180.0;
  const Eigen::ArrayXd wl = UniformWavelengthGrid(t.rest_nm, 2.0 * half_range_nm, points);
  const double dlb = LorentzUnit_nm(t.rest_nm, t.field_gauss);
  const double lc = t.rest_nm * (1.0 + t.vlos_kms / (constants::kSpeedOfLight_m_s * 1e-3));
  const double g = t.inclination_deg * kDeg, chi = t.azimuth_deg * kDeg;
  StokesArray st = StokesArray::Zero(points, 4);
  for (int i = 0; i < points; ++i) {
    double phi[3] = {0.0, 0.0, 0.0};
    for (const auto& c : p.components) {
      const double v = (wl[i] - lc - c.shift_lorentz * dlb) / t.doppler_width_nm;
      phi[c.q + 1] += c.strength * VoigtReference(t.damping, v).H / (std::sqrt(constants::kPi) * t.doppler_width_nm);
    }
    const double s2 = std::sin(g) * std::sin(g), c2 = std::cos(g) * std::cos(g);
    st(i, 0) = t.area * (phi[1] * s2 / 2.0 + (phi[0] + phi[2]) * (1.0 + c2) / 4.0);
    const double lin = t.area * (phi[1] - 0.5 * (phi[0] + phi[2])) * s2 / 2.0;
    st(i, 1) = lin * std::cos(2.0 * chi);
    st(i, 2) = lin * std::sin(2.0 * chi);
    st(i, 3) = t.area * (phi[2] - phi[0]) * std::cos(g) / 2.0;
  }
  if (t.instrument_fwhm_nm > 0.0) {
    InstrumentProfileOptions io;
    io.gaussian_fwhm_nm = t.instrument_fwhm_nm;
    ProfileConvolver conv(points, wl[1] - wl[0], io);
    conv.Apply(st);
  }
  std::mt19937 rng(t.seed);
  std::normal_distribution<double> gauss(0.0, t.noise);
  Spectrum1D s;
  s.source = "lamp-test";
  for (int i = 0; i < points; ++i) {
    s.wavelength_nm.push_back(wl[i]);
    s.I.push_back(t.background + st(i, 0) + (t.noise > 0 ? gauss(rng) : 0.0));
    s.Q.push_back(st(i, 1) + (t.noise > 0 ? gauss(rng) : 0.0));
    s.U.push_back(st(i, 2) + (t.noise > 0 ? gauss(rng) : 0.0));
    s.V.push_back(st(i, 3) + (t.noise > 0 ? gauss(rng) : 0.0));
  }
  return s;
}

/// Milne-Eddington spectrum: sum_k weight_k * ME(params_k) on a uniform grid, plus Gaussian noise
/// (sigma relative to the continuum s0 + s1).
inline Spectrum1D MakeMeSpectrum(const ZeemanPattern& pattern, double rest_nm, const std::vector<MeParameters>& params,
                                 const std::vector<double>& weights, double half_range_nm, int points, double noise,
                                 unsigned seed, double instrument_fwhm_nm = 0.0) {
  MeLine line;
  line.wavelength_nm = rest_nm;
  line.pattern = pattern;
  SynthesisOptions so;
  so.instrument.gaussian_fwhm_nm = instrument_fwhm_nm;
  StokesSynthesizer synth({line}, UniformWavelengthGrid(rest_nm, 2.0 * half_range_nm, points), so);
  StokesArray sum = StokesArray::Zero(points, 4), one;
  for (std::size_t k = 0; k < params.size(); ++k) {
    synth.Synthesize(params[k], one);
    sum += weights[k] * one;
  }
  std::mt19937 rng(seed);
  std::normal_distribution<double> gauss(0.0, noise * (params[0].s0 + params[0].s1));
  Spectrum1D s;
  s.source = "me-test";
  for (int i = 0; i < points; ++i) {
    s.wavelength_nm.push_back(synth.wavelength_nm()[i]);
    s.I.push_back(sum(i, 0) + (noise > 0 ? gauss(rng) : 0.0));
    s.Q.push_back(sum(i, 1) + (noise > 0 ? gauss(rng) : 0.0));
    s.U.push_back(sum(i, 2) + (noise > 0 ? gauss(rng) : 0.0));
    s.V.push_back(sum(i, 3) + (noise > 0 ? gauss(rng) : 0.0));
  }
  return s;
}

}  // namespace zeeline::testing
