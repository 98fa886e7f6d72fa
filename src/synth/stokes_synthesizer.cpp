#include "zeeline/synth/stokes_synthesizer.hpp"

#include <cmath>
#include <sstream>

#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

InstrumentProfileOptions CombinedKernel(const std::vector<MeLine>& lines, const SynthesisOptions& o) {
  InstrumentProfileOptions k = o.instrument;
  const double mac = lines.empty() ? 0.0 : MacroturbulenceFwhm_nm(lines.front().wavelength_nm, o.macroturbulence_kms);
  k.gaussian_fwhm_nm = std::sqrt(mac * mac + k.gaussian_fwhm_nm * k.gaussian_fwhm_nm);
  return k;
}

double GridStep(const Eigen::ArrayXd& w, bool require_uniform) {  // mean step; checks uniformity if asked
  if (w.size() < 2) throw OptionError("wavelength grid has " + std::to_string(w.size()) + " points (need >= 2)");
  const double step = (w[w.size() - 1] - w[0]) / static_cast<double>(w.size() - 1);
  if (!require_uniform) return step;
  if (!(step > 0.0)) throw OptionError("wavelength grid must be ascending to apply a convolution");
  for (Eigen::Index i = 1; i < w.size(); ++i) {
    const double d = w[i] - w[i - 1];
    if (std::fabs(d - step) > 1e-6 * step) {
      std::ostringstream msg;
      msg << "wavelength grid is not uniform at index " << i << " (step " << d << " nm, mean " << step
          << " nm); a convolution needs a uniform grid";
      throw OptionError(msg.str());
    }
  }
  return step;
}

}  // namespace

std::string SynthesisOptions::Validate() const {
  std::string problem = me.Validate();
  if (!problem.empty()) return problem;
  if (!std::isfinite(macroturbulence_kms) || macroturbulence_kms < 0.0 || macroturbulence_kms > 1000.0) {
    std::ostringstream msg;
    msg << "macroturbulence_kms = " << macroturbulence_kms << " is outside the allowed range [0, 1000] km/s";
    return msg.str();
  }
  return instrument.Validate();
}

StokesSynthesizer::StokesSynthesizer(const std::vector<MeLine>& lines, const Eigen::ArrayXd& wavelength_nm,
                                     const SynthesisOptions& options)
    : model_(lines, options.me),
      wavelength_nm_(wavelength_nm),
      gaussian_fwhm_nm_(CombinedKernel(lines, options).gaussian_fwhm_nm),
      // The step matters only for a real kernel; then the grid must be ascending and uniform (throws).
      convolver_(static_cast<int>(wavelength_nm.size()),
                 CombinedKernel(lines, options).IsIdentity() ? 1.0 : GridStep(wavelength_nm, true),
                 CombinedKernel(lines, options)) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("synthesis options: " + problem);
}

void StokesSynthesizer::Synthesize(const MeParameters& p, StokesArray& stokes, StokesJacobian* jacobian) {
  model_.Synthesize(wavelength_nm_, p, stokes, jacobian);
  if (convolver_.is_identity()) return;
  convolver_.Apply(stokes);
  if (jacobian) convolver_.Apply(*jacobian);
}

Eigen::ArrayXd UniformWavelengthGrid(double centre_nm, double range_nm, int points) {
  if (points < 2) throw OptionError("points = " + std::to_string(points) + " is outside the allowed range [2, 1e7]");
  if (!std::isfinite(range_nm) || range_nm <= 0.0)
    throw OptionError("range_nm = " + std::to_string(range_nm) + " must be positive");
  return Eigen::ArrayXd::LinSpaced(points, centre_nm - 0.5 * range_nm, centre_nm + 0.5 * range_nm);
}

}  // namespace zeeline
