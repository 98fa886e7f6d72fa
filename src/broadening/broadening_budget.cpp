#include "zeeline/broadening/broadening_budget.hpp"

#include <cmath>
#include <sstream>

#include "zeeline/broadening/doppler_width.hpp"
#include "zeeline/broadening/natural_width.hpp"
#include "zeeline/broadening/pressure_width.hpp"
#include "zeeline/broadening/resonance_width.hpp"
#include "zeeline/broadening/stark_hydrogen.hpp"
#include "zeeline/broadening/voigt_fwhm.hpp"
#include "zeeline/broadening/zeeman_width.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

std::string Bad(const std::string& name, double value, const std::string& allowed) {
  std::ostringstream s;
  s << name << " = " << value << " is out of range: " << allowed;
  return s.str();
}

}  // namespace

std::string BroadeningBudgetOptions::Validate() const {
  if (!(wavelength_nm > 0.0)) return Bad("wavelength_nm", wavelength_nm, "must be > 0");
  if (!(mass_u > 0.0)) return Bad("mass_u", mass_u, "must be > 0");
  if (!(temperature_K > 0.0)) return Bad("temperature_K", temperature_K, "must be > 0");
  if (!(microturbulence_kms >= 0.0)) return Bad("microturbulence_kms", microturbulence_kms, "must be >= 0");
  const int pressure_given = pressure_Pa.has_value() + perturber_mass_u.has_value() + collision_diameter_nm.has_value();
  if (pressure_given != 0 && pressure_given != 3)
    return "pressure broadening needs all of pressure, perturber mass and collision diameter";
  if (pressure_Pa && !(*pressure_Pa >= 0.0)) return Bad("pressure_Pa", *pressure_Pa, "must be >= 0");
  if (perturber_mass_u && !(*perturber_mass_u > 0.0)) return Bad("perturber_mass_u", *perturber_mass_u, "must be > 0");
  if (collision_diameter_nm && !(*collision_diameter_nm > 0.0))
    return Bad("collision_diameter_nm", *collision_diameter_nm, "must be > 0");
  for (const auto& [name, rate] : {std::pair{"upper_decay_rate_per_s", upper_decay_rate_per_s},
                                   std::pair{"lower_decay_rate_per_s", lower_decay_rate_per_s}})
    if (rate && !(*rate >= 0.0)) return Bad(name, *rate, "must be >= 0");
  if (self_density_cm3.has_value() != oscillator_strength.has_value())
    return "resonance broadening needs both the self density and the oscillator strength";
  if (self_density_cm3) {
    if (!(*self_density_cm3 >= 0.0)) return Bad("self_density_cm3", *self_density_cm3, "must be >= 0");
    if (!(*oscillator_strength > 0.0)) return Bad("oscillator_strength", *oscillator_strength, "must be > 0");
    if (!g_lower_weight || !g_upper_weight)
      return "resonance broadening needs the statistical weights of both levels (give the lower and upper level)";
    if (!(*g_lower_weight >= 1.0) || !(*g_upper_weight >= 1.0)) return "statistical weights 2J+1 must be >= 1";
  }
  if (electron_density_cm3) {
    if (!(*electron_density_cm3 >= 0.0)) return Bad("electron_density_cm3", *electron_density_cm3, "must be >= 0");
    if (hydrogen_n_lower < 1 || hydrogen_n_upper <= hydrogen_n_lower)
      return "hydrogen Stark broadening needs principal quantum numbers n_upper > n_lower >= 1 (e.g. 3-2)";
  }
  if (!(instrument_fwhm_nm >= 0.0)) return Bad("instrument_fwhm_nm", instrument_fwhm_nm, "must be >= 0");
  if (field_gauss && !pattern) return "the Zeeman width needs the line's levels (lower and upper) with the field";
  if (field_gauss && !std::isfinite(*field_gauss)) return "field_gauss must be finite";
  return "";
}

BroadeningBudget ComputeBroadeningBudget(const BroadeningBudgetOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  BroadeningBudget b;
  const double l0 = o.wavelength_nm;
  b.wavelength_nm = l0;
  if (o.upper_decay_rate_per_s || o.lower_decay_rate_per_s)
    b.mechanisms.push_back(NaturalWidth(l0, o.upper_decay_rate_per_s.value_or(0.0), o.lower_decay_rate_per_s.value_or(0.0)));
  b.mechanisms.push_back(DopplerBroadening(l0, o.temperature_K, o.mass_u, o.microturbulence_kms));
  if (o.pressure_Pa)
    b.mechanisms.push_back(
        PressureBroadening(l0, *o.pressure_Pa, o.temperature_K, o.mass_u, *o.perturber_mass_u, *o.collision_diameter_nm));
  if (o.self_density_cm3)
    b.mechanisms.push_back(
        ResonanceBroadening(l0, *o.self_density_cm3, *o.oscillator_strength, *o.g_lower_weight, *o.g_upper_weight));
  if (o.electron_density_cm3)
    b.mechanisms.push_back(StarkBroadening(l0, *o.electron_density_cm3, o.hydrogen_n_upper, o.hydrogen_n_lower));
  if (o.field_gauss) b.mechanisms.push_back(ZeemanBroadening(l0, *o.pattern, *o.field_gauss));
  if (o.instrument_fwhm_nm > 0.0) {
    LineWidth w = MakeLineWidth("instrument", ProfileKind::kGaussian, o.instrument_fwhm_nm, l0);
    w.formula = "given Gaussian instrument FWHM";
    w.source = "the spectrograph";
    b.mechanisms.push_back(w);
  }
  double g2 = 0.0, lsum = 0.0, widest = -1.0;
  for (const LineWidth& w : b.mechanisms) {
    if (w.profile == ProfileKind::kLorentzian)
      lsum += w.fwhm_nm;
    else
      g2 += w.fwhm_nm * w.fwhm_nm;
    if (w.fwhm_nm > widest) {
      widest = w.fwhm_nm;
      b.dominant = w.name;
    }
  }
  b.gaussian_fwhm_nm = std::sqrt(g2);
  b.lorentzian_fwhm_nm = lsum;
  b.total_fwhm_nm = VoigtFwhmOliveroLongbothum(b.gaussian_fwhm_nm, b.lorentzian_fwhm_nm);
  b.total_fwhm_numerical_nm = VoigtFwhmNumerical(b.gaussian_fwhm_nm, b.lorentzian_fwhm_nm);
  const LineWidth total = MakeLineWidth("total", ProfileKind::kGaussian, b.total_fwhm_nm, l0);
  b.total_fwhm_kms = total.fwhm_kms;
  b.total_fwhm_hz = total.fwhm_hz;
  return b;
}

}  // namespace zeeline
