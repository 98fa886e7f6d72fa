#include "zeeline/broadening/width_diagnosis.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>
#include <numeric>
#include <sstream>

#include <Eigen/Dense>

#include "zeeline/broadening/doppler_width.hpp"
#include "zeeline/broadening/zeeman_width.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/maps/centre_of_gravity.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"
#include "zeeline/maps/weak_field.hpp"

namespace zeeline {
namespace {

constexpr double kCkms = constants::kSpeedOfLight_m_s * 1e-3;
constexpr double kFwhmPerE = 1.6651092223153954;  // 2 sqrt(ln 2): Gaussian FWHM / 1/e half-width
constexpr double kNoiseExcludeFwhm = 2.5;         // noise samples lie this many FWHM away from every line
constexpr double kWindowFwhm = 5.0;               // automatic window half-width in observed FWHM
constexpr double kGapFactor = 5.0;                // a spacing this many times the median starts a new segment

// Nonlinear parameter order: speed, gamma, vlos, field, inclination.
enum Param { kSpeed = 0, kGamma, kVlos, kField, kIncl, kParams };

using Vec = Eigen::VectorXd;
using Mat = Eigen::MatrixXd;

Vec ToVec(const LineSetShape& s) {
  Vec p(kParams);
  p << s.speed_kms, s.lorentz_hwhm_nm, s.vlos_kms, s.field_gauss, s.inclination_deg;
  return p;
}
LineSetShape ToShape(const Vec& p) {
  LineSetShape s;
  s.speed_kms = p[kSpeed];
  s.lorentz_hwhm_nm = p[kGamma];
  s.vlos_kms = p[kVlos];
  s.field_gauss = p[kField];
  s.inclination_deg = p[kIncl];
  return s;
}

// Observed line: the index range of its segment, its peak and FWHM.
struct LineLook {
  double peak_nm = 0.0, fwhm_nm = 0.0, baseline = 0.0;
  double lo_nm = 0.0, hi_nm = 0.0;  // window
};

double Median(std::vector<double> v) {
  if (v.empty()) return NAN;
  std::nth_element(v.begin(), v.begin() + static_cast<long>(v.size() / 2), v.end());
  return v[v.size() / 2];
}

LineLook LookAtLine(const Spectrum1D& s, const std::string& name, double l0, double median_step, double given_window) {
  const auto& w = s.wavelength_nm;
  const std::size_t n = w.size();
  if (l0 < w.front() || l0 > w.back()) {
    std::ostringstream m;
    m << s.source << ": line " << name << " at " << l0 << " nm lies outside the spectrum (" << w.front() << " - "
      << w.back() << " nm)";
    throw BroadeningError(m.str());
  }
  std::size_t c = static_cast<std::size_t>(std::lower_bound(w.begin(), w.end(), l0) - w.begin());
  if (c >= n) c = n - 1;
  if (c > 0 && l0 - w[c - 1] < w[c] - l0) --c;
  if (std::fabs(w[c] - l0) > kGapFactor * median_step) {
    std::ostringstream m;
    m << s.source << ": line " << name << " at " << l0 << " nm falls in a gap of the spectrum (nearest sample "
      << w[c] << " nm)";
    throw BroadeningError(m.str());
  }
  std::size_t b = c, e = c;  // segment [b, e]
  while (b > 0 && w[b] - w[b - 1] <= kGapFactor * median_step) --b;
  while (e + 1 < n && w[e + 1] - w[e] <= kGapFactor * median_step) ++e;
  if (e - b + 1 < kMinSpectrumSamples) {
    std::ostringstream m;
    m << s.source << ": line " << name << " at " << l0 << " nm: only " << (e - b + 1)
      << " samples around it (need at least " << kMinSpectrumSamples << ")";
    throw BroadeningError(m.str());
  }
  // Baseline: median of the outer 15 % of the segment on each side.
  const std::size_t len = e - b + 1, edge = std::max<std::size_t>(2, len * 15 / 100);
  std::vector<double> outer;
  for (std::size_t k = 0; k < edge; ++k) {
    outer.push_back(s.I[b + k]);
    outer.push_back(s.I[e - k]);
  }
  LineLook look;
  look.baseline = Median(outer);
  // Peak of |I - baseline| within 300 km/s of the rest wavelength.
  const double reach = l0 * 300.0 / kCkms;
  std::size_t p = c;
  double best = -1.0;
  for (std::size_t k = b; k <= e; ++k)
    if (std::fabs(w[k] - l0) <= reach && std::fabs(s.I[k] - look.baseline) > best) {
      best = std::fabs(s.I[k] - look.baseline);
      p = k;
    }
  const double half = 0.5 * best;
  std::size_t l = p, r = p;
  while (l > b && std::fabs(s.I[l] - look.baseline) > half) --l;
  while (r < e && std::fabs(s.I[r] - look.baseline) > half) ++r;
  look.peak_nm = w[p];
  look.fwhm_nm = std::max(w[r] - w[l], 2.0 * median_step);
  const double hw = given_window > 0.0 ? given_window : std::max(kWindowFwhm * look.fwhm_nm, 6.0 * median_step);
  look.lo_nm = std::max(w[b], l0 - hw);
  look.hi_nm = std::min(w[e], l0 + hw);
  return look;
}

// The weighted least-squares problem: rows of I (and V), windows grouped for the continuum.
struct Problem {
  std::vector<ModelLine> lines;
  double instrument_fwhm_nm = 0.0;
  std::vector<double> wl;       // fitted wavelengths (each once)
  std::vector<double> I, V;     // data at wl (V empty when not fitted)
  std::vector<int> group;       // continuum group of each sample
  std::vector<double> group_ref;
  double sigma_I = 1.0, sigma_V = 1.0;
  double reach_nm = 0.0;  // line profiles are computed within this distance of their line
  int n_groups = 0;
  // scratch
  mutable std::vector<std::vector<double>> pI, pV;

  int Rows() const { return static_cast<int>(wl.size() + V.size()); }
  int LinearParams() const { return static_cast<int>(lines.size()) + 2 * n_groups; }

  // Weighted design matrix and data for one shape.
  void Design(const LineSetShape& shape, Mat& X, Vec& y) const {
    LineSetProfiles(lines, shape, instrument_fwhm_nm, wl, pI, pV, reach_nm);
    const int n = static_cast<int>(wl.size()), rows = Rows(), nl = static_cast<int>(lines.size());
    X.setZero(rows, LinearParams());
    y.resize(rows);
    for (int s = 0; s < n; ++s) {
      for (int i = 0; i < nl; ++i) X(s, i) = pI[i][s] / sigma_I;
      const int g = group[s];
      X(s, nl + 2 * g) = 1.0 / sigma_I;
      X(s, nl + 2 * g + 1) = (wl[s] - group_ref[g]) / sigma_I;
      y[s] = I[s] / sigma_I;
    }
    if (!V.empty())
      for (int s = 0; s < n; ++s) {
        for (int i = 0; i < nl; ++i) X(n + s, i) = pV[i][s] / sigma_V;
        y[n + s] = V[s] / sigma_V;
      }
  }

  // Projected residuals: data minus the best linear combination for this shape.
  Vec Residuals(const LineSetShape& shape, Vec* beta = nullptr, Mat* cov = nullptr) const {
    Mat X;
    Vec y;
    Design(shape, X, y);
    const Mat XtX = X.transpose() * X;
    // Column scaling keeps the normal equations well conditioned (areas and continuum differ in size).
    Vec scale = XtX.diagonal().cwiseSqrt();
    for (int k = 0; k < scale.size(); ++k)
      if (!(scale[k] > 0.0)) scale[k] = 1.0;
    const Mat A = scale.cwiseInverse().asDiagonal() * XtX * scale.cwiseInverse().asDiagonal();
    const Eigen::LDLT<Mat> ldlt(A);
    const Vec b = ldlt.solve(scale.cwiseInverse().asDiagonal() * (X.transpose() * y));
    const Vec coef = scale.cwiseInverse().asDiagonal() * b;
    if (beta) *beta = coef;
    if (cov) {
      const Mat inv = ldlt.solve(Mat::Identity(A.rows(), A.cols()));
      *cov = scale.cwiseInverse().asDiagonal() * inv * scale.cwiseInverse().asDiagonal();
    }
    return y - X * coef;
  }
};

struct Bounds {
  Vec lo, hi;
};

// Levenberg-Marquardt on the free nonlinear parameters (mask) with box limits by projection.
struct LmResult {
  Vec p;
  double chi2 = 0.0;
  Mat jtj;  // at the solution, free parameters only
  int iterations = 0;
};

LmResult Minimise(const Problem& prob, Vec p, const std::vector<int>& free, const Bounds& box, const Vec& typical,
                  int max_iterations = 100) {
  const int m = static_cast<int>(free.size());
  auto clamp = [&](Vec& q) {
    for (int k = 0; k < kParams; ++k) q[k] = std::clamp(q[k], box.lo[k], box.hi[k]);
  };
  clamp(p);
  Vec r = prob.Residuals(ToShape(p));
  double chi2 = r.squaredNorm();
  double lambda = 1e-3;
  LmResult out;
  Mat J(r.size(), m);
  // Forward differences of the projected residuals (backward at an upper limit).
  auto jacobian = [&] {
    for (int j = 0; j < m; ++j) {
      const int k = free[j];
      Vec q = p;
      double h = 1e-6 * std::max(std::fabs(p[k]), typical[k]);
      if (q[k] + h > box.hi[k]) h = -h;
      q[k] += h;
      J.col(j) = (prob.Residuals(ToShape(q)) - r) / h;
    }
  };
  for (int it = 0; it < max_iterations; ++it) {
    out.iterations = it + 1;
    jacobian();
    const Mat JtJ = J.transpose() * J;
    const Vec g = J.transpose() * r;
    bool improved = false;
    for (int tries = 0; tries < 12; ++tries) {
      Mat A = JtJ;
      for (int j = 0; j < m; ++j) A(j, j) += lambda * std::max(JtJ(j, j), 1e-30);
      const Vec step = A.ldlt().solve(-g);
      Vec q = p;
      for (int j = 0; j < m; ++j) q[free[j]] += step[j];
      clamp(q);
      const Vec rq = prob.Residuals(ToShape(q));
      const double c2 = rq.squaredNorm();
      if (std::isfinite(c2) && c2 < chi2) {
        const double gain = chi2 - c2;
        p = q;
        r = rq;
        chi2 = c2;
        lambda = std::max(lambda * 0.3, 1e-9);
        improved = true;
        if (gain < 1e-7 * std::max(1.0, chi2)) it = max_iterations;  // converged
        break;
      }
      lambda *= 8.0;
    }
    if (!improved) break;
  }
  jacobian();  // at the solution, for the covariance
  out.p = p;
  out.chi2 = chi2;
  out.jtj = J.transpose() * J;
  return out;
}

ModelFit MakeFit(const Problem& prob, const LmResult& lm, const std::vector<int>& free, std::size_t n_lines) {
  ModelFit f;
  f.shape = ToShape(lm.p);
  f.chi2 = lm.chi2;
  f.iterations = lm.iterations;
  f.dof = prob.Rows() - prob.LinearParams() - static_cast<int>(free.size());
  const double s2 = std::max(1.0, f.dof > 0 ? f.chi2 / f.dof : 1.0);
  // A parameter the data do not constrain (singular J^T J) gets NaN, never a falsely small error.
  // Scaled to unit diagonal first: the parameters differ by many orders of magnitude in size.
  Vec dscale = lm.jtj.diagonal().cwiseSqrt();
  for (long k = 0; k < dscale.size(); ++k)
    if (!(dscale[k] > 0.0)) dscale[k] = 1.0;
  const Mat scaled = dscale.cwiseInverse().asDiagonal() * lm.jtj * dscale.cwiseInverse().asDiagonal();
  Eigen::FullPivLU<Mat> lu(scaled);
  lu.setThreshold(1e-12);
  const Mat cov = lu.isInvertible()
                      ? Mat(dscale.cwiseInverse().asDiagonal() * lu.inverse() * dscale.cwiseInverse().asDiagonal() * s2)
                      : Mat::Constant(lm.jtj.rows(), lm.jtj.cols(), NAN);
  double* errs[kParams] = {&f.speed_err_kms, &f.lorentz_hwhm_err_nm, &f.vlos_err_kms, &f.field_err_gauss,
                           &f.inclination_err_deg};
  for (std::size_t j = 0; j < free.size(); ++j) {
    const double var = cov(static_cast<long>(j), static_cast<long>(j));
    *errs[free[j]] = var > 0.0 ? std::sqrt(var) : NAN;
  }
  Vec beta;
  Mat lin_cov;
  const Vec r = prob.Residuals(f.shape, &beta, &lin_cov);
  const std::size_t n = prob.wl.size();
  for (std::size_t k = 0; k < n; ++k) f.model_I.push_back(prob.I[k] - r[static_cast<long>(k)] * prob.sigma_I);
  for (std::size_t k = 0; k < prob.V.size(); ++k)
    f.model_V.push_back(prob.V[k] - r[static_cast<long>(n + k)] * prob.sigma_V);
  for (std::size_t i = 0; i < n_lines; ++i) {
    f.areas.push_back(beta[static_cast<long>(i)]);
    f.area_errs.push_back(std::sqrt(std::max(0.0, lin_cov(static_cast<long>(i), static_cast<long>(i)) * s2)));
  }
  return f;
}

double RelativeSpread(const std::vector<double>& v) {
  const auto [mn, mx] = std::minmax_element(v.begin(), v.end());
  if (*mx <= 0.0) return 0.0;
  if (*mn <= 0.0) return INFINITY;
  return *mx / *mn - 1.0;
}

std::string Fmt(const char* format, double a, double b = 0.0, double c = 0.0) {
  char buf[256];
  std::snprintf(buf, sizeof buf, format, a, b, c);
  return buf;
}

}  // namespace

bool SpectrumCovers(const Spectrum1D& s, double wavelength_nm) {
  const auto& w = s.wavelength_nm;
  if (w.size() < 2 || wavelength_nm < w.front() || wavelength_nm > w.back()) return false;
  std::vector<double> steps;
  for (std::size_t k = 1; k < w.size(); ++k) steps.push_back(w[k] - w[k - 1]);
  const double median_step = Median(steps);
  const auto it = std::lower_bound(w.begin(), w.end(), wavelength_nm);
  const double right = *it - wavelength_nm, left = it == w.begin() ? 0.0 : wavelength_nm - *(it - 1);
  return std::min(left, right) <= kGapFactor * median_step;
}

double GaussianSigmaFromLogP(double log_p) {
  if (!(log_p < 0.0)) return 0.0;
  // log of the upper normal tail Q(z) = erfc(z / sqrt 2) / 2, with its asymptotic series where erfc underflows.
  auto log_tail = [](double z) {
    if (z < 30.0) return std::log(0.5 * std::erfc(z / std::sqrt(2.0)));
    const double z2 = z * z;
    return -0.5 * z2 - std::log(z * std::sqrt(2.0 * constants::kPi)) + std::log1p(-1.0 / z2 + 3.0 / (z2 * z2));
  };
  if (log_p >= std::log(0.5)) return 0.0;
  double lo = 0.0, hi = 1.0;
  while (log_tail(hi) > log_p) hi *= 2.0;
  for (int i = 0; i < 100; ++i) {
    const double mid = 0.5 * (lo + hi);
    (log_tail(mid) > log_p ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

std::string WidthDiagnosisOptions::Validate() const {
  std::ostringstream m;
  if (lines.empty()) return "no lines to diagnose: name at least one";
  for (const DiagnosisLine& l : lines)
    if (!(l.line.rest_wavelength_nm > 0.0)) {
      m << "line " << l.name << ": rest wavelength " << l.line.rest_wavelength_nm << " nm must be > 0";
      return m.str();
    }
  if (!(mass_u > 0.0)) return "mass_u = " + std::to_string(mass_u) + " must be > 0";
  if (!(microturbulence_kms >= 0.0)) return "microturbulence_kms must be >= 0";
  if (!(instrument_fwhm_nm >= 0.0)) return "instrument_fwhm_nm must be >= 0";
  if (!(window_halfwidth_nm >= 0.0)) return "window_halfwidth_nm must be >= 0";
  if (!(noise_I >= 0.0) || !(noise_V >= 0.0)) return "noise levels must be >= 0";
  if (!(detection_sigma > 0.0)) return "detection_sigma = " + std::to_string(detection_sigma) + " must be > 0";
  if (!(degeneracy_tolerance >= 0.0)) return "degeneracy_tolerance must be >= 0";
  if (!(confidence_delta_chi2 > 0.0)) return "confidence_delta_chi2 must be > 0";
  return "";
}

WidthDiagnosis DiagnoseWidths(const Spectrum1D& s, const WidthDiagnosisOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  if (s.size() < kMinSpectrumSamples) throw BroadeningError(s.source + ": too few samples");
  WidthDiagnosis d;
  const std::size_t nl = o.lines.size();
  const auto& w = s.wavelength_nm;

  // ---- windows, groups, noise
  std::vector<double> steps;
  for (std::size_t k = 1; k < w.size(); ++k) steps.push_back(w[k] - w[k - 1]);
  const double median_step = Median(steps);
  std::vector<LineLook> looks;
  for (const DiagnosisLine& l : o.lines)
    looks.push_back(LookAtLine(s, l.name, l.line.rest_wavelength_nm, median_step, o.window_halfwidth_nm));
  Problem prob;
  prob.instrument_fwhm_nm = o.instrument_fwhm_nm;
  for (const DiagnosisLine& l : o.lines) prob.lines.push_back(l.line);
  // Merge overlapping windows into continuum groups.
  std::vector<std::size_t> order(nl);
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return looks[a].lo_nm < looks[b].lo_nm; });
  std::vector<std::pair<double, double>> groups;
  for (std::size_t i : order) {
    if (!groups.empty() && looks[i].lo_nm <= groups.back().second)
      groups.back().second = std::max(groups.back().second, looks[i].hi_nm);
    else
      groups.push_back({looks[i].lo_nm, looks[i].hi_nm});
  }
  prob.n_groups = static_cast<int>(groups.size());
  for (const auto& g : groups) prob.group_ref.push_back(0.5 * (g.first + g.second));
  const bool fit_v = o.use_v && s.has_v();
  std::vector<std::size_t> noise_samples;
  for (std::size_t k = 0; k < w.size(); ++k) {
    int g = -1;
    for (int j = 0; j < prob.n_groups; ++j)
      if (w[k] >= groups[static_cast<std::size_t>(j)].first && w[k] <= groups[static_cast<std::size_t>(j)].second) g = j;
    if (g < 0) continue;
    prob.wl.push_back(w[k]);
    prob.I.push_back(s.I[k]);
    if (fit_v) prob.V.push_back(s.V[k]);
    prob.group.push_back(g);
    bool far = true;
    for (std::size_t i = 0; i < nl; ++i)
      if (std::fabs(w[k] - looks[i].peak_nm) < kNoiseExcludeFwhm * looks[i].fwhm_nm) far = false;
    if (far) noise_samples.push_back(k);
  }
  for (std::size_t i = 0; i < nl; ++i) d.window_halfwidth_nm.push_back(0.5 * (looks[i].hi_nm - looks[i].lo_nm));
  if (o.noise_I > 0.0 && (!fit_v || o.noise_V > 0.0)) {
    d.noise_I = o.noise_I;
    d.noise_V = o.noise_V;
  } else {
    if (noise_samples.size() < kMinSpectrumSamples)
      throw BroadeningError(s.source + ": only " + std::to_string(noise_samples.size()) +
                            " samples away from the lines to measure the noise; widen the windows (--window) or "
                            "give the noise (--noise)");
    const ContinuumEstimate ce = EstimateContinuum(s.View(), noise_samples);
    d.noise_I = o.noise_I > 0.0 ? o.noise_I : ce.noise_I;
    d.noise_V = o.noise_V > 0.0 ? o.noise_V : ce.noise_V;
  }
  if (!(d.noise_I > 0.0) || (fit_v && !(d.noise_V > 0.0)))
    throw BroadeningError(s.source + ": the measured noise is zero; give it with --noise");
  double widest = 0.0;
  for (double hw : d.window_halfwidth_nm) widest = std::max(widest, hw);
  prob.reach_nm = std::max(20.0 * widest, 1.0);  // far wings beyond are < 1e-6 of the area per nm
  prob.sigma_I = d.noise_I;
  prob.sigma_V = d.noise_V;
  d.has_v = fit_v;
  d.samples = prob.Rows();
  d.fit_wavelength_nm = prob.wl;

  // ---- starting point from the observed widths
  const double w_instr = o.instrument_fwhm_nm / kFwhmPerE;
  std::vector<double> speeds, vels;
  for (std::size_t i = 0; i < nl; ++i) {
    const double wobs = looks[i].fwhm_nm / kFwhmPerE;
    const double wd = std::sqrt(std::max(wobs * wobs - w_instr * w_instr, 0.04 * wobs * wobs));
    speeds.push_back(kCkms * wd / o.lines[i].line.rest_wavelength_nm);
    vels.push_back(kCkms * (looks[i].peak_nm - o.lines[i].line.rest_wavelength_nm) / o.lines[i].line.rest_wavelength_nm);
  }
  const double u0 = Median(speeds), v0 = Median(vels);
  const double l_ref = o.lines[0].line.rest_wavelength_nm;
  const double wd_ref = l_ref * u0 / kCkms;
  double zmax = 0.0;
  for (const DiagnosisLine& l : o.lines) {
    d.width_factor.push_back(ZeemanWidthFactor(l.line.pattern));
    zmax = std::max(zmax, d.width_factor.back());
  }
  const double field_scale = wd_ref / (LorentzUnit_nm(l_ref, 1.0) * std::max(zmax, 0.3));
  Vec typical(kParams);
  typical << u0, wd_ref, u0, field_scale, 10.0;
  Bounds box{Vec(kParams), Vec(kParams)};
  box.lo << 1e-3 * u0, 0.0, v0 - 20.0 * u0, 0.0, 0.0;
  // The field may move no Zeeman component out of its line's window (beyond, a pi-only fit of I is possible
  // and meaningless).
  double field_max = 1e3 * field_scale;
  for (std::size_t i = 0; i < nl; ++i) {
    double smax = 0.0;
    for (const ZeemanComponent& c : o.lines[i].line.pattern.components) smax = std::max(smax, std::fabs(c.shift_lorentz));
    if (smax > 0.0)
      field_max = std::min(field_max, d.window_halfwidth_nm[i] / (LorentzUnit_nm(o.lines[i].line.rest_wavelength_nm, 1.0) * smax));
  }
  box.hi << 100.0 * u0, 100.0 * wd_ref, v0 + 20.0 * u0, field_max, fit_v ? 180.0 : 90.0;

  // ---- (a) non-magnetic
  const std::vector<int> free_a = {kSpeed, kGamma, kVlos};
  LmResult best_a;
  best_a.chi2 = INFINITY;
  for (double gfrac : {0.02, 0.3}) {
    LineSetShape st;
    st.speed_kms = u0;
    st.lorentz_hwhm_nm = gfrac * wd_ref;
    st.vlos_kms = v0;
    st.field_gauss = 0.0;
    const LmResult r = Minimise(prob, ToVec(st), free_a, box, typical);
    if (r.chi2 < best_a.chi2) best_a = r;
  }
  d.nonmagnetic = MakeFit(prob, best_a, free_a, nl);

  // ---- (b) magnetic
  const std::vector<int> free_b = {kSpeed, kGamma, kVlos, kField, kIncl};
  LmResult best_b = best_a;  // B = 0 reproduces model (a) exactly
  best_b.p[kIncl] = 60.0;
  // Starting grid over (B, inclination, speed), ranked by chi2; Levenberg-Marquardt from the best few.
  std::vector<std::pair<double, Vec>> starts;
  const std::vector<double> incls =
      fit_v ? std::vector<double>{20.0, 50.0, 80.0, 100.0, 130.0, 160.0} : std::vector<double>{20.0, 50.0, 80.0};
  for (double bfrac : {0.3, 0.7, 1.5, 2.5})
    for (double incl : incls)
      for (double ufrac : {0.95, 0.75, 0.5}) {
        Vec p = best_a.p;
        p[kField] = bfrac * field_scale;
        p[kIncl] = incl;
        p[kSpeed] = best_a.p[kSpeed] * ufrac;
        starts.push_back({prob.Residuals(ToShape(p)).squaredNorm(), p});
      }
  std::sort(starts.begin(), starts.end(), [](const auto& x, const auto& y) { return x.first < y.first; });
  for (std::size_t k = 0; k < std::min<std::size_t>(3, starts.size()); ++k) {
    const LmResult r = Minimise(prob, starts[k].second, free_b, box, typical);
    if (r.chi2 < best_b.chi2) best_b = r;
  }
  if (best_b.jtj.rows() != static_cast<long>(free_b.size())) {  // keep the B = 0 start's covariance defined
    best_b = Minimise(prob, best_b.p, free_b, box, typical, 1);
  }
  d.magnetic = MakeFit(prob, best_b, free_b, nl);

  // ---- comparison
  constexpr double kExtra = 2.0;
  d.likelihood_ratio = std::max(0.0, d.nonmagnetic.chi2 - d.magnetic.chi2);
  d.significance_sigma = GaussianSigmaFromLogP(-0.5 * d.likelihood_ratio);
  d.delta_aic = d.likelihood_ratio - 2.0 * kExtra;
  d.delta_bic = d.likelihood_ratio - kExtra * std::log(static_cast<double>(d.samples));

  // ---- degeneracy
  std::vector<double> zl2, zl;
  for (std::size_t i = 0; i < nl; ++i) {
    const double l = o.lines[i].line.rest_wavelength_nm;
    zl2.push_back(d.width_factor[i] * l * l);
    zl.push_back(d.width_factor[i] * l);
  }
  if (zmax == 0.0) {
    d.degenerate = true;
    d.degeneracy_reason = "no line in the set is magnetically sensitive (every Zeeman width factor is 0)";
  } else if (nl == 1) {
    d.degenerate = true;
    d.degeneracy_reason =
        "a single line: its width alone cannot separate thermal, collisional and magnetic broadening";
  } else if (RelativeSpread(zl2) <= o.degeneracy_tolerance) {
    d.degenerate = true;
    d.degeneracy_reason = Fmt("all lines have the same Zeeman width factor x lambda^2 (spread %.1f %% <= %.0f %%): a "
                              "field would widen every line by the same amount in nm, which a shared extra width imitates",
                              100.0 * RelativeSpread(zl2), 100.0 * o.degeneracy_tolerance);
  } else if (RelativeSpread(zl) <= o.degeneracy_tolerance) {
    d.degenerate = true;
    d.degeneracy_reason = Fmt("all lines have the same Zeeman width factor x lambda (spread %.1f %% <= %.0f %%): a "
                              "field would widen every line in proportion to its Doppler width, which a higher "
                              "temperature imitates",
                              100.0 * RelativeSpread(zl), 100.0 * o.degeneracy_tolerance);
  }

  const bool significant = d.significance_sigma >= o.detection_sigma;
  d.magnetic_required = significant && (!d.degenerate || fit_v);

  // ---- field, limit, temperature
  if (d.magnetic_required) {
    d.field_gauss = d.magnetic.shape.field_gauss;
    d.field_err_gauss = d.magnetic.field_err_gauss;
    d.inclination_deg = d.magnetic.shape.inclination_deg;
    d.inclination_err_deg = d.magnetic.inclination_err_deg;
  } else {
    d.field_gauss = d.magnetic.shape.field_gauss;
    d.field_err_gauss = d.magnetic.field_err_gauss;
    // Profile likelihood: chi2_b(B) minimised over everything else, walked up from the best fit.
    const std::vector<int> free_p = {kSpeed, kGamma, kVlos, kIncl};
    const double target = d.magnetic.chi2 + o.confidence_delta_chi2;
    const double err = d.magnetic.field_err_gauss;
    const double step = std::min(0.05 * field_max, std::isfinite(err) && err < field_scale ? std::max(0.15 * field_scale, 0.5 * err)
                                                                                           : 0.15 * field_scale);
    // The inclination is profiled from the previous point's value and from the other side of 45 deg (I alone
    // may have minima at both ends: sigma-only and pi-dominated shapes).
    auto profile = [&](Vec q) {
      LmResult r = Minimise(prob, q, free_p, box, typical, 60);
      q[kIncl] = q[kIncl] < 45.0 ? 80.0 : 20.0;
      const LmResult other = Minimise(prob, q, free_p, box, typical, 60);
      return other.chi2 < r.chi2 ? other : r;
    };
    // [b_lo, b_hi] brackets the crossing; p_lo is the profiled solution at b_lo (the next start).
    double b_lo = best_b.p[kField], b_hi = NAN;
    Vec p_lo = best_b.p;
    auto try_field = [&](double field) {
      Vec q = p_lo;
      q[kField] = field;
      const LmResult r = profile(q);
      if (r.chi2 > target) {
        b_hi = field;
      } else {
        b_lo = field;
        p_lo = r.p;
      }
    };
    for (int k = 1; k <= 60 && std::isnan(b_hi) && b_lo < field_max; ++k) try_field(std::min(b_lo + step, field_max));
    if (!std::isnan(b_hi)) {
      for (int k = 0; k < 10; ++k) try_field(0.5 * (b_lo + b_hi));
      d.upper_limit_gauss = 0.5 * (b_lo + b_hi);
      // One-sided 95 % is 1.645 sigma for a Gaussian likelihood: the error the limit implies.
      d.field_err_gauss = (*d.upper_limit_gauss - d.field_gauss) / 1.645;
    }
  }
  const ModelFit& chosen = d.magnetic_required ? d.magnetic : d.nonmagnetic;
  d.temperature_K = TemperatureFromDopplerSpeed_K(chosen.shape.speed_kms, o.mass_u, o.microturbulence_kms);
  // dT/du = m u / k (u in m/s).
  d.temperature_err_K = o.mass_u * constants::kAtomicMassUnit_kg * chosen.shape.speed_kms * chosen.speed_err_kms * 1e6 /
                        constants::kBoltzmann_J_K;
  d.temperature_nonmagnetic_K =
      TemperatureFromDopplerSpeed_K(d.nonmagnetic.shape.speed_kms, o.mass_u, o.microturbulence_kms);

  // ---- V cross-check: weak field and centre of gravity per line
  if (fit_v) {
    const PixelSpectrum view = s.View();
    for (std::size_t i = 0; i < nl; ++i) {
      LineCrossCheck x;
      x.name = o.lines[i].name;
      const ZeemanPattern& pat = o.lines[i].line.pattern;
      const double l0 = o.lines[i].line.rest_wavelength_nm;
      const double hw = d.window_halfwidth_nm[i];
      if (std::fabs(pat.g_eff) > 1e-6) {
        const SampleRange range = WindowRange(view.wavelength_nm, view.n, l0, hw);
        PixelSpectrum win = view;
        win.wavelength_nm += range.begin;
        win.I += range.begin;
        win.V += range.begin;
        win.Q = win.U = nullptr;
        win.n = range.size();
        ContinuumEstimate noise;
        noise.continuum = looks[i].baseline;
        noise.noise_I = d.noise_I;
        noise.noise_V = d.noise_V;
        WeakFieldOptions wo;
        wo.rest_wavelength_nm = l0;
        wo.g_eff = pat.g_eff;
        wo.window_halfwidth_nm = hw;
        WeakFieldWorkspace work;
        const WeakFieldResult wf = WeakFieldEstimate(win, noise, wo, work);
        CentreOfGravityOptions co;
        co.rest_wavelength_nm = l0;
        co.g_eff = pat.g_eff;
        co.window_halfwidth_nm = hw;
        const CentreOfGravityResult cg = CentreOfGravityEstimate(win, noise, co);
        if (wf.ok && wf.has_blos) {
          x.available = true;
          x.wfa_blos_gauss = wf.blos_gauss;
          x.wfa_blos_err_gauss = wf.blos_err_gauss;
        }
        if (cg.ok) {
          x.available = true;
          x.cog_blos_gauss = cg.blos_gauss;
          x.cog_blos_err_gauss = cg.blos_err_gauss;
        }
      }
      d.cross_checks.push_back(x);
    }
  }

  // ---- verdict
  std::ostringstream v;
  if (d.magnetic_required) {
    v << Fmt("A magnetic field is required: B = %.0f +- %.0f G", d.field_gauss, d.field_err_gauss)
      << Fmt(" at %.3g sigma (likelihood ratio %.1f).", d.significance_sigma, d.likelihood_ratio);
    if (d.degenerate) v << " The widths alone are degenerate (" << d.degeneracy_reason << "); the detection rests on Stokes V.";
  } else if (significant && d.degenerate) {
    v << Fmt("Widths fit better with a field (%.3g sigma), but no detection is claimed: ", d.significance_sigma)
      << d.degeneracy_reason << ".";
  } else {
    v << Fmt("No field is required (%.3g sigma); thermal, Lorentzian and instrumental widths explain the lines.",
             d.significance_sigma);
    if (d.degenerate) v << " Note: " << d.degeneracy_reason << ".";
  }
  if (!d.magnetic_required) {
    if (d.upper_limit_gauss)
      v << Fmt(" 95 %% upper limit B < %.0f G.", *d.upper_limit_gauss);
    else
      v << Fmt(" The data do not bound the field below %.0f G, where Zeeman components would leave the fit windows.",
               field_max);
  }
  d.verdict = v.str();
  return d;
}

}  // namespace zeeline
