// zeeline/synth/scene.hpp -- synthetic Stokes cubes from maps of Milne–Eddington parameters.
//
// A scene is a 2-D grid of MeParameters, optionally with a second atmosphere per pixel and a weight
// (two unresolved velocity components: I = w S(p1) + (1 - w) S(p2) for every Stokes parameter). The cube
// is synthesised pixel by pixel with StokesSynthesizer (stokes_synthesizer.hpp), then Gaussian noise of
// standard deviation noise_rel * (continuum of the pixel) is added to every sample with a seeded
// generator (std::mt19937_64, so a seed reproduces the cube on any platform with the same libstdc++ normal
// distribution).
//
// The built-in demo scene is invented for the demos and tests (docs/demo.md): an emerging bipolar region
// on a quiet background seen at disc centre -- a compact positive-polarity concentration of 2.6 kG with a
// field fanning out to 70 deg inclination at its edge, a diffuse negative-polarity patch of a few hundred
// gauss, a weak (< 60 G) inclined background, and a short row of pixels where a fast downflow shares the
// pixel with a slow component (asymmetric V profiles).
#pragma once

#include <atomic>
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/synth/me_parameters.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"

namespace zeeline {

struct Scene {
  long nx = 0, ny = 0;
  std::vector<MeParameters> primary;    ///< y * nx + x
  std::vector<MeParameters> secondary;  ///< empty, or one per pixel
  std::vector<double> primary_weight;   ///< empty (all 1), or one per pixel in [0, 1]
};

struct DemoSceneOptions {
  long nx = 48, ny = 40;  ///< grid size in pixels (>= 16 each)

  std::string Validate() const;
};

/// The invented bipolar-region scene described in the file comment.
Scene MakeDemoScene(const DemoSceneOptions& options = {});

struct SceneSynthesisOptions {
  double noise_rel = 1e-3;     ///< noise sigma in units of each pixel's continuum (0 = noiseless)
  std::uint64_t seed = 1;      ///< noise generator seed
  int threads = 0;             ///< 0 = all available
  const std::atomic<bool>* cancel = nullptr;  ///< polled per pixel; once set, SynthesizeScene returns {}

  std::string Validate() const;
};

/// Synthesises the scene on `wavelength_nm`; returns values laid out like CubeTile / StokesCubeData
/// (values[((p * 4) + s) * nw + w], s = I, Q, U, V); an empty vector when options.cancel was set during
/// the run. Throws OptionError for invalid input.
std::vector<float> SynthesizeScene(const Scene& scene, const std::vector<MeLine>& lines,
                                   const Eigen::ArrayXd& wavelength_nm, const SynthesisOptions& synthesis,
                                   const SceneSynthesisOptions& options);

}  // namespace zeeline
