#include "zeeline/broadening/line_set_model.hpp"

#include <algorithm>
#include <cmath>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/synth/voigt.hpp"

namespace zeeline {

void LineSetProfiles(const std::vector<ModelLine>& lines, const LineSetShape& shape, double instrument_fwhm_nm,
                     const std::vector<double>& wavelength_nm, std::vector<std::vector<double>>& profile_I,
                     std::vector<std::vector<double>>& profile_V, double reach_nm) {
  const double c_kms = constants::kSpeedOfLight_m_s * 1e-3;
  const double w_instr = instrument_fwhm_nm / (2.0 * std::sqrt(std::log(2.0)));
  const double g = shape.inclination_deg * constants::kPi / 180.0;
  const double cg = std::cos(g), sg2 = std::sin(g) * std::sin(g);
  const double weight_I[3] = {(1.0 + cg * cg) / 4.0, sg2 / 2.0, (1.0 + cg * cg) / 4.0};  // q = -1, 0, +1
  const double weight_V[3] = {-cg / 2.0, 0.0, cg / 2.0};
  const std::size_t n = wavelength_nm.size();
  profile_I.resize(lines.size());
  profile_V.resize(lines.size());
  for (std::size_t i = 0; i < lines.size(); ++i) {
    const ModelLine& line = lines[i];
    std::vector<double>& pi = profile_I[i];
    std::vector<double>& pv = profile_V[i];
    pi.assign(n, 0.0);
    pv.assign(n, 0.0);
    const double doppler_nm = line.rest_wavelength_nm * shape.speed_kms / c_kms;
    const double w = std::sqrt(doppler_nm * doppler_nm + w_instr * w_instr);
    const double a = shape.lorentz_hwhm_nm / w;
    const double norm = 1.0 / (std::sqrt(constants::kPi) * w);
    const double centre = line.rest_wavelength_nm * (1.0 + shape.vlos_kms / c_kms);
    const double unit_nm = LorentzUnit_nm(line.rest_wavelength_nm, shape.field_gauss);
    std::size_t first = 0, last = n;  // samples [first, last) within reach (the grid is ascending)
    if (reach_nm > 0.0) {
      first = static_cast<std::size_t>(std::lower_bound(wavelength_nm.begin(), wavelength_nm.end(),
                                                        line.rest_wavelength_nm - reach_nm) - wavelength_nm.begin());
      last = static_cast<std::size_t>(std::upper_bound(wavelength_nm.begin(), wavelength_nm.end(),
                                                       line.rest_wavelength_nm + reach_nm) - wavelength_nm.begin());
    }
    for (const ZeemanComponent& k : line.pattern.components) {
      const double wi = k.strength * weight_I[k.q + 1] * norm;
      const double wv = k.strength * weight_V[k.q + 1] * norm;
      if (wi == 0.0 && wv == 0.0) continue;
      const double pos = centre + k.shift_lorentz * unit_nm;
      for (std::size_t s = first; s < last; ++s) {
        const double h = FaddeevaFast(a, (wavelength_nm[s] - pos) / w).w_re;
        pi[s] += wi * h;
        pv[s] += wv * h;
      }
    }
  }
}

}  // namespace zeeline
