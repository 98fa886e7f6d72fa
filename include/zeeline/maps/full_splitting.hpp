// zeeline/maps/full_splitting.hpp -- field strength from resolved Zeeman splitting (one pixel).
//
// When the splitting exceeds the line width the sigma groups stand apart in Stokes I and their separation
// measures |B| directly, whatever the inclination: the strength-weighted centroid of each sigma group lies
// at +-g_eff Delta lambda_B from the line centre (sum rule, atomic/zeeman_pattern.hpp), so
//   |B| = s / (g_eff C),   s = half the distance between the fitted sigma_b and sigma_r centroids,
// with C the Lorentz unit per gauss at the rest wavelength (core/units.hpp).
// Fit: I(l) = c0 + a_b g(l - l_c + s) + a_pi g(l - l_c) + a_r g(l - l_c - s), g(x) = exp(-x^2 / w^2),
// i.e. one Gaussian per group (blue sigma, pi, red sigma) with a common 1/e half-width w; amplitudes are
// signed so absorption and emission lines both work. Start: a grid over (s, w) with the amplitudes solved
// linearly (variable projection), then Levenberg–Marquardt (Marquardt 1963) on all seven parameters with
// the analytic Jacobian; uncertainties from the covariance sigma_I^2 (J^T J)^-1 at the solution.
// Peak positions therefore come from a profile fit, not from the brightest sample.
// Validity: the components are called resolved when s >= resolution_ratio * w (default 1: the splitting
// exceeds the component's Doppler half-width), s is 3 sigma significant, and the fitted profile shows a
// separate dip (peak for emission) within w/2 of each sigma position -- the rule of the component fit of
// `measure` (measure/component_fit.hpp), which keeps a saturated flat core from being called resolved;
// otherwise the estimate is reported with resolved = false.
// Beyond the linear regime (incomplete Paschen–Back, atomic/paschen_back.hpp): with `mixed_regime` set and the
// linear estimate above `mixed_from_gauss` (a tenth of the line's breakdown field, or 0 to force it), |B| solves
//   s = g_split(B) C B,   g_split(B) = half the sigma-centroid separation of the mixed pattern in Lorentz units
// on the table of the line (SigmaSplittingTable), and its sigma follows from the local slope dB/ds.
#pragma once

#include <memory>
#include <string>

#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

struct SplittingOptions {
  double rest_wavelength_nm = 0.0;   ///< required; same frame as the data
  double g_eff = 0.0;                ///< required, non-zero
  double window_halfwidth_nm = 0.0;  ///< fit window around the rest wavelength; 0 = whole spectrum
  double resolution_ratio = 1.0;     ///< s / w above which the sigma groups count as resolved
  int max_iterations = 60;           ///< Levenberg–Marquardt iterations
  std::shared_ptr<const SigmaSplittingTable> mixed_regime;  ///< unset: linear pattern (|B| = s / (g_eff C))
  double mixed_from_gauss = 0.0;     ///< use the table when the linear |B| exceeds this

  std::string Validate() const;
};

struct SplittingResult {
  double field_gauss = 0.0, field_err_gauss = 0.0;
  double half_separation_nm = 0.0, half_separation_err_nm = 0.0;  ///< s and its sigma
  double width_nm = 0.0;              ///< fitted 1/e half-width of one component
  double centre_nm = 0.0;             ///< fitted line centre l_c
  double vlos_kms = 0.0, vlos_err_kms = 0.0;
  double amplitude_blue = 0.0, amplitude_pi = 0.0, amplitude_red = 0.0;
  double chi2_reduced = 0.0;
  int iterations = 0;
  bool resolved = false;
  bool mixed_regime = false;          ///< |B| from the mixed-regime (Paschen–Back) table
  bool mixed_monotonic = true;        ///< false: s(B) not monotonic below the solution (smallest B reported)
  bool ok = false;
};

SplittingResult FullSplittingEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                      const SplittingOptions& options);

}  // namespace zeeline
