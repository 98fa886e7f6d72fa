#include "zeeline/measure/measurement.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <optional>
#include <vector>

#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/maps/field_vector.hpp"
#include "zeeline/maps/weak_field_regime.hpp"
#include "zeeline/maps/centre_of_gravity.hpp"
#include "zeeline/maps/full_splitting.hpp"
#include "zeeline/maps/me_inversion.hpp"
#include "zeeline/maps/weak_field.hpp"

namespace zeeline {

std::string ToString(LineSense sense) {
  switch (sense) {
    case LineSense::kAuto: return "auto";
    case LineSense::kAbsorption: return "absorption";
    case LineSense::kEmission: return "emission";
  }
  return "auto";
}

std::string MeasureOptions::Validate() const {
  auto num = [](double v) { return std::to_string(v); };
  if (!(rest_wavelength_nm > 0.0)) return "rest_wavelength_nm = " + num(rest_wavelength_nm) + ": must be > 0";
  if (!(pattern.g_eff != 0.0) || !std::isfinite(pattern.g_eff))
    return "g_eff = " + num(pattern.g_eff) + ": must be non-zero (a line with g_eff = 0 does not split)";
  if (free_components < 0 || free_components > 12)
    return "free_components = " + std::to_string(free_components) + ": expected 0 to 12";
  if (free_components == 0 && pattern.components.empty())
    return "pattern: no Zeeman components (give the line's levels, or free components)";
  if (!(instrument_fwhm_nm >= 0.0)) return "instrument_fwhm_nm = " + num(instrument_fwhm_nm) + ": must be >= 0";
  if (fixed_damping && !(*fixed_damping >= 0.0 && *fixed_damping <= 20.0))
    return "fixed_damping = " + num(*fixed_damping) + ": expected 0 to 20";
  if (!(window_halfwidth_nm >= 0.0)) return "window_halfwidth_nm = " + num(window_halfwidth_nm) + ": must be >= 0";
  if (!(noise_rel >= 0.0)) return "noise_rel = " + num(noise_rel) + ": must be >= 0";
  if (!(weak_ratio > 0.0)) return "weak_ratio = " + num(weak_ratio) + ": must be > 0";
  if (!(transverse_detection >= 0.0))
    return "transverse_detection = " + num(transverse_detection) + ": must be >= 0";
  if (!(resolution_ratio > 0.0)) return "resolution_ratio = " + num(resolution_ratio) + ": must be > 0";
  if (realisations < 0 || realisations > 100000)
    return "realisations = " + std::to_string(realisations) + ": expected 0 to 100000";
  if (regime == ZeemanRegime::kPaschenBack && !mixed_line)
    return "regime = paschen-back: needs the term energies of the line (mixed_line)";
  if (regime == ZeemanRegime::kPaschenBack && free_components > 0)
    return "regime = paschen-back: needs the Zeeman pattern, not free components";
  return {};
}

namespace {

const double kNaN = std::numeric_limits<double>::quiet_NaN();
const char* const kTransverseNotDetected =
    "; linear polarisation not detected (B_T^2 below the detection threshold of `map`'s LOW_TRANSVERSE): B_T, |B|, "
    "inclination and azimuth are noise-dominated";

Measured M(double v, double e) {
  Measured m;
  m.value = v;
  m.err = e;
  return m;
}

std::string Fmt(const char* format, double a, double b = 0.0, double c = 0.0) {
  char buf[256];
  std::snprintf(buf, sizeof buf, format, a, b, c);
  return buf;
}

// Noise of f from second differences of the given samples (maps/pixel_spectrum.hpp formula).
double SecondDifferenceNoise(const std::vector<double>& f) {
  if (f.size() < 3) return 0.0;
  double s = 0.0;
  for (std::size_t i = 1; i + 1 < f.size(); ++i) s += std::pow(f[i - 1] - 2.0 * f[i] + f[i + 1], 2);
  return std::sqrt(s / (6.0 * static_cast<double>(f.size() - 2)));
}

double AutoWindow(const Spectrum1D& s, double l0) {
  const std::size_t n = s.size();
  const std::size_t edge = std::max<std::size_t>(2, n / 10);
  std::vector<double> lo(s.I.begin(), s.I.begin() + static_cast<long>(edge));
  std::vector<double> hi(s.I.end() - static_cast<long>(edge), s.I.end());
  double ic = 0.0;
  for (std::size_t i = 0; i < edge; ++i) ic += lo[i] + hi[i];
  ic /= static_cast<double>(2 * edge);
  const double sigma = 0.5 * (SecondDifferenceNoise(lo) + SecondDifferenceNoise(hi));
  std::vector<double> d(n);
  for (std::size_t i = 0; i < n; ++i) {
    const std::size_t a = i >= 2 ? i - 2 : 0, b = std::min(n - 1, i + 2);
    double m = 0.0;
    for (std::size_t k = a; k <= b; ++k) m += s.I[k];
    d[i] = std::fabs(m / static_cast<double>(b - a + 1) - ic);
  }
  const double dmax = *std::max_element(d.begin(), d.end());
  const double threshold = std::max(0.02 * dmax, 4.0 * sigma / std::sqrt(5.0));
  double extent = 0.0;
  for (std::size_t i = 0; i < n; ++i)
    if (d[i] > threshold) extent = std::max(extent, std::fabs(s.wavelength_nm[i] - l0));
  const double step = (s.wavelength_nm.back() - s.wavelength_nm.front()) / static_cast<double>(n - 1);
  const double half_range = std::min(l0 - s.wavelength_nm.front(), s.wavelength_nm.back() - l0);
  return std::min(std::max(1.3 * extent, 3.0 * step), 0.9 * std::max(half_range, 3.0 * step));
}

}  // namespace

namespace {

struct MixedFit {
  ComponentFitResult fit;
  ZeemanPattern pattern;  ///< the mixed-regime pattern the fit used
  int fits = 0;
  bool converged = false;
};

// Fits with the mixed-regime pattern evaluated at the current field until |B| settles (1e-4 relative, <= 8 fits).
MixedFit FitWithMixedPattern(const PixelSpectrum& view, double noise_I, ComponentFitOptions fo,
                             const PaschenBackLine& line, double b) {
  MixedFit out;
  for (int it = 0; it < 8 && !out.converged; ++it) {
    ZeemanPattern pat = ComputePaschenBackPattern(line, b).pattern;
    pat.g_eff = SigmaHalfSeparation(pat);
    fo.pattern = pat;
    ComponentFitResult next = FitZeemanComponents(view, noise_I, fo);
    ++out.fits;
    if (!next.ok || !next.has_field || !(next.field_gauss > 0.0)) break;
    out.converged = std::fabs(next.field_gauss - b) < 1e-4 * b;
    b = next.field_gauss;
    out.fit = std::move(next);
    out.pattern = std::move(pat);
  }
  return out;
}

}  // namespace

Measurement MeasureSpectrum(const Spectrum1D& s, const MeasureOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  const double l0 = o.rest_wavelength_nm;
  if (s.size() < kMinSpectrumSamples) throw SpectrumError(s.source + ": too few samples");
  if (l0 <= s.wavelength_nm.front() || l0 >= s.wavelength_nm.back())
    throw SpectrumError(s.source + ": the rest wavelength " + Fmt("%.6f", l0) + " nm lies outside the spectrum (" +
                        Fmt("%.6f", s.wavelength_nm.front()) + " to " + Fmt("%.6f", s.wavelength_nm.back()) +
                        " nm); check --wavelength and --frame");
  Measurement m;
  m.rest_wavelength_nm = l0;
  m.g_eff = o.pattern.g_eff;
  m.G = o.pattern.G;
  m.window_halfwidth_nm = o.window_halfwidth_nm > 0.0 ? o.window_halfwidth_nm : AutoWindow(s, l0);
  const PixelSpectrum view = s.View();

  std::vector<std::size_t> cont = ContinuumSamples(view.wavelength_nm, view.n, l0, m.window_halfwidth_nm);
  if (cont.size() < 4) {
    cont.clear();
    const std::size_t edge = std::max<std::size_t>(2, view.n / 10);
    for (std::size_t i = 0; i < edge; ++i) {
      cont.push_back(i);
      cont.push_back(view.n - 1 - i);
    }
    std::sort(cont.begin(), cont.end());
  }
  m.continuum = EstimateContinuum(view, cont, o.noise_rel);
  const double ic = m.continuum.continuum;
  if (!std::isfinite(ic)) throw SpectrumError(s.source + ": no continuum samples outside the line window");
  const std::vector<std::size_t> win = SamplesInWindow(view.wavelength_nm, view.n, l0 - m.window_halfwidth_nm,
                                                       l0 + m.window_halfwidth_nm);
  if (win.size() < 5)
    throw SpectrumError(s.source + ": only " + std::to_string(win.size()) + " samples within " +
                        Fmt("%.6f", m.window_halfwidth_nm) + " nm of the line; expected at least 5");
  double up = 0.0, down = 0.0;
  for (std::size_t i : win) {
    up = std::max(up, s.I[i] - ic);
    down = std::max(down, ic - s.I[i]);
  }
  m.sense_detected = o.sense == LineSense::kAuto;
  m.sense = o.sense != LineSense::kAuto ? o.sense : up > down ? LineSense::kEmission : LineSense::kAbsorption;
  m.line_peak_sigma = m.continuum.noise_I > 0.0 ? std::max(up, down) / m.continuum.noise_I : kNaN;

  // 1. Components.
  ComponentFitOptions fo;
  fo.rest_wavelength_nm = l0;
  fo.pattern = o.pattern;
  fo.free_components = o.free_components;
  fo.instrument_fwhm_nm = o.instrument_fwhm_nm;
  fo.fixed_damping = o.fixed_damping;
  fo.window_halfwidth_nm = m.window_halfwidth_nm;
  fo.resolution_ratio = o.resolution_ratio;
  m.components = FitZeemanComponents(view, m.continuum.noise_I, fo);

  // 2. Characteristics.
  CharacteristicsOptions co;
  co.rest_wavelength_nm = l0;
  co.window_halfwidth_nm = m.window_halfwidth_nm;
  co.realisations = o.realisations;
  co.seed = o.seed;
  m.characteristics = MeasureStokesCharacteristics(view, m.continuum, co);

  // 3. Estimators.
  WeakFieldOptions wo;
  wo.rest_wavelength_nm = l0;
  wo.g_eff = o.pattern.g_eff;
  wo.G = o.pattern.G;
  wo.window_halfwidth_nm = m.window_halfwidth_nm;
  WeakFieldWorkspace work;
  const WeakFieldResult w = WeakFieldEstimate(view, m.continuum, wo, work);
  CentreOfGravityOptions cgo;
  cgo.rest_wavelength_nm = l0;
  cgo.g_eff = o.pattern.g_eff;
  cgo.window_halfwidth_nm = m.window_halfwidth_nm;
  CentreOfGravityResult g;
  if (s.has_v()) g = CentreOfGravityEstimate(view, m.continuum, cgo);
  SplittingOptions so;
  so.rest_wavelength_nm = l0;
  so.g_eff = o.pattern.g_eff;
  so.window_halfwidth_nm = m.window_halfwidth_nm;
  so.resolution_ratio = o.resolution_ratio;
  SplittingResult sp = FullSplittingEstimate(view, m.continuum, so);
  const ComponentFitResult& cf = m.components;

  // Field scale and splitting ratio.
  auto field_scale = [&] {
    double b = 0.0;
    if (w.has_blos || w.has_btrans) b = std::hypot(w.has_blos ? w.blos_gauss : 0.0, w.has_btrans ? w.btrans_gauss : 0.0);
    if (g.ok && std::fabs(g.blos_gauss) > 3.0 * g.blos_noise_err_gauss) b = std::max(b, std::fabs(g.blos_gauss));
    if (cf.ok && cf.has_field && cf.resolved) b = std::max(b, cf.field_gauss);
    return b;
  };
  double b_star = field_scale();

  // Beyond the linear regime: refit with the mixed-regime pattern at the fitted field (see the header).
  ZeemanPattern me_pattern = o.pattern;
  if (o.mixed_line && o.free_components == 0 && o.regime == ZeemanRegime::kZeeman) {
    m.linear_breakdown_gauss = LinearBreakdownField_gauss(*o.mixed_line);
    const double b_guess = std::max(b_star, cf.ok && cf.has_field ? cf.field_gauss : 0.0);
    m.regime_note = "linear Zeeman pattern (requested)";
    if (b_guess > 0.1 * m.linear_breakdown_gauss)
      m.regime_note += "; warning: the field scale " + Fmt("%.4g", b_guess) +
                       " G exceeds a tenth of the linear breakdown field " + Fmt("%.4g", m.linear_breakdown_gauss) +
                       " G: the linear pattern biases |B| (use --regime auto)";
  } else if (o.mixed_line && o.free_components == 0) {
    m.linear_breakdown_gauss = LinearBreakdownField_gauss(*o.mixed_line);
    const double bd = m.linear_breakdown_gauss;
    const double b_fit = cf.ok && cf.has_field ? cf.field_gauss : 0.0;
    const double b_guess = std::max(b_star, b_fit);
    // Starts: the linear estimates, and fields around the breakdown field (a strongly mixed pattern can
    // mislead the linear fit); the mixed fit with the lowest chi2 wins.
    std::vector<double> starts = {b_fit, b_star, sp.ok ? sp.field_gauss : 0.0};
    if (std::isfinite(bd))
      for (double f : {0.3, 1.0, 3.0}) starts.push_back(f * bd);
    std::optional<MixedFit> best;
    std::vector<double> tried;  // starts and the fields they led to: a start within 5 % of one is skipped
    for (double b0 : starts) {
      if (!(b0 > 0.0) || !std::isfinite(b0)) continue;
      if (std::any_of(tried.begin(), tried.end(), [&](double t) { return std::fabs(b0 - t) < 0.05 * t; })) continue;
      tried.push_back(b0);
      MixedFit f = FitWithMixedPattern(view, m.continuum.noise_I, fo, *o.mixed_line, b0);
      m.mixed_fits += f.fits;
      if (f.fit.ok && f.fit.has_field) tried.push_back(f.fit.field_gauss);
      if (f.fit.ok && f.fit.has_field && (!best || f.fit.chi2_reduced < best->fit.chi2_reduced)) best = std::move(f);
    }
    const bool demanded =
        best && (o.regime == ZeemanRegime::kPaschenBack || best->fit.field_gauss > 0.1 * bd);
    if (demanded) {
      const double b_found = best->fit.field_gauss;
      me_pattern = best->pattern;
      m.components = std::move(best->fit);
      m.regime = "paschen-back";
      char buf[360];
      std::snprintf(buf, sizeof buf,
                    "mixed-regime (Paschen-Back) pattern: fitted field %.5g G %s the linear breakdown field %.4g G "
                    "(%d pattern fits, best reduced chi2 %.3g%s)",
                    b_found, o.regime == ZeemanRegime::kPaschenBack ? "(requested); a tenth of" : "exceeds a tenth of",
                    bd, m.mixed_fits, m.components.chi2_reduced,
                    best->converged ? "" : "; NOT converged: treat |B| with care");
      m.regime_note = buf;
      so.mixed_regime = std::make_shared<const SigmaSplittingTable>(*o.mixed_line);
      so.mixed_from_gauss = o.regime == ZeemanRegime::kPaschenBack ? 0.0 : 0.1 * bd;
      sp = FullSplittingEstimate(view, m.continuum, so);
      b_star = field_scale();
    } else {
      m.regime_note = std::isinf(m.linear_breakdown_gauss)
                          ? "linear Zeeman pattern: it stays linear at every field for this line"
                          : "linear Zeeman pattern: fitted field " +
                                Fmt("%.4g", best ? best->fit.field_gauss : b_guess) +
                                " G is below a tenth of the linear breakdown field " +
                                Fmt("%.4g", m.linear_breakdown_gauss) + " G";
    }
  } else {
    m.regime_note = o.regime == ZeemanRegime::kZeeman ? "linear Zeeman pattern (requested)"
                                                      : "linear Zeeman pattern (no term energies for the mixed regime)";
  }
  // Field scale, splitting ratio and the weak-field verdict: the regime decision `zeeline map` makes
  // (maps/weak_field_regime.hpp), with the component fit's width (instrument included) as the fallback width.
  double fallback_width = kNaN;
  if (cf.ok) {
    const double wi = o.instrument_fwhm_nm / (2.0 * std::sqrt(std::log(2.0)));
    fallback_width = std::hypot(cf.doppler_width_nm, wi);
  } else if (sp.ok) {
    fallback_width = sp.width_nm;
  }
  WeakFieldRegimeOptions ro;
  ro.weak_ratio = o.weak_ratio;
  const WeakFieldRegime regime = AssessWeakFieldRegime(w, s.has_v() ? &g : nullptr, o.pattern.g_eff, l0,
                                               TransverseRegion::kCorrected, fallback_width, ro);
  m.field_scale_gauss = regime.strength_gauss;
  m.observed_width_nm = regime.width_nm;
  m.splitting_ratio = regime.ratio;
  m.saturation = regime.saturation;

  // wfa
  m.wfa.method = "wfa";
  if (!s.has_v() && !s.has_qu()) {
    m.wfa.verdict = "not available: the spectrum has no V, Q or U";
  } else if (!w.ok) {
    m.wfa.verdict = "not available: too few samples or no line signal in the window";
  } else {
    m.wfa.available = w.has_blos || w.has_btrans;
    if (w.has_blos) m.wfa.blos_gauss = M(w.blos_gauss, w.blos_err_gauss);
    if (w.has_btrans) {
      m.wfa.btrans_gauss = M(w.btrans_gauss, w.btrans_err_gauss);
      m.wfa.azimuth_deg = M(w.azimuth_deg, w.azimuth_err_deg);
    }
    if (w.has_blos && w.has_btrans) {
      const FieldVector f = ComposeFieldVector(w.blos_gauss, w.blos_err_gauss, w.btrans_gauss, w.btrans_err_gauss,
                                               w.btrans_sq_err_gauss2);
      m.wfa.field_gauss = M(f.field_gauss, f.field_err_gauss);
    }
    m.wfa.valid = m.wfa.available && regime.weak;
    m.wfa.verdict = (m.wfa.valid ? std::string("valid: ") : std::string("outside validity: ")) + regime.reason;
    if (m.regime == "paschen-back") {
      m.wfa.valid = false;
      m.wfa.verdict += "; not valid beyond the linear regime (mixed-regime pattern: g_eff and G do not apply)";
    }
    if (!w.has_btrans && s.has_qu() && o.pattern.G == 0.0) m.wfa.verdict += "; no B_TRANS: G = 0 for this line";
    if (w.has_btrans && w.btrans_snr < o.transverse_detection) m.wfa.verdict += kTransverseNotDetected;
  }

  // cog
  m.cog.method = "cog";
  if (!s.has_v()) {
    m.cog.verdict = "not available: the spectrum has no V";
  } else if (!g.ok) {
    m.cog.verdict = "not available: no net line absorption or emission in the window";
  } else {
    m.cog.available = true;
    m.cog.blos_gauss = M(g.blos_gauss, g.blos_err_gauss);
    m.cog.vlos_kms = M(g.vlos_kms, g.vlos_err_kms);
    m.cog.valid = true;
    bool triplet = true;
    for (const auto& c : o.pattern.components)
      if (c.q != 0 && std::fabs(std::fabs(c.shift_lorentz) - std::fabs(o.pattern.g_eff)) > 1e-9) triplet = false;
    m.cog.verdict = triplet ? "valid: B_LOS at any field strength for a (normal or anomalous) triplet"
                            : "valid: B_LOS at any field strength; approximate for this anomalous pattern";
    if (m.regime == "paschen-back") {
      m.cog.valid = false;
      m.cog.verdict = "not valid: beyond the linear regime the sigma centroids are not at +-g_eff (mixed-regime pattern)";
    }
  }

  // split (component fit)
  m.split.method = "split";
  if (!cf.ok) {
    m.split.verdict = "not available: component fit failed (" + cf.message + ")";
  } else if (!cf.has_field) {
    m.split.verdict = "not available: free-component fit with fewer than two components or g_eff = 0";
  } else {
    m.split.available = true;
    m.split.field_gauss = M(cf.field_gauss, cf.field_err_gauss);
    m.split.vlos_kms = M(cf.vlos_kms, cf.vlos_err_kms);
    const double ratio = cf.component_fwhm_nm > 0.0 ? cf.sigma_separation_nm / cf.component_fwhm_nm : 0.0;
    m.split.valid = cf.resolved;
    char buf[240];
    std::snprintf(buf, sizeof buf, "sigma separation %.4g +- %.2g pm, component FWHM %.4g pm, separation/FWHM %.3g",
                  cf.sigma_separation_nm * 1e3, cf.sigma_separation_err_nm * 1e3, cf.component_fwhm_nm * 1e3, ratio);
    std::string why;
    if (cf.resolved) why = std::string(" >= resolution ratio ") + Fmt("%.3g", o.resolution_ratio);
    else if (!(ratio >= o.resolution_ratio)) why = std::string(" < resolution ratio ") + Fmt("%.3g", o.resolution_ratio);
    else if (!(cf.sigma_separation_nm > 3.0 * cf.sigma_separation_err_nm)) why = "; the separation is not 3 sigma significant";
    else why = "; but the fitted profile has no separate dip at each sigma group (a saturated single core can imitate a split)";
    m.split.verdict = (cf.resolved ? std::string("valid: resolved, ") : std::string("not resolved: ")) + buf + why;
    if (m.regime == "paschen-back") m.split.verdict += "; mixed-regime pattern at the fitted field";
  }

  // split_3gauss
  m.split_3gauss.method = "split_3gauss";
  if (!sp.ok) {
    m.split_3gauss.verdict = "not available: the three-Gaussian fit failed";
  } else {
    m.split_3gauss.available = true;
    m.split_3gauss.field_gauss = M(sp.field_gauss, sp.field_err_gauss);
    m.split_3gauss.vlos_kms = M(sp.vlos_kms, sp.vlos_err_kms);
    // The same numbers the map's split estimator uses, and the same extra tests (SplitVerdict).
    const SplitCheck chk = CheckSplit(sp, g.ok ? &g : nullptr, o.resolution_ratio);
    m.split_3gauss.valid = chk.valid;
    m.split_3gauss.verdict = (chk.valid ? std::string("valid: ") : std::string("not valid: ")) + chk.reason;
    if (sp.mixed_regime)
      m.split_3gauss.verdict += std::string("; |B| from the mixed-regime sigma separation") +
                                (sp.mixed_monotonic ? "" : " (separation not monotonic in B: smallest field)");
    if (m.regime == "paschen-back" && sp.ok) {
      // One Gaussian per sigma group cannot describe a group spread wider than its lines.
      const double b_pat = cf.ok && cf.has_field && cf.field_gauss > 0.0 ? cf.field_gauss : sp.field_gauss;
      const ZeemanPattern pat = ComputePaschenBackPattern(*o.mixed_line, b_pat).pattern;
      // ... nor a pi group off the middle of the sigma centroids (the model puts pi at the centre).
      double spread = 0.0, centroid[3] = {0.0, 0.0, 0.0};
      for (int q : {-1, 0, 1}) {
        double s0 = 0.0, s1 = 0.0, s2 = 0.0;
        for (const auto& c : pat.components)
          if (c.q == q) {
            s0 += c.strength;
            s1 += c.strength * c.shift_lorentz;
            s2 += c.strength * c.shift_lorentz * c.shift_lorentz;
          }
        if (s0 > 0.0) {
          spread = std::max(spread, std::sqrt(std::max(0.0, s2 / s0 - (s1 / s0) * (s1 / s0))));
          centroid[q + 1] = s1 / s0;
        }
      }
      const double unit_nm = LorentzUnit_nm(l0, b_pat);
      const double spread_nm = spread * unit_nm;
      const double offset_nm = std::fabs(0.5 * (centroid[0] + centroid[2]) - centroid[1]) * unit_nm;
      if (spread_nm > 0.5 * sp.width_nm || offset_nm > 0.5 * sp.width_nm) {
        m.split_3gauss.valid = false;
        m.split_3gauss.verdict = "not valid: at this field the mixed-regime groups spread over " +
                                 Fmt("%.3g", spread_nm * 1e3) + " pm (rms) and the pi centroid lies " +
                                 Fmt("%.3g", offset_nm * 1e3) + " pm off the sigma midpoint, against a Gaussian width " +
                                 Fmt("%.3g", sp.width_nm * 1e3) +
                                 " pm: three Gaussians do not describe the pattern (use split)";
      }
    }
  }
  if (!sp.ok && sp.mixed_regime)
    m.split_3gauss.verdict = "not available: the sigma separation lies beyond the mixed-regime table (1e7 G)";
  // me
  m.me.method = "me";
  if (m.sense != LineSense::kAbsorption) {
    m.me.verdict = "not available: the Milne-Eddington model describes absorption lines";
  } else if (o.free_components > 0 || o.pattern.components.empty()) {
    m.me.verdict = "not available: needs the line's Zeeman pattern (levels), not free components";
  } else if (!(ic > 0.0)) {
    m.me.verdict = "not available: non-positive continuum";
  } else {
    MeLine me_line;
    me_line.wavelength_nm = l0;
    me_line.pattern = me_pattern;  // the mixed-regime pattern at the split field when that regime is used
    const MeInverter inverter({me_line}, MeInversionOptions{});
    MeStartHints hints;
    if (w.has_blos) hints.blos_gauss = w.blos_gauss;
    if (g.ok) hints.blos_gauss = g.blos_gauss;
    if (w.has_btrans) {
      hints.btrans_gauss = w.btrans_gauss;
      hints.azimuth_deg = w.azimuth_deg;
    }
    if (cf.ok && cf.resolved) hints.field_gauss = cf.field_gauss;
    if (g.ok) hints.vlos_kms = g.vlos_kms;
    else if (cf.ok) hints.vlos_kms = cf.vlos_kms;
    if (std::isfinite(m.observed_width_nm)) hints.line_halfwidth_nm = m.observed_width_nm;
    MeWorkspace me_work;
    const MeResult r = inverter.Invert(view, m.continuum, hints, me_work);
    if (!r.ok) {
      m.me.verdict = "not available: no usable data for the inversion";
    } else {
      auto sig = [&](MeParam q) { return r.sigma[static_cast<int>(q)]; };
      m.me.available = true;
      m.me.field_gauss = M(r.params.field_gauss, sig(MeParam::kField));
      m.me.blos_gauss = M(r.blos_gauss, r.blos_err_gauss);
      m.me.btrans_gauss = M(r.btrans_gauss, r.btrans_err_gauss);
      if (s.has_qu()) m.me.azimuth_deg = M(r.params.azimuth_deg, sig(MeParam::kAzimuth));
      m.me.vlos_kms = M(r.params.vlos_kms, sig(MeParam::kVlos));
      m.me.valid = r.converged && !r.bad_fit;
      m.me.verdict = (m.me.valid ? std::string("valid: converged, ") : std::string("not valid: ") +
                                                                         (r.converged ? "" : "not converged, ")) +
                     "reduced chi2 " + Fmt("%.3g", r.chi2_reduced) +
                     (o.instrument_fwhm_nm > 0.0 ? "; note: the ME model has no instrument profile" : "");
      // The map's LOW_TRANSVERSE test on the fitted B_T: B_T^2 against its sigma 2 B_T sigma(B_T).
      if (s.has_qu() && o.transverse_detection > 0.0 && std::isfinite(r.btrans_gauss) &&
          !(r.btrans_gauss > 2.0 * o.transverse_detection * r.btrans_err_gauss))
        m.me.verdict += kTransverseNotDetected;
    }
  }
  return m;
}

}  // namespace zeeline
