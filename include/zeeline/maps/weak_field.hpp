// zeeline/maps/weak_field.hpp -- the weak-field approximation (WFA) for one pixel.
//
// Valid while the Zeeman splitting is small against the line width, g_eff Delta lambda_B << Delta lambda_D
// (Landi Degl'Innocenti & Landolfi 2004, hereafter LL04, sect. 9.6). With C = Delta lambda_B / B (the
// Lorentz unit per gauss at the rest wavelength, core/units.hpp) and the signs of docs/conventions.md:
//   V(l)  = -C g_eff B_LOS dI/dl                                         (LL04 eq. 9.77)
//   Q(l)  = -(1/4) C^2 G B_T^2 cos 2chi d2I/dl2,  U likewise with sin 2chi   (LL04 eq. 9.83; line core)
//   Q(l)  = +(3/4) C^2 G B_T^2 cos 2chi (1/(l - l_c)) dI/dl                  (LL04 eq. 9.85; line wings)
// B_LOS is the linear least-squares solution of the first relation over the fit window,
//   B_LOS = -sum(V D) / (C g_eff sum(D^2)),  D = dI/dl,
//   var(B_LOS) = (sigma_V^2 + (C g_eff B_LOS)^2 sigma_D^2) / (C g_eff)^2 / sum(D^2)
// where sigma_D is the noise of the derivative (sigma_I times the stencil gain, spectral_derivative.hpp).
// The transverse relations are fitted the same way for a_Q = B_T^2 cos 2chi and a_U = B_T^2 sin 2chi:
//   B_T = (a_Q^2 + a_U^2)^(1/4),  chi = atan2(a_U, a_Q) / 2 in [0, 180) deg,
//   sigma(B_T) = sigma(B_T^2) / (2 B_T) by first-order propagation, which is
// honest only when B_T^2 is well above sigma_a (the noise bias of B_T is documented in docs/methods.md).
//
// Core and wings for B_T: the second-derivative relation follows from a Taylor expansion of the
// absorption profile and holds for saturated lines only in the line core; in the wings of a line formed
// with damping wings the profile goes as (l - l_c)^-2 and the relation becomes the wing form above
// (LL04 sect. 9.6). TransverseRegion::kCore fits |l - l_c| <= core_halfwidth_nm with the second-derivative
// form, kWings fits |l - l_c| >= wing_start_nm with the wing form, kCoreAndWings stacks both into one
// least-squares problem, and kWholeLine applies the second-derivative form everywhere (a naive fit whose
// bias for saturated lines the tests show). l_c is the observed line centre (centroid of the absorption in
// the window), so line-of-sight velocities do not bias the wing form.
#pragma once

#include <string>
#include <vector>

#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {

enum class TransverseRegion { kCore, kWings, kCoreAndWings, kWholeLine };

std::string ToString(TransverseRegion r);
/// "core", "wings", "core+wings", "whole"; throws OptionError otherwise.
TransverseRegion TransverseRegionFromString(const std::string& text);

struct WeakFieldOptions {
  double rest_wavelength_nm = 0.0;    ///< required; same frame as the data
  double g_eff = 0.0;                 ///< effective Landé factor (required, non-zero)
  double G = 0.0;                     ///< second-order transverse factor (needed for B_T)
  double window_halfwidth_nm = 0.0;   ///< fit window around the rest wavelength; 0 = whole spectrum
  TransverseRegion transverse = TransverseRegion::kCore;
  double core_halfwidth_nm = 0.0;     ///< kCore/kCoreAndWings: |l - l_c| <= this; 0 = whole window
  double wing_start_nm = 0.0;         ///< kWings/kCoreAndWings: |l - l_c| >= this (required there)

  std::string Validate() const;
};

struct WeakFieldResult {
  double blos_gauss = 0.0, blos_err_gauss = 0.0;
  double btrans_gauss = 0.0, btrans_err_gauss = 0.0;
  double azimuth_deg = 0.0, azimuth_err_deg = 0.0;
  double line_centre_nm = 0.0;  ///< observed centroid used for the core/wing split
  bool has_blos = false, has_btrans = false;
  bool ok = false;              ///< false: too few samples or no line signal in the window
};

/// Scratch buffers reused across pixels (one per thread); no allocation per pixel after the first.
struct WeakFieldWorkspace {
  std::vector<double> d1, d2;
};

/// Weak-field estimate for one pixel; `noise` gives the per-Stokes noise (absolute units).
WeakFieldResult WeakFieldEstimate(const PixelSpectrum& s, const ContinuumEstimate& noise,
                                  const WeakFieldOptions& options, WeakFieldWorkspace& work);

}  // namespace zeeline
