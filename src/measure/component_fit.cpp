#include "zeeline/measure/component_fit.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include <Eigen/Dense>

#include "zeeline/atomic/sigma_group.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/synth/voigt.hpp"

namespace zeeline {

std::string ComponentFitOptions::Validate() const {
  auto num = [](double v) { return std::to_string(v); };
  if (!(rest_wavelength_nm > 0.0)) return "rest_wavelength_nm = " + num(rest_wavelength_nm) + ": must be > 0";
  if (free_components < 0 || free_components > 12)
    return "free_components = " + std::to_string(free_components) + ": expected 0 (use the Zeeman pattern) to 12";
  if (free_components == 0 && pattern.components.empty())
    return "pattern: no Zeeman components (give the line's levels, or free_components >= 1)";
  if (!(instrument_fwhm_nm >= 0.0) || !std::isfinite(instrument_fwhm_nm))
    return "instrument_fwhm_nm = " + num(instrument_fwhm_nm) + ": must be >= 0";
  if (fixed_damping && !(*fixed_damping >= 0.0 && *fixed_damping <= 20.0))
    return "fixed_damping = " + num(*fixed_damping) + ": expected 0 to 20 (Doppler units)";
  if (!(window_halfwidth_nm >= 0.0)) return "window_halfwidth_nm = " + num(window_halfwidth_nm) + ": must be >= 0";
  if (!(resolution_ratio > 0.0)) return "resolution_ratio = " + num(resolution_ratio) + ": must be > 0";
  if (max_iterations < 1) return "max_iterations = " + std::to_string(max_iterations) + ": must be >= 1";
  return {};
}

namespace {

constexpr double kSqrtPi = 1.7724538509055160273;
constexpr double kMaxDamping = 20.0;
const double kNaN = std::numeric_limits<double>::quiet_NaN();

// One line of the model: position = l_c + shift * C * B (pattern) or a free position parameter.
struct Line {
  double shift_lorentz = 0.0, strength = 1.0;
  int group = 0;  // pattern: 0 sigma_b, 1 pi, 2 sigma_r; free: component index (for the parts)
  int area = 0;   // index of the area parameter: pattern 0 sigma (both groups), 1 pi; free: component
};

class Model {
 public:
  Model(const std::vector<double>& x, double l0, double lorentz_per_gauss, double wi, bool pattern_mode,
        std::vector<Line> lines, int groups, int areas)
      : x_(x), l0_(l0), C_(lorentz_per_gauss), wi_(wi), pattern_(pattern_mode), lines_(std::move(lines)),
        groups_(groups), areas_(areas) {}

  // Parameter layout.
  //   pattern: 0 l_c, 1 B, 2 w, 3 a, 4 sigma area (each sigma group), 5 pi area, 6 c0, 7 c1
  //   free:    0 w, 1 a, 2 c0, 3 c1, 4 + 2k l_k, 5 + 2k E_k
  //   last:    kappa (saturation), both modes
  int ParamCount() const { return (pattern_ ? 4 + areas_ + 2 : 4 + 2 * areas_) + 1; }
  int Kappa() const { return ParamCount() - 1; }
  int W() const { return pattern_ ? 2 : 0; }
  int A() const { return pattern_ ? 3 : 1; }
  int C0() const { return pattern_ ? 4 + areas_ : 2; }
  int C1() const { return C0() + 1; }
  int Area(int g) const { return pattern_ ? 4 + g : 5 + 2 * g; }
  int Pos(int g) const { return 4 + 2 * g; }  // free mode only
  int groups() const { return groups_; }
  int areas() const { return areas_; }
  bool pattern() const { return pattern_; }
  const std::vector<Line>& lines() const { return lines_; }
  double C() const { return C_; }

  double LinePosition(const Eigen::VectorXd& p, const Line& l) const {
    return pattern_ ? p[0] + l.shift_lorentz * C_ * p[1] : p[Pos(l.group)];
  }
  double LineArea(const Eigen::VectorXd& p, const Line& l) const { return p[Area(l.area)] * l.strength; }

  // Model values and (optionally) the Jacobian d model / d p, and the per-group parts.
  void Evaluate(const Eigen::VectorXd& p, Eigen::VectorXd& y, Eigen::MatrixXd* J,
                std::vector<std::vector<double>>* parts = nullptr) const {
    const Eigen::Index n = static_cast<Eigen::Index>(x_.size());
    y.resize(n);
    if (J) J->setZero(n, ParamCount());
    if (parts) parts->assign(static_cast<std::size_t>(groups_), std::vector<double>(x_.size(), 0.0));
    const double w = p[W()], a = p[A()];
    const double wp = std::sqrt(w * w + wi_ * wi_);
    const double ap = a * w / wp;
    const double norm = 1.0 / (kSqrtPi * wp);
    const double dap_dw = a * wi_ * wi_ / (wp * wp * wp);
    const double dap_da = w / wp;
    const double kappa = p[Kappa()];
    for (Eigen::Index i = 0; i < n; ++i) {
      const double xi = x_[static_cast<std::size_t>(i)];
      const double cont = p[C0()] + p[C1()] * (xi - l0_);
      double S = 0.0;
      if (J) {
        (*J)(i, C0()) = 1.0;
        (*J)(i, C1()) = xi - l0_;
      }
      for (const Line& l : lines_) {
        const double pos = LinePosition(p, l);
        const double E = LineArea(p, l);
        const double v = (xi - pos) / wp;
        const VoigtValue h = VoigtFast(ap, v);
        const double P = h.H * norm;
        S += E * P;
        if (parts) (*parts)[static_cast<std::size_t>(l.group)][static_cast<std::size_t>(i)] += E * P;
        if (!J) continue;
        const double dP_dpos = -h.dH_dv * norm / wp;
        const double dP_dw = (h.dH_da * dap_dw + h.dH_dv * (-v * w / (wp * wp))) * norm - P * w / (wp * wp);
        const double dP_da = h.dH_da * dap_da * norm;
        (*J)(i, W()) += E * dP_dw;
        (*J)(i, A()) += E * dP_da;
        (*J)(i, Area(l.area)) += l.strength * P;
        if (pattern_) {
          (*J)(i, 0) += E * dP_dpos;
          (*J)(i, 1) += E * dP_dpos * l.shift_lorentz * C_;
        } else {
          (*J)(i, Pos(l.group)) += E * dP_dpos;
        }
      }
      // Saturation: y = cont + S / (1 - kappa S); the line terms of J scale by d y / d S.
      const double den = 1.0 - kappa * S;
      y[i] = cont + S / den;
      if (J) {
        const double dyds = 1.0 / (den * den);
        for (int k = 0; k < Kappa(); ++k)
          if (k != C0() && k != C1()) (*J)(i, k) *= dyds;
        (*J)(i, Kappa()) = S * S * dyds;
      }
    }
    if (parts)
      for (auto& part : *parts)
        for (double& v : part) v = v / (1.0 - kappa * v);
  }

  double ObservedFwhm(double w, double a) const {
    const double wp = std::sqrt(w * w + wi_ * wi_);
    const double fG = 2.0 * std::sqrt(std::log(2.0)) * wp;
    const double fL = 2.0 * a * w;  // Lorentzian FWHM: H(a, v) has half-width a in Doppler units
    return 0.5346 * fL + std::sqrt(0.2166 * fL * fL + fG * fG);
  }

 private:
  const std::vector<double>& x_;
  double l0_, C_, wi_;
  bool pattern_;
  std::vector<Line> lines_;
  int groups_, areas_;
};

// Solve the linear parameters (areas, c0, c1) at fixed nonlinear ones; returns chi2 (unit weights).
double SolveLinear(const Model& m, Eigen::VectorXd& p, const Eigen::VectorXd& data) {
  Eigen::VectorXd y;
  Eigen::MatrixXd J;
  m.Evaluate(p, y, &J);
  std::vector<int> lin = {m.C0(), m.C1()};
  for (int g = 0; g < m.areas(); ++g) lin.push_back(m.Area(g));
  Eigen::MatrixXd A(J.rows(), static_cast<Eigen::Index>(lin.size()));
  for (std::size_t k = 0; k < lin.size(); ++k) A.col(static_cast<Eigen::Index>(k)) = J.col(lin[k]);
  const Eigen::VectorXd sol = A.colPivHouseholderQr().solve(data);
  for (std::size_t k = 0; k < lin.size(); ++k) p[lin[k]] = sol[static_cast<Eigen::Index>(k)];
  return (data - A * sol).squaredNorm();
}

struct LmOutcome {
  double chi2 = 0.0;  // unit weights
  int iterations = 0;
  bool converged = false;
};

LmOutcome LevenbergMarquardt(const Model& m, Eigen::VectorXd& p, const Eigen::VectorXd& data,
                             const std::vector<int>& active, int max_iterations, double w_floor) {
  Eigen::VectorXd y, trial_y;
  Eigen::MatrixXd J;
  m.Evaluate(p, y, &J);
  double chi2 = (data - y).squaredNorm();
  double lambda = 1e-3;
  LmOutcome out;
  const Eigen::Index na = static_cast<Eigen::Index>(active.size());
  for (int it = 0; it < max_iterations; ++it) {
    out.iterations = it + 1;
    Eigen::MatrixXd Ja(J.rows(), na);
    for (Eigen::Index k = 0; k < na; ++k) Ja.col(k) = J.col(active[static_cast<std::size_t>(k)]);
    const Eigen::MatrixXd JtJ = Ja.transpose() * Ja;
    const Eigen::VectorXd g = Ja.transpose() * (data - y);
    bool improved = false;
    for (int tries = 0; tries < 12 && !improved; ++tries) {
      Eigen::MatrixXd Aug = JtJ;
      for (Eigen::Index k = 0; k < na; ++k) Aug(k, k) += lambda * std::max(JtJ(k, k), 1e-300);
      const Eigen::VectorXd step = Aug.ldlt().solve(g);
      if (!step.allFinite()) {
        lambda *= 10.0;
        continue;
      }
      Eigen::VectorXd trial = p;
      for (Eigen::Index k = 0; k < na; ++k) trial[active[static_cast<std::size_t>(k)]] += step[k];
      trial[m.W()] = std::max(trial[m.W()], w_floor);
      trial[m.A()] = std::clamp(trial[m.A()], 0.0, kMaxDamping);
      trial[m.Kappa()] = std::max(trial[m.Kappa()], 0.0);
      m.Evaluate(trial, trial_y, nullptr);
      const double trial_chi2 = (data - trial_y).squaredNorm();
      if (std::isfinite(trial_chi2) && trial_chi2 <= chi2) {
        const double drop = chi2 - trial_chi2;
        p = trial;
        improved = true;
        lambda = std::max(lambda / 5.0, 1e-12);
        m.Evaluate(p, y, &J);
        const bool small = drop <= 1e-12 * chi2 + 1e-300;
        chi2 = trial_chi2;
        if (small) {
          out.converged = true;
          out.chi2 = chi2;
          return out;
        }
      } else {
        lambda *= 5.0;
      }
    }
    if (!improved) {  // no downhill step at any damping: a minimum
      out.converged = true;
      break;
    }
  }
  out.chi2 = chi2;
  return out;
}

// Moments of |I - base| over the samples: centroid and 1/e half-width sqrt(2 m2 / m0).
void Moments(const std::vector<double>& x, const Eigen::VectorXd& d, double base, double& centre, double& width) {
  double m0 = 0.0, m1 = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double w = std::fabs(d[static_cast<Eigen::Index>(i)] - base);
    m0 += w;
    m1 += w * x[i];
  }
  centre = m1 / m0;
  double m2 = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i)
    m2 += std::fabs(d[static_cast<Eigen::Index>(i)] - base) * (x[i] - centre) * (x[i] - centre);
  width = std::sqrt(2.0 * m2 / m0);
}

}  // namespace

ComponentFitResult FitZeemanComponents(const PixelSpectrum& s, double noise_I, const ComponentFitOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  ComponentFitResult r;
  r.pattern_mode = o.free_components == 0;
  r.damping_fitted = !o.fixed_damping.has_value();
  const double l0 = o.rest_wavelength_nm;

  // Samples in the window.
  std::size_t first = 0, last = s.n;
  if (o.window_halfwidth_nm > 0.0) {
    while (first < s.n && s.wavelength_nm[first] < l0 - o.window_halfwidth_nm) ++first;
    last = first;
    while (last < s.n && s.wavelength_nm[last] <= l0 + o.window_halfwidth_nm) ++last;
  }
  r.first = first;
  r.count = last - first;
  std::vector<double> x(s.wavelength_nm + first, s.wavelength_nm + last);
  Eigen::VectorXd data(static_cast<Eigen::Index>(r.count));
  for (std::size_t i = 0; i < r.count; ++i) data[static_cast<Eigen::Index>(i)] = s.I[first + i];

  // Lines of the model.
  std::vector<Line> lines;
  int groups = 0;
  if (r.pattern_mode) {
    groups = 3;
    for (const auto& c : o.pattern.components)
      if (c.strength > 0.0) lines.push_back({c.shift_lorentz, c.strength, c.q + 1, c.q == 0 ? 1 : 0});
  } else {
    groups = o.free_components;
    for (int k = 0; k < groups; ++k) lines.push_back({0.0, 1.0, k, k});
  }
  const double C = LorentzUnit_nm(l0, 1.0);
  const double wi = o.instrument_fwhm_nm / (2.0 * std::sqrt(std::log(2.0)));
  const Model model(x, l0, C, wi, r.pattern_mode, lines, groups, r.pattern_mode ? 2 : groups);
  const int np = model.ParamCount();
  // Absorption or emission: the larger excursion from the edge level.
  const std::size_t edge0 = std::max<std::size_t>(2, r.count / 10);
  double edge_level = 0.0;
  for (std::size_t i = 0; i < edge0 && i < r.count; ++i) edge_level += data[static_cast<Eigen::Index>(i)] + data[static_cast<Eigen::Index>(r.count - 1 - i)];
  edge_level /= static_cast<double>(2 * edge0);
  const bool absorption = (edge_level - data.minCoeff()) > (data.maxCoeff() - edge_level);
  r.saturation_fitted = absorption && o.fit_saturation;
  std::vector<int> active;
  for (int k = 0; k < np; ++k)
    if ((k != model.A() || r.damping_fitted) && (k != model.Kappa() || r.saturation_fitted)) active.push_back(k);
  if (r.count < active.size() + 3) {
    r.message = "only " + std::to_string(r.count) + " samples in the fit window for " + std::to_string(active.size()) +
                " parameters";
    return r;
  }

  // Starting values.
  const std::size_t edge = std::max<std::size_t>(2, r.count / 10);
  double base = 0.0;
  for (std::size_t i = 0; i < edge; ++i)
    base += data[static_cast<Eigen::Index>(i)] + data[static_cast<Eigen::Index>(r.count - 1 - i)];
  base /= static_cast<double>(2 * edge);
  double centroid = 0.0, w_obs = 0.0;
  Moments(x, data, base, centroid, w_obs);
  const double step = (x.back() - x.front()) / static_cast<double>(r.count - 1);
  if (!std::isfinite(centroid) || !(w_obs > 0.0)) {
    r.message = "no line signal in the fit window";
    return r;
  }
  const double a0 = o.fixed_damping ? *o.fixed_damping : 0.05;
  const double w_floor = 1e-3 * std::max(step, w_obs);
  auto intrinsic = [&](double w_observed) {
    return std::sqrt(std::max(w_observed * w_observed - wi * wi, std::pow(0.05 * w_observed, 2)));
  };
  Eigen::VectorXd p = Eigen::VectorXd::Zero(np);
  p[model.A()] = a0;
  Eigen::Index peak = 0;
  (data.array() - base).abs().maxCoeff(&peak);
  if (r.pattern_mode) {
    double smax = 0.0;
    for (const Line& l : lines) smax = std::max(smax, std::fabs(l.shift_lorentz));
    const double half_range = 0.5 * (x.back() - x.front());
    const double b_max = smax > 0.0 ? 0.9 * half_range / (smax * C) : 0.0;
    double best = std::numeric_limits<double>::infinity();
    Eigen::VectorXd trial = p, y_trial;
    const double lc_start[2] = {centroid, x[static_cast<std::size_t>(peak)]};
    const double w_fracs[] = {0.08, 0.12, 0.18, 0.27, 0.4, 0.6, 0.85, 1.1};
    const int nb = smax > 0.0 ? 40 : 1;
    // Saturation candidates (absorption): kappa * depth in [0, 1); the data are mapped to the linear
    // line term S = (I - c) / (1 + kappa (I - c)) so that the areas stay a linear problem.
    const double depth = edge_level - data.minCoeff();
    std::vector<double> kappas = {0.0};
    if (r.saturation_fitted && depth > 0.0)
      for (double f : {0.3, 0.5, 0.7, 0.8, 0.9, 0.95}) kappas.push_back(f / depth);
    for (double kappa : kappas) {
      Eigen::VectorXd linear = data;
      for (Eigen::Index i = 0; i < linear.size(); ++i) {
        const double d = data[i] - edge_level;
        linear[i] = edge_level + d / std::max(1.0 + kappa * d, 0.02);
      }
      for (double lc : lc_start)
        for (double wf : w_fracs)
          for (int b = 0; b < nb; ++b) {
            trial[0] = lc;
            trial[1] = nb > 1 ? b_max * b / (nb - 1) : 0.0;
            trial[model.W()] = std::max(intrinsic(wf * w_obs), w_floor);
            trial[model.Kappa()] = 0.0;
            SolveLinear(model, trial, linear);
            trial[model.Kappa()] = kappa;
            model.Evaluate(trial, y_trial, nullptr);
            const double chi2 = (data - y_trial).squaredNorm();
            if (chi2 < best) {
              best = chi2;
              p = trial;
            }
          }
    }
  } else {
    // The N strongest local extrema of sense * (I - base).
    const double sense = (data.maxCoeff() - base) >= (base - data.minCoeff()) ? 1.0 : -1.0;
    std::vector<std::pair<double, std::size_t>> peaks;
    for (std::size_t i = 1; i + 1 < r.count; ++i) {
      const double v = sense * (data[static_cast<Eigen::Index>(i)] - base);
      if (v > sense * (data[static_cast<Eigen::Index>(i - 1)] - base) &&
          v >= sense * (data[static_cast<Eigen::Index>(i + 1)] - base))
        peaks.push_back({v, i});
    }
    std::sort(peaks.begin(), peaks.end(), [](const auto& a, const auto& b) { return a.first > b.first; });
    std::vector<double> pos;
    for (std::size_t k = 0; k < peaks.size() && pos.size() < static_cast<std::size_t>(groups); ++k)
      pos.push_back(x[peaks[k].second]);
    // Half-width of the strongest peak at half maximum.
    double hwhm = w_obs;
    if (!peaks.empty()) {
      const std::size_t ip = peaks.front().second;
      const double half = 0.5 * peaks.front().first;
      std::size_t lo = ip, hi = ip;
      while (lo > 0 && sense * (data[static_cast<Eigen::Index>(lo)] - base) > half) --lo;
      while (hi + 1 < r.count && sense * (data[static_cast<Eigen::Index>(hi)] - base) > half) ++hi;
      hwhm = std::max(0.5 * (x[hi] - x[lo]), step);
    }
    while (pos.size() < static_cast<std::size_t>(groups))
      pos.push_back((pos.empty() ? centroid : pos.front()) + hwhm * (pos.size() % 2 ? 1.0 : -1.0) *
                                                                 static_cast<double>(pos.size() + 1) / 2.0);
    std::sort(pos.begin(), pos.end());
    for (int k = 0; k < groups; ++k) p[model.Pos(k)] = pos[static_cast<std::size_t>(k)];
    p[model.W()] = std::max(intrinsic(hwhm / std::sqrt(std::log(2.0))), w_floor);
    SolveLinear(model, p, data);
  }

  // Levenberg-Marquardt.
  const LmOutcome lm = LevenbergMarquardt(model, p, data, active, o.max_iterations, w_floor);
  r.iterations = lm.iterations;
  if (!p.allFinite()) {
    r.message = "the fit diverged";
    return r;
  }
  if (r.pattern_mode && p[1] < 0.0) p[1] = -p[1];  // a pattern is symmetric: B and -B give the same I

  // Covariance of the active parameters, mapped back to the full layout.
  Eigen::VectorXd y;
  Eigen::MatrixXd J;
  model.Evaluate(p, y, &J, &r.parts);
  r.dof = static_cast<int>(r.count) - static_cast<int>(active.size());
  const double sigma = noise_I > 0.0 ? noise_I : 0.0;
  r.chi2_reduced = sigma > 0.0 ? lm.chi2 / (sigma * sigma) / r.dof : kNaN;
  const double s2 = sigma > 0.0 ? sigma * sigma * std::max(1.0, r.chi2_reduced) : lm.chi2 / r.dof;
  const Eigen::Index na = static_cast<Eigen::Index>(active.size());
  Eigen::MatrixXd Ja(J.rows(), na);
  for (Eigen::Index k = 0; k < na; ++k) Ja.col(k) = J.col(active[static_cast<std::size_t>(k)]);
  Eigen::MatrixXd cov = Eigen::MatrixXd::Constant(np, np, kNaN);
  Eigen::FullPivLU<Eigen::MatrixXd> lu(Ja.transpose() * Ja);
  if (lu.isInvertible()) {
    const Eigen::MatrixXd ca = lu.inverse() * s2;
    for (Eigen::Index i = 0; i < na; ++i)
      for (Eigen::Index j = 0; j < na; ++j) cov(active[i], active[j]) = ca(i, j);
  } else {
    r.message = "singular normal matrix: some parameters are not constrained (errors are NaN)";
  }
  for (int fixed : {r.damping_fitted ? -1 : model.A(), r.saturation_fitted ? -1 : model.Kappa()}) {
    if (fixed < 0) continue;
    cov.row(fixed).setZero();
    cov.col(fixed).setZero();
  }
  auto err = [&](int i) { return std::sqrt(std::max(cov(i, i), 0.0)) + (std::isnan(cov(i, i)) ? kNaN : 0.0); };
  // Variance of a linear combination g . p.
  auto combo_err = [&](const Eigen::VectorXd& g) {
    const double v = g.dot(cov * g);
    return std::isfinite(v) ? std::sqrt(std::max(v, 0.0)) : kNaN;
  };

  r.model.assign(y.data(), y.data() + y.size());
  r.continuum = p[model.C0()];
  r.continuum_slope = p[model.C1()];
  r.doppler_width_nm = p[model.W()];
  r.doppler_width_err_nm = err(model.W());
  r.damping = p[model.A()];
  r.damping_err = r.damping_fitted ? err(model.A()) : 0.0;
  r.saturation = p[model.Kappa()];
  r.saturation_err = r.saturation_fitted ? err(model.Kappa()) : 0.0;
  r.component_fwhm_nm = model.ObservedFwhm(r.doppler_width_nm, r.damping);
  const double c_kms = constants::kSpeedOfLight_m_s * 1e-3;
  const double g_eff = o.pattern.g_eff;

  if (r.pattern_mode) {
    r.centre_nm = p[0];
    r.centre_err_nm = err(0);
    r.field_gauss = p[1];
    r.field_err_gauss = err(1);
    r.has_field = true;
    const char* labels[3] = {SigmaGroupLabel(-1), SigmaGroupLabel(0), SigmaGroupLabel(+1)};
    double mean_shift[3] = {0.0, 0.0, 0.0}, total[3] = {0.0, 0.0, 0.0};
    for (const Line& l : lines) {
      mean_shift[l.group] += l.strength * l.shift_lorentz;
      total[l.group] += l.strength;
    }
    for (int g = 0; g < 3; ++g) {
      if (!(total[g] > 0.0)) continue;
      mean_shift[g] /= total[g];
      FittedComponent c;
      c.label = labels[g];
      c.position_nm = p[0] + mean_shift[g] * C * p[1];
      Eigen::VectorXd grad = Eigen::VectorXd::Zero(np);
      grad[0] = 1.0;
      grad[1] = mean_shift[g] * C;
      c.position_err_nm = combo_err(grad);
      c.area = p[model.Area(g == 1 ? 1 : 0)];
      c.area_err = err(model.Area(g == 1 ? 1 : 0));
      c.fwhm_nm = r.component_fwhm_nm;
      r.components.push_back(c);
    }
    for (const Line& l : lines)
      r.lines.push_back({l.group - 1, l.shift_lorentz, l.strength, model.LinePosition(p, l), model.LineArea(p, l)});
    const double dm = mean_shift[2] - mean_shift[0];
    r.sigma_separation_nm = dm * C * r.field_gauss;
    r.sigma_separation_err_nm = std::fabs(dm) * C * r.field_err_gauss;
  } else {
    std::vector<int> order(static_cast<std::size_t>(groups));
    for (int k = 0; k < groups; ++k) order[static_cast<std::size_t>(k)] = k;
    std::sort(order.begin(), order.end(), [&](int a, int b) { return p[model.Pos(a)] < p[model.Pos(b)]; });
    // Relabel the parts in wavelength order.
    std::vector<std::vector<double>> parts;
    for (int k : order) parts.push_back(r.parts[static_cast<std::size_t>(k)]);
    r.parts = parts;
    for (std::size_t j = 0; j < order.size(); ++j) {
      const int k = order[j];
      FittedComponent c;
      c.label = "c" + std::to_string(j + 1);
      c.position_nm = p[model.Pos(k)];
      c.position_err_nm = err(model.Pos(k));
      c.area = p[model.Area(k)];
      c.area_err = err(model.Area(k));
      c.fwhm_nm = r.component_fwhm_nm;
      r.components.push_back(c);
    }
    // Centre: area-weighted centroid of all components; sigma groups: the components bluer / redder than
    // the middle one.
    auto centroid_of = [&](std::size_t from, std::size_t to, Eigen::VectorXd& grad) {
      double sw = 0.0, swx = 0.0;
      for (std::size_t j = from; j < to; ++j) {
        const int k = order[j];
        sw += std::fabs(p[model.Area(k)]);
        swx += std::fabs(p[model.Area(k)]) * p[model.Pos(k)];
      }
      const double c = swx / sw;
      grad = Eigen::VectorXd::Zero(np);
      for (std::size_t j = from; j < to; ++j) {
        const int k = order[j];
        grad[model.Pos(k)] = std::fabs(p[model.Area(k)]) / sw;
        grad[model.Area(k)] = (p[model.Area(k)] >= 0.0 ? 1.0 : -1.0) * (p[model.Pos(k)] - c) / sw;
      }
      return c;
    };
    Eigen::VectorXd gc;
    r.centre_nm = centroid_of(0, order.size(), gc);
    r.centre_err_nm = combo_err(gc);
    if (groups >= 2) {
      const std::size_t nb = order.size() / 2;
      const std::size_t start_r = order.size() - nb;
      Eigen::VectorXd gb, gr;
      const double cb = centroid_of(0, nb, gb), cr = centroid_of(start_r, order.size(), gr);
      r.sigma_separation_nm = cr - cb;
      r.sigma_separation_err_nm = combo_err(gr - gb);
      if (g_eff != 0.0) {
        r.has_field = true;
        r.field_gauss = r.sigma_separation_nm / (2.0 * std::fabs(g_eff) * C);
        r.field_err_gauss = r.sigma_separation_err_nm / (2.0 * std::fabs(g_eff) * C);
      }
    }
  }
  r.vlos_kms = c_kms * (r.centre_nm - l0) / l0;
  r.vlos_err_kms = c_kms * r.centre_err_nm / l0;
  r.resolved = r.sigma_separation_nm >= o.resolution_ratio * r.component_fwhm_nm &&
               r.sigma_separation_nm > 3.0 * r.sigma_separation_err_nm;
  if (r.resolved) {
    // The split must also show in the fitted profile: a local extremum of the line term (in the line's
    // sense) within half a component FWHM of both the blue and the red sigma centroid.
    const double half_sep = 0.5 * r.sigma_separation_nm;
    const double centres[2] = {r.pattern_mode ? r.components.front().position_nm : r.centre_nm - half_sep,
                               r.pattern_mode ? r.components.back().position_nm : r.centre_nm + half_sep};
    // A widely spread group (mixed regime, wide anomalous patterns) peaks at its strongest line, not at its
    // centroid: an extremum near either counts.
    double strongest[2] = {centres[0], centres[1]}, best[2] = {-1.0, -1.0};
    for (const PlacedLine& pl : r.lines)
      if (pl.q != 0 && pl.strength > best[pl.q > 0 ? 1 : 0]) {
        best[pl.q > 0 ? 1 : 0] = pl.strength;
        strongest[pl.q > 0 ? 1 : 0] = pl.position_nm;
      }
    const int fine_n = 2001;
    std::vector<double> fine(fine_n);
    for (int i = 0; i < fine_n; ++i) fine[static_cast<std::size_t>(i)] = x.front() + (x.back() - x.front()) * i / (fine_n - 1);
    const Model fine_model(fine, l0, C, wi, r.pattern_mode, lines, groups, r.pattern_mode ? 2 : groups);
    Eigen::VectorXd yf;
    fine_model.Evaluate(p, yf, nullptr);
    const double sense = absorption ? -1.0 : 1.0;
    bool found[2] = {false, false};
    for (int i = 1; i + 1 < fine_n; ++i) {
      const double v = sense * yf[i];
      if (!(v > sense * yf[i - 1] && v >= sense * yf[i + 1])) continue;
      for (int k = 0; k < 2; ++k)
        if (std::fabs(fine[static_cast<std::size_t>(i)] - centres[k]) <= 0.5 * r.component_fwhm_nm ||
            std::fabs(fine[static_cast<std::size_t>(i)] - strongest[k]) <= 0.5 * r.component_fwhm_nm)
          found[k] = true;
    }
    r.resolved = found[0] && found[1];
  }
  r.ok = true;
  if (!lm.converged && r.message.empty())
    r.message = "Levenberg-Marquardt stopped after " + std::to_string(lm.iterations) + " iterations without converging";
  return r;
}

}  // namespace zeeline
