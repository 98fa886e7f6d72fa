// me_spectrum.hpp -- one Milne–Eddington spectrum (src/synth) as plain vectors, for the estimator tests
// that check the map methods on the line-formation module's output.
#pragma once

#include <string>
#include <vector>

#include "zeeline/maps/pixel_spectrum.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"

namespace zeeline::testing {

struct MeSpectrum {
  ZeemanPattern pattern;
  std::vector<double> wl, I, Q, U, V;
  PixelSpectrum View() const { return {wl.data(), wl.size(), I.data(), Q.data(), U.data(), V.data()}; }
};

/// A photospheric-like atmosphere: Doppler width 2.6 pm, damping 0.15, S = 0.25 + 0.75 tau.
inline MeParameters Atmosphere(double field_gauss, double inclination_deg, double azimuth_deg, double eta0) {
  MeParameters p;
  p.field_gauss = field_gauss;
  p.inclination_deg = inclination_deg;
  p.azimuth_deg = azimuth_deg;
  p.doppler_width_nm = 2.6e-3;
  p.damping = 0.15;
  p.eta0 = eta0;
  p.s0 = 0.25;
  p.s1 = 0.75;
  return p;
}

/// The continuum of a noiseless spectrum (its first sample) with a tiny noise level, which keeps the noise
/// terms (and the debiasing of B_T, weak_field.hpp) out of bias checks.
inline ContinuumEstimate NoiselessContinuum(const MeSpectrum& m) {
  ContinuumEstimate c;
  c.continuum = m.I.front();
  c.noise_I = c.noise_Q = c.noise_U = c.noise_V = 1e-9;
  return c;
}

/// Synthesises the line lower -> upper at rest_nm on `points` samples spanning range_nm (g_s = CODATA).
inline MeSpectrum SynthesizeMe(const std::string& lower, const std::string& upper, double rest_nm, double range_nm,
                               int points, const MeParameters& p) {
  MeSpectrum s;
  s.pattern = ComputeZeemanPattern(ParseLevel(lower), ParseLevel(upper));
  MeLine line;
  line.wavelength_nm = rest_nm;
  line.pattern = s.pattern;
  const Eigen::ArrayXd grid = UniformWavelengthGrid(rest_nm, range_nm, points);
  StokesSynthesizer synth({line}, grid, {});
  StokesArray a(points, 4);
  synth.Synthesize(p, a);
  s.wl.assign(grid.data(), grid.data() + points);
  std::vector<double>* out[4] = {&s.I, &s.Q, &s.U, &s.V};
  for (int k = 0; k < 4; ++k) out[k]->assign(a.col(k).data(), a.col(k).data() + points);
  return s;
}

}  // namespace zeeline::testing
