// zeeline/synth/me_parameters.hpp -- the free parameters of a Milne-Eddington atmosphere, and the
// buffers that hold synthetic Stokes spectra and their Jacobian.
//
// Units and senses follow docs/conventions.md:
//   field_gauss       |B| >= 0
//   inclination_deg   angle between B and the line of sight toward the observer: 0 = toward, 180 = away
//   azimuth_deg       counter-clockwise from +x toward +y (any value; the physics has period 180)
//   vlos_kms          line-of-sight velocity, > 0 = redshift (motion away from the observer)
//   doppler_width_nm  1/e half-width of the Gaussian, Delta lambda_D = (lambda0 / c) sqrt(2kT/m + xi^2)
//   damping           a, in Doppler widths
//   eta0              line-to-continuum absorption ratio: eta_I = 1 + eta0 H(a, v) at B = 0
//   s0, s1            source function S(tau) = s0 + s1 tau; continuum at mu is s0 + mu s1
//   fill              magnetic filling factor f: I = f I_mag + (1 - f) I_nonmag (same thermodynamics, B = 0)
// Derivatives in a StokesJacobian are with respect to these quantities in these units (per gauss, per
// degree, per km/s, per nm, ...).
#pragma once

#include <array>
#include <string>

#include <Eigen/Core>

namespace zeeline {

/// Index of a free parameter (order of StokesJacobian entries).
enum class MeParam : int {
  kField = 0,
  kInclination,
  kAzimuth,
  kVlos,
  kDopplerWidth,
  kDamping,
  kEta0,
  kS0,
  kS1,
  kFill,
};
inline constexpr int kMeParamCount = 10;

/// Name with unit, e.g. "field_gauss", "inclination_deg" (the member name of MeParameters).
const char* MeParamName(MeParam p);

struct MeParameters {
  double field_gauss = 0.0;
  double inclination_deg = 0.0;
  double azimuth_deg = 0.0;
  double vlos_kms = 0.0;
  double doppler_width_nm = 3.0e-3;
  double damping = 0.1;
  double eta0 = 5.0;
  double s0 = 0.3;
  double s1 = 0.7;
  double fill = 1.0;

  /// Empty when valid; otherwise names the field, its value and the allowed range.
  std::string Validate() const;
  double Get(MeParam p) const;
  void Set(MeParam p, double value);
};

/// Stokes spectra: one row per wavelength, columns I, Q, U, V (column-major, so each column is contiguous).
using StokesArray = Eigen::Array<double, Eigen::Dynamic, 4>;

/// d(I, Q, U, V)/d(parameter) for every free parameter, indexed by MeParam.
struct StokesJacobian {
  std::array<StokesArray, kMeParamCount> d;
  StokesArray& operator[](MeParam p) { return d[static_cast<int>(p)]; }
  const StokesArray& operator[](MeParam p) const { return d[static_cast<int>(p)]; }
  /// Resize every entry to n rows (no allocation when already that size).
  void Resize(Eigen::Index n) {
    for (auto& a : d)
      if (a.rows() != n) a.resize(n, 4);
  }
};

}  // namespace zeeline
