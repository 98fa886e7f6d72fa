// Milne-Eddington inversion by Levenberg-Marquardt (see the header for the model, stopping rules, restart
// rule and uncertainty rule).
//
// Why an in-house LM: the problem has at most 10 parameters and ~50-400 residuals per pixel, and is solved
// millions of times. The cost is dominated by the forward model with its analytic Jacobian (~16 us for 60
// wavelengths); a fixed-size 10x10 normal matrix, its LDLT and the acceptance logic cost ~1-2 us per
// iteration without heap allocation. A general solver (e.g. Ceres) would add a build dependency and
// per-problem setup (problem/cost-function objects, dynamic-size linear algebra) of the same order as the
// whole per-pixel fit; the measured figures are in docs/me_inversion.md.
#include "zeeline/maps/me_inversion.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <utility>

#include <Eigen/Cholesky>
#include <Eigen/Eigenvalues>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline {
namespace {

constexpr int kN = kMeParamCount;
using Mat = Eigen::Matrix<double, kN, kN>;
using Vec = Eigen::Matrix<double, kN, 1>;
constexpr double kDegToRad = constants::kPi / 180.0;
constexpr double kRadToDeg = 180.0 / constants::kPi;
constexpr double kSpeedOfLight_kms = constants::kSpeedOfLight_m_s * 1e-3;
const int kAzimuth = static_cast<int>(MeParam::kAzimuth);

// Typical scale of each parameter (u_j = x_j / scale_j). Marquardt's diagonal damping makes the step
// independent of these; they only set the step cap and the numerical conditioning.
constexpr double kScale[kN] = {500.0, 10.0, 10.0, 0.5, 5e-4, 0.1, 3.0, 0.1, 0.1, 0.1};
// Largest step of one parameter per iteration, in scale units (30 deg in angle, 1500 G, 1.5 km/s, ...).
constexpr double kStepCap = 3.0;

// chi2 = sum_s f_s sum_k (O - M)^2 with f_s = weight_s / sigma_s^2.
double Chi2(const StokesArray& obs, const StokesArray& model, const std::array<double, 4>& f) {
  double chi2 = 0.0;
  for (int s = 0; s < 4; ++s)
    if (f[s] > 0.0) chi2 += f[s] * (obs.col(s) - model.col(s)).square().sum();
  return chi2;
}

// Normal matrix and gradient in scaled parameters: A = sum f J J^T, g = sum f J r (free rows only).
void Normal(const StokesArray& obs, const StokesArray& model, const StokesJacobian& jac,
            const std::array<double, 4>& f, const std::array<bool, kN>& free, Mat& A, Vec& g) {
  A.setZero();
  g.setZero();
  for (int s = 0; s < 4; ++s) {
    if (!(f[s] > 0.0)) continue;
    const auto r = obs.col(s) - model.col(s);
    for (int i = 0; i < kN; ++i) {
      if (!free[i]) continue;
      const auto ci = jac.d[i].col(s);
      g(i) += f[s] * kScale[i] * (ci * r).sum();
      for (int j = 0; j <= i; ++j) {
        if (!free[j]) continue;
        A(i, j) += f[s] * kScale[i] * kScale[j] * (ci * jac.d[j].col(s)).sum();
      }
    }
  }
  A.triangularView<Eigen::StrictlyUpper>() = A.transpose().triangularView<Eigen::StrictlyUpper>();
}

const int kField = static_cast<int>(MeParam::kField);
const int kInclination = static_cast<int>(MeParam::kInclination);

// Folded parameters: the model is unchanged under (B, gamma) -> (-B, 180 - gamma) and gamma -> -gamma
// (both equal a field vector turned by 180 deg in azimuth, and the model has period 180 in azimuth). With
// the default bounds B >= 0 and gamma in [0, 180] a step across those bounds is folded back instead of
// clamped: a clamp would stop on B = 0 or gamma = 0/180, where the derivatives with respect to gamma and
// the azimuth vanish by that symmetry and the fit could never leave.
bool FoldsField(const MeInversionOptions& o) { return o.lower[kField] == 0.0; }
bool FoldsInclination(const MeInversionOptions& o) {
  return o.lower[kInclination] == 0.0 && o.upper[kInclination] == 180.0;
}
bool Bounded(int j) { return j != kAzimuth; }
bool BoundedIn(const MeInversionOptions& o, int j) {
  if (j == kAzimuth) return false;
  if (j == kInclination) return !FoldsInclination(o);
  return true;
}

double Clamp(const MeInversionOptions& o, int j, double v) {
  return Bounded(j) ? std::clamp(v, o.lower[j], o.upper[j]) : v;
}

void FoldAndClamp(const MeInversionOptions& o, MeParameters& t) {
  if (o.free[kField] && FoldsField(o) && t.field_gauss < 0.0) {
    t.field_gauss = -t.field_gauss;
    t.inclination_deg = 180.0 - t.inclination_deg;
  }
  if (FoldsInclination(o)) {
    double g = std::fmod(t.inclination_deg, 360.0);
    if (g < 0.0) g += 360.0;
    if (g > 180.0) g = 360.0 - g;
    t.inclination_deg = g;
  }
  for (int j = 0; j < kN; ++j)
    if (o.free[j] && BoundedIn(o, j)) t.Set(static_cast<MeParam>(j), Clamp(o, j, t.Get(static_cast<MeParam>(j))));
}

// Solves (A + lambda D) x = g on the active set (inactive rows/cols replaced by identity, rhs 0).
Vec Solve(const Mat& A, const Vec& g, const std::array<bool, kN>& active, double lambda) {
  double max_diag = 0.0;
  for (int i = 0; i < kN; ++i)
    if (active[i]) max_diag = std::max(max_diag, A(i, i));
  const double floor = std::max(1e-12 * max_diag, 1e-300);
  Mat M = A;
  Vec rhs = g;
  for (int i = 0; i < kN; ++i) {
    if (active[i]) {
      M(i, i) = A(i, i) + lambda * std::max(A(i, i), floor) + 1e-12 * std::max(A(i, i), floor);
    } else {
      M.row(i).setZero();
      M.col(i).setZero();
      M(i, i) = 1.0;
      rhs(i) = 0.0;
    }
  }
  Eigen::LDLT<Mat> ldlt(M);
  Vec x = ldlt.solve(rhs);
  for (int i = 0; i < kN; ++i)
    if (!std::isfinite(x(i))) x(i) = 0.0;
  return x;
}

double WrapAzimuth(double a) {
  double w = std::fmod(a, 180.0);
  if (w < 0.0) w += 180.0;
  if (w >= 180.0) w = 0.0;
  return w;
}

}  // namespace

// ---------------------------------------------------------------------------------------------------
MeParam MeParamFromName(const std::string& name) {
  static const char* kShort[kN] = {"b_total", "b_incl", "b_azim", "v_los", "doppler_width",
                                   "damping", "eta0", "s0", "s1", "fill"};
  for (int j = 0; j < kN; ++j) {
    const auto p = static_cast<MeParam>(j);
    if (name == kShort[j] || name == MeParamName(p)) return p;
  }
  std::string list;
  for (int j = 0; j < kN; ++j) list += std::string(j ? ", " : "") + kShort[j];
  throw OptionError("Milne-Eddington parameter '" + name + "': expected one of " + list);
}

std::string MeInversionOptions::Validate() const {
  std::ostringstream m;
  const std::string model_problem = model.Validate();
  if (!model_problem.empty()) return model_problem;
  const std::string fixed_problem = fixed_values.Validate();
  if (!fixed_problem.empty()) return "fixed Milne-Eddington value: " + fixed_problem;
  // Physical domain of the bounds.
  const double dom_lo[kN] = {0.0, 0.0, -1e4, -3e4, 1e-7, 0.0, 0.0, -1e30, -1e30, 0.0};
  const double dom_hi[kN] = {1e6, 180.0, 1e4, 3e4, 10.0, 100.0, 1e7, 1e30, 1e30, 1.0};
  int n_free = 0;
  for (int j = 0; j < kN; ++j) {
    const char* name = MeParamName(static_cast<MeParam>(j));
    n_free += free[j];
    if (!(std::isfinite(lower[j]) && std::isfinite(upper[j]) && lower[j] < upper[j])) {
      m << "bounds of " << name << " = [" << lower[j] << ", " << upper[j] << "]: need finite lower < upper";
      return m.str();
    }
    if (lower[j] < dom_lo[j] || upper[j] > dom_hi[j]) {
      m << "bounds of " << name << " = [" << lower[j] << ", " << upper[j] << "] leave the allowed range ["
        << dom_lo[j] << ", " << dom_hi[j] << "]";
      return m.str();
    }
    if (j == static_cast<int>(MeParam::kDopplerWidth) && !(lower[j] > 0.0)) {
      m << "lower bound of doppler_width_nm = " << lower[j] << " must be > 0";
      return m.str();
    }
    if (j == static_cast<int>(MeParam::kEta0) && !(lower[j] > 0.0)) {
      m << "lower bound of eta0 = " << lower[j] << " must be > 0";
      return m.str();
    }
    const double v = fixed_values.Get(static_cast<MeParam>(j));
    if (!free[j] && Bounded(j) && (v < lower[j] || v > upper[j])) {
      m << "fixed " << name << " = " << v << " lies outside its bounds [" << lower[j] << ", " << upper[j] << "]";
      return m.str();
    }
  }
  if (n_free == 0) return "no free Milne-Eddington parameter: free at least one";
  double wsum = 0.0;
  for (int s = 0; s < 4; ++s) {
    if (!(stokes_weights[s] >= 0.0) || !std::isfinite(stokes_weights[s])) {
      m << "Stokes weight " << s << " (IQUV) = " << stokes_weights[s] << " must be finite and >= 0";
      return m.str();
    }
    wsum += stokes_weights[s];
  }
  if (!(wsum > 0.0)) return "Stokes weights are all 0: at least one must be > 0";
  if (max_iterations < 1 || max_iterations > 10000)
    m << "max iterations = " << max_iterations << " must be in [1, 10000]";
  else if (!(chi2_tolerance > 0.0)) m << "chi2 tolerance = " << chi2_tolerance << " must be > 0";
  else if (!(rel_chi2_tolerance > 0.0) || rel_chi2_tolerance >= 1.0)
    m << "relative chi2 tolerance = " << rel_chi2_tolerance << " must be in (0, 1)";
  else if (!(step_tolerance > 0.0)) m << "step tolerance = " << step_tolerance << " must be > 0";
  else if (!(lambda_initial > 0.0) || !(lambda_max > lambda_initial))
    m << "lambda initial = " << lambda_initial << ", max = " << lambda_max << ": need 0 < initial < max";
  else if (max_restarts < 0 || max_restarts > 4) m << "max restarts = " << max_restarts << " must be in [0, 4]";
  else if (!(restart_sigma >= 0.0)) m << "restart sigma = " << restart_sigma << " must be >= 0";
  else if (!(restart_chi2 > 0.0)) m << "restart chi2 = " << restart_chi2 << " must be > 0";
  else if (!(bad_fit_chi2 > 0.0)) m << "bad-fit chi2 = " << bad_fit_chi2 << " must be > 0";
  return m.str();
}

namespace {
MilneEddingtonModel MakeModel(const std::vector<MeLine>& lines, const MeInversionOptions& o) {
  const std::string problem = o.Validate();
  if (!problem.empty()) throw OptionError(problem);
  if (lines.empty()) throw OptionError("Milne-Eddington inversion needs at least one line");
  return MilneEddingtonModel(lines, o.model);
}
}  // namespace

MeInverter::MeInverter(const std::vector<MeLine>& lines, const MeInversionOptions& options)
    : options_(options), model_(MakeModel(lines, options)) {
  main_wavelength_nm_ = lines.front().wavelength_nm;
  g_eff_ = lines.front().pattern.g_eff;
  // Window of the starting-point moments: 12 default Doppler widths (room for a 6 kG splitting of a
  // g_eff = 2.5 line at 630 nm), at most 45 % of the distance to the nearest other line.
  analysis_halfwidth_nm_ = 12.0 * options.fixed_values.doppler_width_nm;
  for (std::size_t i = 1; i < lines.size(); ++i)
    analysis_halfwidth_nm_ =
        std::min(analysis_halfwidth_nm_, 0.45 * std::fabs(lines[i].wavelength_nm - main_wavelength_nm_));
}

bool MeInverter::LoadData(const PixelSpectrum& s, const ContinuumEstimate& c, MeWorkspace& w,
                          std::array<double, 4>& f, int& n_data) const {
  const Eigen::Index n = static_cast<Eigen::Index>(s.n);
  if (n < 4 || !s.I || !(c.continuum > 0.0) || !std::isfinite(c.continuum)) return false;
  if (w.wavelength_nm.size() != n) w.wavelength_nm.resize(n);
  if (w.observed.rows() != n) w.observed.resize(n, 4);
  const double* col[4] = {s.I, s.Q, s.U, s.V};
  const double noise[4] = {c.noise_I, c.noise_Q, c.noise_U, c.noise_V};
  const double inv_ic = 1.0 / c.continuum;
  n_data = 0;
  for (Eigen::Index k = 0; k < n; ++k) w.wavelength_nm(k) = s.wavelength_nm[k];
  for (int st = 0; st < 4; ++st) {
    if (!col[st]) {
      w.observed.col(st).setZero();
      f[st] = 0.0;
      continue;
    }
    for (Eigen::Index k = 0; k < n; ++k) w.observed(k, st) = col[st][k] * inv_ic;
    // Noise in units of Ic, floored at 1e-6 (noiseless synthetic data would otherwise divide by zero).
    const double sigma = std::max(noise[st] * inv_ic, 1e-6);
    f[st] = options_.stokes_weights[st] > 0.0 ? options_.stokes_weights[st] / (sigma * sigma) : 0.0;
    if (f[st] > 0.0) n_data += static_cast<int>(n);
  }
  return n_data > 0;
}

MeParameters MeInverter::StartingPoint(const MeStartHints& h, const MeWorkspace& w) const {
  const MeInversionOptions& o = options_;
  MeParameters p = o.fixed_values;
  const Eigen::Index n = w.wavelength_nm.size();
  const double l0 = main_wavelength_nm_, win = analysis_halfwidth_nm_;
  const double lorentz = LorentzUnit_nm(l0, 1.0) * std::fabs(g_eff_);  // g_eff C, nm per gauss
  // Moments of the absorption d = 1 - I and of 1 - (I +- V) within +-win of the rest wavelength: the
  // centroid (velocity), the 1/e half-width sqrt(2 var), the centre of gravity B_LOS (Rees & Semel 1979),
  // the I minimum (depth) and the peak linear polarisation.
  double m0 = 0.0, m1 = 0.0, m2 = 0.0, sp = 0.0, sm = 0.0, lp = 0.0, lm = 0.0, lmax = 0.0, imin = 1.0;
  for (Eigen::Index k = 0; k < n; ++k) {
    const double dl = w.wavelength_nm(k) - l0;
    if (std::fabs(dl) > win) continue;
    const double I = w.observed(k, 0), V = w.observed(k, 3);
    const double d = std::max(1.0 - I, 0.0);
    m0 += d;
    m1 += d * dl;
    m2 += d * dl * dl;
    const double dp = std::max(1.0 - I - V, 0.0), dm = std::max(1.0 - I + V, 0.0);
    sp += dp;
    lp += dp * dl;
    sm += dm;
    lm += dm * dl;
    lmax = std::max(lmax, std::hypot(w.observed(k, 1), w.observed(k, 2)));
    imin = std::min(imin, I);
  }
  const double centroid = m0 > 0.0 ? m1 / m0 : 0.0;
  // Half-width: the hint, else from the outermost samples deeper than half the depth (the half width at
  // half depth over sqrt(ln 2) is the 1/e half-width of a Gaussian); the second moment is the fallback
  // (it is inflated by the damping wings).
  double halfwidth = h.line_halfwidth_nm;
  if (!(halfwidth > 0.0)) {
    double lo = 0.0, hi = 0.0;
    bool found = false;
    const double half = 1.0 - 0.5 * (1.0 - imin);
    for (Eigen::Index k = 0; k < n; ++k) {
      const double dl = w.wavelength_nm(k) - l0;
      if (std::fabs(dl) > win || w.observed(k, 0) > half) continue;
      lo = found ? std::min(lo, dl) : dl;
      hi = found ? std::max(hi, dl) : dl;
      found = true;
    }
    const double step = n > 1 ? std::fabs(w.wavelength_nm(1) - w.wavelength_nm(0)) : 0.0;
    halfwidth = found ? (0.5 * (hi - lo) + 0.5 * step) / std::sqrt(std::log(2.0)) : 0.0;
  }
  if (!(halfwidth > 0.0) && m0 > 0.0) halfwidth = std::sqrt(std::max(2.0 * (m2 / m0 - centroid * centroid), 0.0));
  if (!(halfwidth > 0.0)) halfwidth = 1.5 * o.fixed_values.doppler_width_nm;
  p.vlos_kms = std::isfinite(h.vlos_kms) ? h.vlos_kms : kSpeedOfLight_kms * centroid / l0;

  // Magnetic field: hints first; otherwise B_LOS from the centre of gravity and B_T from the weak-field
  // scaling of the peak linear polarisation, L / depth ~ (g C B_T / w)^2 / 4 (LL04 eq. 9.83 with
  // d2I/dl2 ~ depth / w^2).
  double blos = h.blos_gauss, bt = std::fabs(h.btrans_gauss);
  if (!std::isfinite(blos))
    blos = (sp > 0.0 && sm > 0.0) ? (lp / sp - lm / sm) / (2.0 * lorentz) * (g_eff_ < 0.0 ? -1.0 : 1.0) : 0.0;
  if (!std::isfinite(bt)) bt = 2.0 * halfwidth * std::sqrt(lmax / std::max(1.0 - imin, 0.05)) / lorentz;
  double b = std::hypot(blos, bt);
  if (std::isfinite(h.field_gauss) && h.field_gauss > b) b = h.field_gauss;
  b = std::max(b, 20.0);
  p.field_gauss = b;
  const double cosg = (blos == 0.0 && bt == 0.0) ? 0.0 : std::clamp(blos / b, -1.0, 1.0);
  p.inclination_deg = std::acos(cosg) * kRadToDeg;

  // Thermodynamics: the Doppler width is 0.6 of the half-width left after removing the Zeeman spread
  // (at least half of it); eta0 = 8 with the core depth s0 + s1 / (1 + eta0) = I_min and s0 + s1 = 1.
  const double zeeman = lorentz * b;
  p.doppler_width_nm = 0.6 * std::sqrt(std::max(halfwidth * halfwidth - zeeman * zeeman, 0.25 * halfwidth * halfwidth));
  p.eta0 = 8.0;
  const double s1 = std::clamp((1.0 - imin) * (1.0 + p.eta0) / p.eta0, 0.1, 1.2);
  p.s1 = s1 / model_.options().mu;
  p.s0 = 1.0 - s1;

  if (std::isfinite(h.azimuth_deg)) {
    p.azimuth_deg = h.azimuth_deg;
  } else {
    // Line-core linear polarisation: Q, U ~ -(cos 2chi, sin 2chi) there (docs/conventions.md).
    double q = 0.0, u = 0.0;
    const double lc = l0 + centroid;
    for (Eigen::Index k = 0; k < n; ++k) {
      if (std::fabs(w.wavelength_nm(k) - lc) > p.doppler_width_nm) continue;
      q += w.observed(k, 1);
      u += w.observed(k, 2);
    }
    p.azimuth_deg = (q == 0.0 && u == 0.0) ? 45.0 : WrapAzimuth(0.5 * std::atan2(-u, -q) * kRadToDeg);
  }
  // A free filling factor starts 10 % inside its range (a start on the bound f = 1 tends to stay there).
  const int jf = static_cast<int>(MeParam::kFill);
  if (o.free[jf])
    p.fill = std::clamp(p.fill, o.lower[jf] + 0.1 * (o.upper[jf] - o.lower[jf]),
                        o.upper[jf] - 0.1 * (o.upper[jf] - o.lower[jf]));
  for (int j = 0; j < kN; ++j) {
    const auto pj = static_cast<MeParam>(j);
    if (!o.free[j]) p.Set(pj, o.fixed_values.Get(pj));
    else if (j != kAzimuth) p.Set(pj, Clamp(o, j, p.Get(pj)));
  }
  return p;
}

void MeInverter::Fit(const MeParameters& start, const std::array<double, 4>& f, int n_data, MeWorkspace& w,
                     MeResult& out) const {
  const MeInversionOptions& o = options_;
  MeParameters x = start;
  for (int j = 0; j < kN; ++j) {
    const auto pj = static_cast<MeParam>(j);
    x.Set(pj, o.free[j] ? Clamp(o, j, x.Get(pj)) : o.fixed_values.Get(pj));
  }
  model_.Synthesize(w.wavelength_nm, x, w.model, &w.jacobian, &o.free);
  if (w.trial.rows() != w.model.rows()) w.trial.resize(w.model.rows(), 4);
  double chi2 = Chi2(w.observed, w.model, f);
  Mat A;
  Vec g;
  Normal(w.observed, w.model, w.jacobian, f, o.free, A, g);
  double lambda = o.lambda_initial;
  int iterations = 0;
  bool converged = false;
  std::array<bool, kN> active{};
  while (iterations < o.max_iterations) {
    // Active set: free parameters not pushed outward at a bound (g is the descent direction).
    for (int j = 0; j < kN; ++j) {
      active[j] = o.free[j];
      if (!active[j] || !BoundedIn(o, j) || (j == kField && FoldsField(o) && x.field_gauss < o.upper[j] * 0.5))
        continue;
      const double v = x.Get(static_cast<MeParam>(j));
      const double tol = 1e-12 * kScale[j];
      if ((v <= o.lower[j] + tol && g(j) < 0.0) || (v >= o.upper[j] - tol && g(j) > 0.0)) active[j] = false;
    }
    // Gauss-Newton predicted decrease on the active set.
    const Vec gn = Solve(A, g, active, 0.0);
    if (g.dot(gn) < o.chi2_tolerance) {
      converged = true;
      break;
    }
    Vec du = Solve(A, g, active, lambda);
    // Each component is limited to kStepCap scale units: the linearisation is poor for large angle
    // changes where the transverse field is weak; a clipped step that does not lower chi2 is rejected
    // like any other, and the larger lambda then turns it toward the (sign-preserved) gradient.
    const double max_step = du.cwiseAbs().maxCoeff();
    for (int j = 0; j < kN; ++j) du(j) = std::clamp(du(j), -kStepCap, kStepCap);
    MeParameters t = x;
    for (int j = 0; j < kN; ++j) {
      if (!active[j]) continue;
      const auto pj = static_cast<MeParam>(j);
      t.Set(pj, x.Get(pj) + du(j) * kScale[j]);
    }
    FoldAndClamp(o, t);
    ++iterations;
    // The spectra only; the Jacobian is assembled from the cache if the step is kept (a rejected step,
    // ~1 in 4, then costs the Voigt sums alone).
    model_.Synthesize(w.wavelength_nm, t, w.trial, w.trial_cache, &o.free);
    const double chi2_t = Chi2(w.observed, w.trial, f);
    if (chi2_t < chi2) {
      const double rel = (chi2 - chi2_t) / std::max(chi2_t, 1e-300);
      x = t;
      chi2 = chi2_t;
      w.model.swap(w.trial);
      model_.JacobianFromCache(w.trial_cache, w.jacobian, &o.free);
      Normal(w.observed, w.model, w.jacobian, f, o.free, A, g);
      lambda = std::max(lambda * 0.1, 1e-10);
      if (rel < o.rel_chi2_tolerance || std::min(max_step, kStepCap) < o.step_tolerance) {
        converged = true;
        break;
      }
    } else {
      lambda *= 10.0;
      if (lambda > o.lambda_max) {
        converged = true;
        break;
      }
    }
  }

  // Uncertainties at the solution (header comment): C = H^-1 M H^-1, H = J^T W J, M = J^T W^2 J.
  std::array<double, 4> f2{}, f1{};
  bool unit_weights = true;
  for (int s = 0; s < 4; ++s) {
    const double wgt = o.stokes_weights[s];
    f2[s] = f[s] * wgt;                     // w^2 / sigma^2
    f1[s] = wgt > 0.0 ? f[s] / wgt : 0.0;   // 1 / sigma^2 (unweighted chi2)
    unit_weights &= (f[s] == 0.0 || wgt == 1.0);
  }
  Mat Minfo;
  Vec dummy;
  if (unit_weights) Minfo = A;
  else Normal(w.observed, w.model, w.jacobian, f2, o.free, Minfo, dummy);
  const double chi2_unweighted = Chi2(w.observed, w.model, f1);
  int n_free = 0;
  for (int j = 0; j < kN; ++j) n_free += o.free[j];
  const int dof = std::max(n_data - n_free, 1);
  const double chi2_red = chi2_unweighted / dof;

  // Eigen-decomposition of H on the free block (fixed rows set to identity, then dropped).
  Mat H = A;
  for (int j = 0; j < kN; ++j)
    if (!o.free[j]) {
      H.row(j).setZero();
      H.col(j).setZero();
      H(j, j) = 1.0;
    }
  Eigen::SelfAdjointEigenSolver<Mat> eig(H);
  const Vec ev = eig.eigenvalues();
  const Mat& V = eig.eigenvectors();
  const double ev_max = ev.cwiseAbs().maxCoeff();
  Vec inv_ev;
  std::array<bool, kN> unconstrained{};
  for (int k = 0; k < kN; ++k) {
    const bool ok = ev(k) > 1e-13 * ev_max;
    inv_ev(k) = ok ? 1.0 / ev(k) : 0.0;
    if (!ok)
      for (int j = 0; j < kN; ++j)
        if (o.free[j] && std::fabs(V(j, k)) > 1e-6) unconstrained[j] = true;
  }
  const Mat Hinv = V * inv_ev.asDiagonal() * V.transpose();
  Mat C = unit_weights ? Hinv : Mat(Hinv * Minfo * Hinv);
  if (chi2_red > 1.0) C *= chi2_red;
  out.params = x;
  out.params.azimuth_deg = WrapAzimuth(x.azimuth_deg);
  for (int i = 0; i < kN; ++i)
    for (int j = 0; j < kN; ++j)
      out.covariance(i, j) = (o.free[i] && o.free[j]) ? C(i, j) * kScale[i] * kScale[j] : 0.0;
  const double inf = std::numeric_limits<double>::infinity();
  for (int j = 0; j < kN; ++j)
    out.sigma[j] = !o.free[j] ? 0.0 : unconstrained[j] ? inf : std::sqrt(std::max(out.covariance(j, j), 0.0));

  const double B = x.field_gauss, gam = x.inclination_deg * kDegToRad;
  const double c = std::cos(gam), s = std::sin(gam);
  const double cbb = out.covariance(0, 0), cgg = out.covariance(1, 1) * kDegToRad * kDegToRad,
               cbg = out.covariance(0, 1) * kDegToRad;
  out.blos_gauss = B * c;
  out.btrans_gauss = B * s;
  const bool bg_inf = unconstrained[0] || unconstrained[1];
  out.blos_err_gauss = bg_inf ? inf : std::sqrt(std::max(c * c * cbb + B * B * s * s * cgg - 2.0 * c * s * B * cbg, 0.0));
  out.btrans_err_gauss = bg_inf ? inf : std::sqrt(std::max(s * s * cbb + B * B * c * c * cgg + 2.0 * c * s * B * cbg, 0.0));
  out.chi2_reduced = chi2_red;
  out.iterations = iterations;
  out.converged = converged;
  out.bad_fit = chi2_red > o.bad_fit_chi2;
  out.ok = true;
}

MeResult MeInverter::InvertFrom(const PixelSpectrum& s, const ContinuumEstimate& c, const MeParameters& start,
                                MeWorkspace& work) const {
  MeResult r;
  r.covariance.setZero();
  std::array<double, 4> f{};
  int n_data = 0;
  if (!LoadData(s, c, work, f, n_data)) return r;
  Fit(start, f, n_data, work, r);
  r.starts = 1;
  return r;
}

MeResult MeInverter::Invert(const PixelSpectrum& s, const ContinuumEstimate& c, const MeStartHints& hints,
                            MeWorkspace& work) const {
  MeResult best;
  best.covariance.setZero();
  std::array<double, 4> f{};
  int n_data = 0;
  if (!LoadData(s, c, work, f, n_data)) return best;
  const MeInversionOptions& o = options_;
  const MeParameters start = StartingPoint(hints, work);
  Fit(start, f, n_data, work, best);
  best.starts = 1;
  int total_iterations = best.iterations;
  // Evidence of a wrong basin (header comment): chi2 above restart_chi2 and above the scatter that the
  // measured noise allows.
  int n_free = 0;
  for (int j = 0; j < kN; ++j) n_free += o.free[j];
  const double dof = std::max(n_data - n_free, 1);
  const double noise_var = c.noise_dof > 0.0 && std::isfinite(c.noise_dof) ? 2.0 / c.noise_dof : 0.0;
  const double restart_above = std::max(o.restart_chi2, 1.0 + o.restart_sigma * std::sqrt(2.0 / dof + noise_var));
  for (int k = 0; k < o.max_restarts && (best.chi2_reduced > restart_above || !best.converged); ++k) {
    MeParameters alt = start;
    switch (k) {
      case 0: alt.field_gauss = std::min(3.0 * start.field_gauss + 300.0, 0.9 * o.upper[0]); break;
      case 1: alt.inclination_deg = 180.0 - start.inclination_deg; break;
      case 2: alt.azimuth_deg = start.azimuth_deg + 90.0; break;
      default:
        alt.field_gauss = start.field_gauss / 3.0;
        alt.eta0 = 2.0 * start.eta0;
        break;
    }
    MeResult r;
    Fit(alt, f, n_data, work, r);
    total_iterations += r.iterations;
    const int starts = best.starts + 1;
    if (r.chi2_reduced < best.chi2_reduced) best = r;
    best.starts = starts;
  }
  best.iterations = total_iterations;
  return best;
}

}  // namespace zeeline
