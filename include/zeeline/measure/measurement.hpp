// zeeline/measure/measurement.hpp -- everything `zeeline measure` reports about one spectrum: the fitted
// Zeeman components of I (component_fit.hpp), the model-free Stokes characteristics
// (stokes_characteristics.hpp) and the field from each estimator of maps/ side by side, each with a
// verdict on its validity for this spectrum.
//
// Line window: when not given, the samples where the (5-sample boxcar smoothed) |Ic - I| exceeds
// max(2 % of its maximum, 4 sigma_I) fix the line extent e around the rest wavelength (Ic, sigma_I from the
// outer 10 % of the spectrum); the window half-width is 1.3 e, at least 3 samples and at most 90 % of the
// half range (the rule of maps/field_maps.cpp, plus the noise floor). The continuum (level and
// per-Stokes noise) comes from the samples outside the window (maps/pixel_spectrum.hpp).
// Emission or absorption: the larger of max(I - Ic) and max(Ic - I) in the window, unless forced.
//
// Estimates and verdicts: r, B* and the weak-field verdict come from the regime decision that `zeeline map`
// makes (maps/weak_field_regime.hpp: saturation-proof strength scale and Doppler width, chi2 shape test); the
// split_3gauss verdict from the checks the map's split estimator makes (CheckSplit, weak_field_regime.hpp).
//   wfa    weak_field.hpp: B_LOS (needs V), B_TRANS and azimuth (need Q, U and G != 0); valid when the regime
//          decision calls the spectrum weak (default weak_ratio 0.15, the same as map's).
//   cog    centre_of_gravity.hpp: B_LOS and V_LOS (needs V); valid at any field strength (Rees & Semel
//          1979), exact for a normal triplet and approximate for anomalous patterns (Uitenbroek 2003).
//   split  the Zeeman component fit: |B| and V_LOS; valid when the sigma groups are resolved; the verdict
//          states which of the resolution tests failed.
//   split_3gauss  full_splitting.hpp (the estimator `zeeline map --method split` uses): |B|, V_LOS; valid
//          when its sigma groups are resolved, the line is not saturated, |B| is not below the COG |B_LOS|,
//          and the regime decision does not call the field weak.
//   me     maps/me_inversion.hpp, a Milne-Eddington inversion of all Stokes parameters present, started
//          from the cheaper estimates: B, inclination, azimuth, B_LOS, B_TRANS, V_LOS; absorption lines with
//          a known pattern only; valid when it converged with reduced chi2 below the inverter's bad-fit
//          level. The ME model has no instrument profile: with --instrument-fwhm the verdict says so.
//
// Beyond the linear regime (atomic/paschen_back.hpp): when the line's term energies are known (mixed_line)
// and the regime is paschen-back, or auto with the field scale B* (or the pattern fit's |B|) above a tenth of
// the line's linear breakdown field, the pattern fit is repeated with the mixed-regime pattern evaluated at the
// fitted field until |B| changes by less than 1e-4 relative (at most 8 fits), split_3gauss solves its sigma
// separation on the mixed-regime table, ME inverts with the pattern at the split field, and the wfa and cog
// verdicts say that their g_eff-based answers are biased there. `regime` and `regime_note` say what was used.
#pragma once

#include <limits>
#include <optional>
#include <string>

#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/maps/map_method.hpp"
#include "zeeline/maps/weak_field_regime.hpp"
#include "zeeline/measure/component_fit.hpp"
#include "zeeline/measure/spectrum_reader.hpp"
#include "zeeline/measure/stokes_characteristics.hpp"

namespace zeeline {

enum class LineSense { kAuto, kAbsorption, kEmission };
/// "auto", "absorption", "emission".
std::string ToString(LineSense sense);

struct MeasureOptions {
  double rest_wavelength_nm = 0.0;      ///< required; same frame as the spectrum's wavelengths
  ZeemanPattern pattern;                ///< g_eff (required, != 0), G (0 = no transverse WFA), components
  int free_components = 0;              ///< 0 = fit the pattern; N = N free components
  double instrument_fwhm_nm = 0.0;      ///< Gaussian instrument FWHM
  std::optional<double> fixed_damping;  ///< unset = fitted
  LineSense sense = LineSense::kAuto;
  double window_halfwidth_nm = 0.0;     ///< 0 = from the line (see above)
  double noise_rel = 0.0;               ///< noise in units of the continuum; 0 = measured
  double weak_ratio = kDefaultWeakRatio;  ///< wfa valid below this r (maps/map_method.hpp, same as `map`)
  /// The wfa and me verdicts note undetected linear polarisation below this many sigma of B_T^2 (as `map`).
  double transverse_detection = kDefaultTransverseDetection;
  double resolution_ratio = 1.0;        ///< sigma separation / component FWHM for "resolved"
  int realisations = 200;               ///< noise realisations for the characteristics' errors
  std::uint32_t seed = 20240611;
  std::optional<PaschenBackLine> mixed_line;  ///< the line's LS terms with level energies (mixed regime possible)
  ZeemanRegime regime = ZeemanRegime::kAuto;  ///< zeeman: linear only; paschen-back: mixed (needs mixed_line)

  std::string Validate() const;
};

/// One method's answer. NaN members were not measured by this method.
struct MethodEstimate {
  std::string method;       ///< "wfa", "cog", "split", "split_3gauss", "me"
  bool available = false;   ///< the method ran and produced a number
  bool valid = false;       ///< the method's assumptions hold for this spectrum
  std::string verdict;      ///< one sentence: why valid / not valid / not available
  Measured blos_gauss, btrans_gauss, field_gauss, azimuth_deg, vlos_kms;
};

struct Measurement {
  double rest_wavelength_nm = 0.0;
  double g_eff = 0.0, G = 0.0;
  double window_halfwidth_nm = 0.0;
  ContinuumEstimate continuum;
  LineSense sense = LineSense::kAbsorption;  ///< detected (or forced) sense
  bool sense_detected = true;                ///< false when forced by the options
  double line_peak_sigma = 0.0;              ///< max |Ic - I| / sigma_I in the window
  double observed_width_nm = 0.0;            ///< w used in r (1/e half-width of one component)
  double splitting_ratio = 0.0;              ///< r
  double saturation = 0.0;                   ///< saturation index u of the line core (maps/line_core.hpp)
  double field_scale_gauss = 0.0;            ///< B*
  ComponentFitResult components;
  StokesCharacteristics characteristics;
  MethodEstimate wfa, cog, split, split_3gauss, me;
  std::string regime = "zeeman";  ///< pattern behind split / split_3gauss / me: "zeeman" or "paschen-back"
  double linear_breakdown_gauss = std::numeric_limits<double>::quiet_NaN();  ///< NaN unknown, inf never
  std::string regime_note;        ///< why that regime
  int mixed_fits = 0;             ///< pattern fits done with the mixed-regime pattern
};

/// Runs everything on one spectrum. Throws OptionError for invalid options and SpectrumError when the
/// spectrum cannot be measured at all (naming the file): no samples in the window, no continuum.
Measurement MeasureSpectrum(const Spectrum1D& spectrum, const MeasureOptions& options);

}  // namespace zeeline
