// zeeline/maps/centre_of_gravity.hpp -- the centre-of-gravity (COG) method for one pixel.
//
// Rees & Semel (1979, A&A 74, 1): the centroids of the absorption (or emission) in I + V and I - V,
//   l_pm = sum_i l_i (Ic - I_i -+ V_i) w_i / sum_i (Ic - I_i -+ V_i) w_i     (w_i: trapezoid weights)
// separate by 2 C g_eff B_LOS for any field strength (exactly for a normal triplet, to good accuracy for
// anomalous patterns; Uitenbroek 2003, ApJ 592, 1225), so
//   B_LOS = (l_+ - l_-) / (2 C g_eff),     v_LOS = c ((l_+ + l_-)/2 - l_0) / l_0,
// with C the Lorentz unit per gauss at l_0 (core/units.hpp). Signs follow docs/conventions.md: for a field
// toward the observer V > 0 in the blue wing of an absorption line, so I + V is absorbed on the red side
// and l_+ > l_-; the same formula holds for emission lines (numerator and denominator change sign together).
// Uncertainties: first-order propagation of independent noise sigma_I, sigma_V through both centroids
// (the I noise is common to l_+ and l_- and enters with its correlation).
#pragma once

#include <string>
#include <vector>

#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

struct CentreOfGravityOptions {
  double rest_wavelength_nm = 0.0;   ///< required; same frame as the data
  double g_eff = 0.0;                ///< required, non-zero
  double window_halfwidth_nm = 0.0;  ///< integration window around the rest wavelength; 0 = whole spectrum

  std::string Validate() const;
};

struct CentreOfGravityResult {
  double blos_gauss = 0.0, blos_err_gauss = 0.0;
  double vlos_kms = 0.0, vlos_err_kms = 0.0;
  double centroid_plus_nm = 0.0, centroid_minus_nm = 0.0;
  bool ok = false;  ///< false when the line has no net absorption/emission in the window
};

CentreOfGravityResult CentreOfGravityEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                              const CentreOfGravityOptions& options);

/// What the estimate takes from the wavelength grid alone (the window and the trapezoid weights), worked out
/// once for many pixels on one grid; one per thread.
/// CentreOfGravityEstimatePrepared(s, noise, options, work) is bit for bit CentreOfGravityEstimate(s, noise,
/// options) for a pixel on the grid of the last Prepare (same options); the latter prepares a workspace per call.
/// A pixel on another grid (other wavelength pointer or length) throws OptionError.
struct CentreOfGravityWorkspace {
  const double* wavelength_nm = nullptr;     ///< the prepared grid (checked against each pixel's)
  std::size_t n = 0;
  SampleRange window;
  std::vector<double> weight;                ///< trapezoid weight w_i per sample
  void Prepare(const double* wavelength_nm, std::size_t n, const CentreOfGravityOptions& options);
};
CentreOfGravityResult CentreOfGravityEstimatePrepared(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                                      const CentreOfGravityOptions& options,
                                                      CentreOfGravityWorkspace& work);

}  // namespace zeeline
