#include "zeeline/synth/scene.hpp"

#include <cmath>
#include <random>
#include <sstream>

#include "zeeline/core/errors.hpp"
#include "zeeline/core/threads.hpp"

namespace zeeline {

std::string DemoSceneOptions::Validate() const {
  std::ostringstream m;
  if (nx < 16 || nx > 4096) m << "nx = " << nx << " must be in [16, 4096]";
  else if (ny < 16 || ny > 4096) m << "ny = " << ny << " must be in [16, 4096]";
  return m.str();
}

std::string SceneSynthesisOptions::Validate() const {
  std::ostringstream m;
  if (!(noise_rel >= 0.0) || noise_rel > 0.5) m << "noise_rel = " << noise_rel << " must be in [0, 0.5]";
  else if (threads < 0 || threads > 1024) m << "threads = " << threads << " must be in [0, 1024]";
  return m.str();
}

Scene MakeDemoScene(const DemoSceneOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError("demo scene: " + bad);
  Scene s;
  s.nx = o.nx;
  s.ny = o.ny;
  const std::size_t n = static_cast<std::size_t>(o.nx * o.ny);
  s.primary.resize(n);
  s.secondary.resize(n);
  s.primary_weight.assign(n, 1.0);
  const double sx = static_cast<double>(o.nx), sy = static_cast<double>(o.ny);
  // Positions in units of the grid: positive concentration at (0.3, 0.55), negative patch at (0.72, 0.45).
  const double px = 0.30 * sx, py = 0.55 * sy, nxc = 0.72 * sx, nyc = 0.45 * sy;
  const double rp = 0.11 * std::min(sx, sy), rn = 0.20 * std::min(sx, sy);
  constexpr double kRadToDeg = 57.29577951308232;
  for (long y = 0; y < o.ny; ++y)
    for (long x = 0; x < o.nx; ++x) {
      const std::size_t i = static_cast<std::size_t>(y * o.nx + x);
      const double X = static_cast<double>(x), Y = static_cast<double>(y);
      MeParameters p;
      p.doppler_width_nm = 2.6e-3;
      p.damping = 0.15;
      p.eta0 = 9.0;
      p.s0 = 0.25;
      p.s1 = 0.75;
      p.fill = 1.0;
      // Azimuths are the direction of the horizontal field on [0, 360) (not folded): the spectra depend on
      // 2 x azimuth only, so this is the truth a disambiguated map can be compared with.
      // Quiet background: weak, strongly inclined field with a slowly varying azimuth.
      p.field_gauss = 35.0 + 20.0 * std::sin(0.35 * X) * std::cos(0.27 * Y);
      p.inclination_deg = 70.0 + 15.0 * std::cos(0.21 * X + 0.13 * Y);
      p.azimuth_deg = std::fmod(40.0 + 3.0 * X + 2.0 * Y, 360.0);
      p.vlos_kms = 0.3 * std::sin(0.5 * X) * std::cos(0.4 * Y);
      // Positive concentration: 2.6 kG vertical at the centre, fanning out to 70 deg at the edge.
      const double dxp = X - px, dyp = Y - py, rpos = std::hypot(dxp, dyp);
      if (rpos < 1.6 * rp) {
        const double core = std::exp(-(rpos * rpos) / (rp * rp));
        p.field_gauss = std::max(p.field_gauss, 2600.0 * core + 400.0 * (1.0 - core) * (rpos < 1.3 * rp));
        p.inclination_deg = 70.0 * std::min(1.0, rpos / (1.3 * rp));
        p.azimuth_deg = std::fmod(std::atan2(dyp, dxp) * kRadToDeg + 360.0, 360.0);  // pointing outward
        p.doppler_width_nm = 2.2e-3;  // cooler gas in the concentration
        p.eta0 = 12.0;
        p.vlos_kms = 0.1;
      }
      // Negative patch: diffuse, a few hundred gauss, pointing away from the observer.
      const double rneg = std::hypot(X - nxc, (Y - nyc) * 1.4);
      if (rneg < rn) {
        const double w = 1.0 - rneg / rn;
        p.field_gauss = 120.0 + 380.0 * w;
        p.inclination_deg = 160.0 - 25.0 * (1.0 - w);
        // Orientation 120-130 deg; of its two directions the one pointing toward the patch centre (the
        // horizontal field of a sink of flux converges).
        const double a = 120.0 + 10.0 * w, ca = std::cos(a / kRadToDeg), sa = std::sin(a / kRadToDeg);
        p.azimuth_deg = (ca * (nxc - X) + sa * (nyc - Y) >= 0.0) ? a : a + 180.0;
        p.vlos_kms = -0.2;
      }
      s.primary[i] = p;
      // Two velocity components: a short row where a 4 km/s downflow fills 35 % of the pixel.
      s.secondary[i] = p;
      if (y == static_cast<long>(0.22 * sy) && x >= static_cast<long>(0.45 * sx) && x < static_cast<long>(0.45 * sx) + 6) {
        s.primary_weight[i] = 0.65;
        s.secondary[i].vlos_kms = 4.0;
        s.secondary[i].field_gauss = 900.0;
        s.secondary[i].inclination_deg = 15.0;
      }
    }
  return s;
}

std::vector<float> SynthesizeScene(const Scene& scene, const std::vector<MeLine>& lines,
                                   const Eigen::ArrayXd& wavelength_nm, const SynthesisOptions& synthesis,
                                   const SceneSynthesisOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError("synthesis: " + bad);
  const std::size_t np = static_cast<std::size_t>(scene.nx * scene.ny);
  if (scene.primary.size() != np) throw OptionError("scene: primary parameters do not match nx * ny");
  if (!scene.secondary.empty() && scene.secondary.size() != np)
    throw OptionError("scene: secondary parameters do not match nx * ny");
  for (std::size_t i = 0; i < np; ++i) {
    const std::string why = scene.primary[i].Validate();
    if (!why.empty())
      throw OptionError("scene pixel (" + std::to_string(i % scene.nx) + ", " + std::to_string(i / scene.nx) +
                        "): " + why);
  }
  const Eigen::Index nw = wavelength_nm.size();
  std::vector<float> out(np * 4 * static_cast<std::size_t>(nw));
  const int threads = ResolveThreadCount(o.threads);
#pragma omp parallel num_threads(threads)
  {
    StokesSynthesizer synth(lines, wavelength_nm, synthesis);
    StokesArray a(nw, 4), b(nw, 4);
#pragma omp for schedule(dynamic, 8)
    for (long p = 0; p < static_cast<long>(np); ++p) {
      if (o.cancel && o.cancel->load(std::memory_order_relaxed)) continue;  // drain the loop quickly
      const std::size_t i = static_cast<std::size_t>(p);
      synth.Synthesize(scene.primary[i], a);
      const double w = scene.primary_weight.empty() ? 1.0 : scene.primary_weight[i];
      if (w < 1.0) {
        synth.Synthesize(scene.secondary[i], b);
        a = w * a + (1.0 - w) * b;
      }
      for (int s = 0; s < 4; ++s)
        for (Eigen::Index k = 0; k < nw; ++k)
          out[(i * 4 + static_cast<std::size_t>(s)) * static_cast<std::size_t>(nw) + static_cast<std::size_t>(k)] =
              static_cast<float>(a(k, s));
    }
  }
  if (o.cancel && o.cancel->load()) return {};
  // Noise: one generator, in pixel order, so the cube does not depend on the thread count.
  if (o.noise_rel > 0.0) {
    std::mt19937_64 rng(o.seed);
    std::normal_distribution<double> gauss(0.0, 1.0);
    for (std::size_t i = 0; i < np; ++i) {
      const MeParameters& p = scene.primary[i];
      const double sigma = o.noise_rel * (p.s0 + synthesis.me.mu * p.s1);
      float* px = &out[i * 4 * static_cast<std::size_t>(nw)];
      for (std::size_t k = 0; k < 4 * static_cast<std::size_t>(nw); ++k) px[k] += static_cast<float>(sigma * gauss(rng));
    }
  }
  return out;
}

}  // namespace zeeline
