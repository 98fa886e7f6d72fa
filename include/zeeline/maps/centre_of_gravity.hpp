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
// Window: centre +- window_halfwidth_nm, each sample weighted by the part of its cell (its trapezoid weight)
// inside, so the window's edges are exact, not whole samples. It starts on the rest wavelength. A window that
// stays there cuts a shifted line unevenly and pulls the centroids toward its centre, so it then follows the
// line: re-centred twice on (l_+ + l_-)/2, and narrowed where it would reach past an end of the spectrum, so
// that it stays symmetric about the line. It moves only when the first window's sums stand 5 times above their
// noise (without a line the centroids of noise land anywhere). Measured in tests/maps/centre_of_gravity_test.cpp.
// Uncertainties: first-order propagation of independent noise sigma_I, sigma_V through both centroids
// (the I noise is common to l_+ and l_- and enters with its correlation), and for B_LOS a model term,
// model_error x |B_LOS| in quadrature. The centroids' separation is exact for a longitudinal field (within 1 %
// on saturated Milne-Eddington lines), but not for an inclined one on a saturated line: linear polarisation
// and magneto-optical effects enter I.
//   - At 45 deg and eta0 = 9 the centre of gravity reads 8-12 % low at kilogauss fields
//     (tests/maps/cog_me_test.cpp).
//   - On 12 000 mixed pixels (eta0 3-20, 10 G - 3 kG, all inclinations) it reads 8-9 % low at 0.3-2 kG (median;
//     5-95 %: -17 to +4 %), and the noise-only B_LOS pull sd there was 9-16.
// Without Q and U the inclination is unknown, so the default 0.10 covers that range. The term applies to
// absorption lines only: an optically thin emission line (a lab lamp) has no such error, and gets none.
#pragma once

#include <cmath>
#include <string>
#include <vector>

#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

struct CentreOfGravityOptions {
  double rest_wavelength_nm = 0.0;   ///< required; same frame as the data
  double g_eff = 0.0;                ///< required, non-zero
  double window_halfwidth_nm = 0.0;  ///< half-width of the integration window (module comment); 0 = whole spectrum
  /// Model error of B_LOS as a fraction of |B_LOS|, added in quadrature to its noise sigma (module comment);
  /// in [0, 0.3], 0 = noise only.
  double model_error = 0.10;

  std::string Validate() const;
};

struct CentreOfGravityResult {
  double blos_gauss = 0.0, blos_err_gauss = 0.0;  ///< the error with the model term
  double blos_noise_err_gauss = 0.0;              ///< the noise part alone (for detection tests)
  double vlos_kms = 0.0, vlos_err_kms = 0.0;
  double centroid_plus_nm = 0.0, centroid_minus_nm = 0.0;
  bool ok = false;  ///< false when the line has no net absorption/emission in the window
};

CentreOfGravityResult CentreOfGravityEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                              const CentreOfGravityOptions& options);

struct CentreOfGravityWorkspace;

/// An integration window [lo_nm, hi_nm] and the samples whose cells (workspace) it overlaps, [begin, end).
struct CentreOfGravityWindow {
  double lo_nm = -HUGE_VAL, hi_nm = HUGE_VAL;  ///< unbounded: the whole spectrum
  std::size_t begin = 0, end = 0;
  double first_weight_nm = 0.0, last_weight_nm = 0.0;  ///< the parts of the end samples' cells inside
  /// centre_nm +- halfwidth_nm (the whole spectrum when halfwidth_nm <= 0). With `near` (a window close to the
  /// new one, e.g. the one it moves from), the ends are found by stepping from near's: a few comparisons
  /// instead of two binary searches, the same window.
  static CentreOfGravityWindow Around(const CentreOfGravityWorkspace& work, double centre_nm, double halfwidth_nm,
                                      const CentreOfGravityWindow* near = nullptr);
};

/// What the estimate takes from the wavelength grid alone (each sample's cell, whose width is its trapezoid
/// weight, and the first window, on the rest wavelength), worked out once for many pixels on one grid; one per
/// thread. CentreOfGravityEstimatePrepared(s, noise, options, work) is bit for bit CentreOfGravityEstimate(s,
/// noise, options) for a pixel on the grid of the last Prepare (same options); the latter prepares a workspace
/// per call. A pixel on another grid (other wavelength pointer or length) throws OptionError.
struct CentreOfGravityWorkspace {
  const double* wavelength_nm = nullptr;     ///< the prepared grid (checked against each pixel's)
  std::size_t n = 0;
  std::vector<double> cell_lo_nm, cell_hi_nm;  ///< sample i stands for [cell_lo_nm[i], cell_hi_nm[i]]
  std::vector<double> cell_width_nm;          ///< cell_hi_nm - cell_lo_nm: the trapezoid weight
  CentreOfGravityWindow first;               ///< on the rest wavelength
  double first_weight_rms_nm = 0.0;          ///< sqrt(sum of the first window's squared weights)
  void Prepare(const double* wavelength_nm, std::size_t n, const CentreOfGravityOptions& options);
};
CentreOfGravityResult CentreOfGravityEstimatePrepared(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                                      const CentreOfGravityOptions& options,
                                                      CentreOfGravityWorkspace& work);

}  // namespace zeeline
