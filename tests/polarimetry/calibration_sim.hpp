// calibration_sim.hpp -- noisy calibration sequences for the modulation-fit tests, simulated through the
// Jones route (jones.hpp: the field behind an ideal polariser, then the retarder's Jones matrix), i.e.
// independently of the closed-form Mueller matrices the fit uses.
#pragma once

#include <cmath>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "zeeline/polarimetry/calibration_table.hpp"
#include "zeeline/polarimetry/jones.hpp"
#include "zeeline/polarimetry/modulation.hpp"

namespace zeeline::polarimetry::testing {

struct SimTruth {
  ModulationMatrix o;           // counts per unit lamp intensity
  double retardance_deg = 87.3;
  double offset_deg = 1.2;
  double dark_counts = 100.0;
  double read_noise = 5.0;
  double gain = 1.0;
  double drift = 0.02;          // T_k = 1 + drift sin(1.7 k) except the first open state
};

struct StateSpec {
  std::string name;
  std::optional<double> pol, ret;
};

inline Stokes JonesRouteInput(const StateSpec& s, double delta, double offset) {
  if (s.name.rfind("dark", 0) == 0) return Stokes::Zero();
  if (!s.pol) return Stokes(1, 0, 0, 0);  // unpolarised light stays unpolarised through a retarder
  const double phi = *s.pol * 3.14159265358979323846 / 180.0;
  Eigen::Vector2cd e(std::cos(phi) / std::sqrt(2.0), std::sin(phi) / std::sqrt(2.0));  // I = 1/2
  if (s.ret) e = JonesRetarder(*s.ret + offset, delta) * e;
  return StokesOfField(e);
}

/// Noisy sequence (Gaussian approximation of photon + read noise), first open state with T = 1.
inline CalibrationSequence Simulate(const std::vector<StateSpec>& specs, const SimTruth& t, unsigned seed,
                                    std::vector<double>* transmissions = nullptr) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> gauss(0.0, 1.0);
  CalibrationSequence seq;
  seq.source = "simulated";
  seq.n_modulation = static_cast<int>(t.o.rows());
  bool first_open = true;
  for (std::size_t k = 0; k < specs.size(); ++k) {
    CalibrationState st;
    st.name = specs[k].name;
    st.polariser_deg = specs[k].pol;
    st.retarder_deg = specs[k].ret;
    st.dark = st.name.rfind("dark", 0) == 0;
    st.open = st.name.rfind("open", 0) == 0;
    double tk = 1.0 + t.drift * std::sin(1.7 * static_cast<double>(k));
    if (st.open && first_open) {
      tk = 1.0;
      first_open = false;
    }
    if (transmissions) transmissions->push_back(tk);
    const Eigen::VectorXd light = tk * (t.o * JonesRouteInput(specs[k], t.retardance_deg, t.offset_deg));
    st.counts.resize(seq.n_modulation);
    for (int j = 0; j < seq.n_modulation; ++j) {
      const double sd = std::sqrt(light(j) / t.gain + t.read_noise * t.read_noise);
      st.counts(j) = light(j) + t.dark_counts + sd * gauss(rng);
    }
    seq.states.push_back(st);
  }
  return seq;
}

/// A well-designed sequence: two darks, open, polariser at 0/45/90/135, retarder behind the 0-deg polariser
/// at 0..150 deg in 30-deg steps.
inline std::vector<StateSpec> GoodDesign() {
  std::vector<StateSpec> s = {{"dark1", {}, {}}, {"dark2", {}, {}}, {"open", {}, {}}};
  for (double p : {0.0, 45.0, 90.0, 135.0}) s.push_back({"pol" + std::to_string(int(p)), p, {}});
  for (double r : {0.0, 30.0, 60.0, 90.0, 120.0, 150.0}) s.push_back({"ret" + std::to_string(int(r)), 0.0, r});
  s.push_back({"open_end", {}, {}});
  return s;
}

/// A 4-state rotating-retarder modulator (retarder 127 deg at -51.7, -15.1, 15.1, 51.7 deg, analyser at 0).
inline ModulationMatrix TrueModulation(double flux = 40000.0) {
  Eigen::VectorXd angles(4);
  angles << -51.7, -15.1, 15.1, 51.7;
  return 2.0 * flux * RotatingRetarderModulation(angles, 127.0);
}

}  // namespace zeeline::polarimetry::testing
