// zeeline/measure/stokes_characteristics.hpp -- model-free characteristics of the Stokes profiles of one
// line: V lobe amplitudes and areas, their asymmetries, the V zero crossing, net circular and total
// linear polarisation.
//
// All sums run over the line window |l - l0| <= window (trapezoid rule, dl the sample spacing);
// Ic is the continuum level and I_line(l) = |Ic - I(l)| the line's absorption (or emission) depth.
//   blue / red lobe: the extremum of V of largest |V| on each side of the zero crossing (the global
//     maximum and minimum of V in the window; the bluer of the two is the blue lobe), refined by a
//     parabola through the three samples around it: amplitudes a_b, a_r (signed, data units) at l_b, l_r.
//   zero crossing l_zc: the sign change of V between l_b and l_r closest to their midpoint, refined by
//     a straight-line fit to the two samples on each side; v_zc = c (l_zc - l0) / l0 (> 0 redshift).
//   areas A_b = Int_{window start}^{l_zc} V dl, A_r = Int_{l_zc}^{window end} V dl (signed, data units x nm).
//   amplitude asymmetry  da = (|a_b| - |a_r|) / (|a_b| + |a_r|)
//   area asymmetry       dA = s_b (A_b + A_r) / (|A_b| + |A_r|),  s_b = sign(a_b)
//     (Solanki & Stenflo 1984, A&A 140, 185; Grossmann-Doerth, Schuessler & Solanki 1989, A&A 221, 338,
//     from memory; the factor s_b makes both polarity-independent, so for a blue lobe of positive sign they
//     are the textbook (a_b - |a_r|)/(a_b + |a_r|) and (A_b + A_r)/(|A_b| + |A_r|)). An antisymmetric V,
//     as any single Milne-Eddington component or any lateral mixture of them gives, has dA = 0; a lateral
//     mixture of components at different velocities gives da != 0 but dA = 0; dA != 0 needs gradients
//     along the line of sight (Solanki & Pahlke 1988, from memory).
//   V peak separation  l_r - l_b (nm).
//   net circular polarisation  NCP = Int V dl / Int |Ic - I| dl  (dimensionless, normalised by the line's
//     equivalent width so that it also works for emission lines on a dark background); and per continuum
//     NCP_c = Int V dl / Ic (nm) when Ic > 0.
//   total linear polarisation  L_c = Int sqrt(Q^2 + U^2) dl / Ic (nm, when Ic > 0) and
//     L = Int sqrt(Q^2 + U^2) dl / Int |Ic - I| dl (dimensionless). sqrt(Q^2 + U^2) is biased upward by
//     noise (the error bar includes the spread, not the bias).
//   linear polarisation angle  theta = (1/2) atan2(Int U dl, Int Q dl) in [0, 180) deg, counter-clockwise
//     from +x (docs/conventions.md). For an optically thin line the integrals of Q and U vanish (the pi
//     and sigma groups carry equal and opposite linear polarisation), so this angle is defined only for
//     saturated lines; theta_core = (1/2) atan2(U, Q) summed over the line core (|l - l_line| <= half the
//     FWHM of the strongest peak of |Ic - I|, l_line the centroid of |Ic - I|), the polarisation angle of
//     the pi group for a symmetric pattern, is given as well (perpendicular to the field azimuth in
//     absorption, parallel to it in emission).
// Uncertainties: from `realisations` noise realisations: Gaussian noise of the measured per-Stokes sigma
// is added to the observed spectrum and every quantity recomputed; the error is the standard deviation of
// the results (a Monte Carlo estimate that follows the nonlinear definitions; fixed seed, reproducible).
#pragma once

#include <cstdint>
#include <limits>
#include <string>

#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

/// A measured value and its 1-sigma uncertainty (NaN when undefined).
struct Measured {
  double value = std::numeric_limits<double>::quiet_NaN();
  double err = std::numeric_limits<double>::quiet_NaN();
  bool defined() const { return value == value; }
};

struct CharacteristicsOptions {
  double rest_wavelength_nm = 0.0;  ///< required
  double window_halfwidth_nm = 0.0; ///< 0 = whole spectrum
  int realisations = 200;           ///< noise realisations for the errors (0 = no errors)
  std::uint32_t seed = 20240611;    ///< random seed of the realisations

  std::string Validate() const;
};

struct StokesCharacteristics {
  bool has_v = false, has_qu = false;
  double continuum = 0.0;          ///< Ic used
  double v_signal_sigma = 0.0;     ///< max |V| / sigma_V in the window (V detection strength)
  Measured line_area_nm;           ///< Int (I - Ic) dl (negative for absorption)
  Measured line_centre_nm;         ///< centroid of |Ic - I|
  Measured v_blue_amplitude, v_red_amplitude;  ///< signed, data units
  Measured v_blue_position_nm, v_red_position_nm;
  Measured v_blue_area_nm, v_red_area_nm;      ///< signed, data units x nm
  Measured amplitude_asymmetry, area_asymmetry;
  Measured zero_crossing_nm, zero_crossing_vlos_kms;
  Measured v_peak_separation_nm;
  Measured net_circular_polarisation;          ///< Int V / Int |Ic - I|
  Measured net_circular_polarisation_per_continuum_nm;  ///< Int V / Ic
  Measured linear_polarisation;                ///< Int sqrt(Q^2+U^2) / Int |Ic - I|
  Measured linear_polarisation_per_continuum_nm;  ///< Int sqrt(Q^2+U^2) / Ic
  Measured linear_polarisation_angle_deg;      ///< (1/2) atan2(Int U, Int Q)
  Measured linear_polarisation_angle_core_deg; ///< (1/2) atan2(sum U, sum Q) over the line core
};

/// Characteristics of `s` with the continuum and noise of `c` (maps/pixel_spectrum.hpp).
StokesCharacteristics MeasureStokesCharacteristics(const PixelSpectrum& s, const ContinuumEstimate& c,
                                                   const CharacteristicsOptions& options);

}  // namespace zeeline
