// zeeline/broadening/broadening_budget.hpp -- every broadening mechanism of one line, side by side, and the
// total as a Voigt FWHM.
//
// Mechanisms (each in its own header, with its formula and source): natural (natural_width.hpp), Doppler with
// microturbulence (doppler_width.hpp), pressure by the hard-sphere impact approximation (pressure_width.hpp),
// resonance/self broadening (resonance_width.hpp), hydrogen linear Stark, order of magnitude
// (stark_hydrogen.hpp), the Zeeman pattern's width (zeeman_width.hpp) and a Gaussian instrument profile.
// A mechanism enters only when its inputs are given (Doppler always: temperature and mass are required).
// Total: Gaussian FWHMs (Doppler, instrument, Zeeman as its equal-second-moment Gaussian) in quadrature,
// Lorentzian FWHMs (natural, pressure, resonance, Stark) summed, then the Voigt FWHM by Olivero & Longbothum
// (1977), checked against the numerical FWHM of the Voigt function (voigt_fwhm.hpp). The dominant mechanism is
// the one with the largest FWHM.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/broadening/line_width.hpp"

namespace zeeline {

struct BroadeningBudgetOptions {
  double wavelength_nm = 0.0;           ///< required, > 0
  double mass_u = 0.0;                  ///< radiator mass, required, > 0
  double temperature_K = 0.0;           ///< required, > 0
  double microturbulence_kms = 0.0;     ///< most-probable microturbulent speed, >= 0
  // pressure (all three or none)
  std::optional<double> pressure_Pa, perturber_mass_u, collision_diameter_nm;
  // natural
  std::optional<double> upper_decay_rate_per_s, lower_decay_rate_per_s;
  // resonance (density and f together; weights from the levels)
  std::optional<double> self_density_cm3, oscillator_strength;
  std::optional<double> g_lower_weight, g_upper_weight;  ///< 2J + 1
  // hydrogen Stark (density and levels together)
  std::optional<double> electron_density_cm3;
  int hydrogen_n_upper = 0, hydrogen_n_lower = 0;
  // instrument and field
  double instrument_fwhm_nm = 0.0;      ///< Gaussian, >= 0
  std::optional<double> field_gauss;
  std::optional<ZeemanPattern> pattern;  ///< required with field_gauss

  /// Empty when valid, else a message naming the option, its value and the allowed range.
  std::string Validate() const;
};

struct BroadeningBudget {
  double wavelength_nm = 0.0;
  std::vector<LineWidth> mechanisms;   ///< in the order natural, doppler, pressure, resonance, stark, zeeman, instrument
  double gaussian_fwhm_nm = 0.0;       ///< quadrature sum of the Gaussian parts
  double lorentzian_fwhm_nm = 0.0;     ///< sum of the Lorentzian parts
  double total_fwhm_nm = 0.0;          ///< Olivero & Longbothum
  double total_fwhm_numerical_nm = 0.0;  ///< numerical FWHM of the same Voigt
  double total_fwhm_kms = 0.0;
  double total_fwhm_hz = 0.0;
  std::string dominant;                ///< name of the widest mechanism
};

/// Throws OptionError when the options are invalid.
BroadeningBudget ComputeBroadeningBudget(const BroadeningBudgetOptions& options);

}  // namespace zeeline
