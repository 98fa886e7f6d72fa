#include "zeeline/polarimetry/magnet_fit.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "least_squares.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/synth/voigt.hpp"

namespace zeeline::polarimetry {
namespace {

constexpr double kDeg = 3.14159265358979323846 / 180.0;
constexpr double kSqrtPi = 1.7724538509055160273;
const char* kColumn[] = {"I", "Q", "U", "V"};

struct Layout {
  std::vector<std::pair<int, int>> x_elements;  // (row, column) of each free X element
  int first_spectrum = 0;                       // index of spectrum 0's centre
  int size = 0;
};

Layout MakeLayout(const std::array<bool, 4>& columns, std::size_t n_spectra) {
  Layout l;
  for (int c = 0; c < 4; ++c)
    if (columns[static_cast<std::size_t>(c)])
      for (int r = 0; r < 4; ++r)
        if (!(r == 0 && c == 0)) l.x_elements.emplace_back(r, c);
  l.first_spectrum = 2 + static_cast<int>(l.x_elements.size());
  l.size = l.first_spectrum + 3 * static_cast<int>(n_spectra);
  return l;
}

Eigen::Matrix4d ResponseOf(const Layout& l, const Eigen::VectorXd& x) {
  Eigen::Matrix4d m = Eigen::Matrix4d::Identity();
  for (std::size_t k = 0; k < l.x_elements.size(); ++k)
    m(l.x_elements[k].first, l.x_elements[k].second) = x(2 + static_cast<Eigen::Index>(k));
  return m;
}

// Noise from point-to-point differences in the outer fifth of the spectrum on each side (away from the line):
// sigma = 1.4826 median|x_i - x_(i+1)| / sqrt(2); the whole spectrum when it is short.
double RobustNoise(const std::vector<double>& v) {
  if (v.size() < 3) return 1.0;
  const std::size_t edge = v.size() >= 40 ? v.size() / 5 : v.size();
  std::vector<double> d;
  for (std::size_t i = 0; i + 1 < v.size(); ++i)
    if (i + 1 < edge || i >= v.size() - edge) d.push_back(std::fabs(v[i + 1] - v[i]));
  std::nth_element(d.begin(), d.begin() + static_cast<std::ptrdiff_t>(d.size() / 2), d.end());
  const double s = 1.4826 * d[d.size() / 2] / std::sqrt(2.0);
  return s > 0.0 ? s : 1.0;
}

const std::vector<double>& StokesData(const Spectrum1D& s, int k) {
  return k == 0 ? s.I : k == 1 ? s.Q : k == 2 ? s.U : s.V;
}

}  // namespace

std::string MagnetFitOptions::Validate() const {
  std::ostringstream m;
  if (!(nominal_field_gauss > 0.0) || !std::isfinite(nominal_field_gauss))
    m << "nominal field = " << nominal_field_gauss << " G: need a finite value > 0";
  else if (!(rest_wavelength_nm > 0.0))
    m << "rest wavelength = " << rest_wavelength_nm << " nm: need > 0";
  else if (!(instrument_fwhm_nm >= 0.0) || !std::isfinite(instrument_fwhm_nm))
    m << "instrument FWHM = " << instrument_fwhm_nm << " nm: need a finite value >= 0";
  else if (!(damping >= 0.0) || !std::isfinite(damping))
    m << "damping = " << damping << ": need a finite value >= 0";
  else if (pattern.components.empty())
    m << "the line's Zeeman pattern has no components";
  else if (max_evaluations < 100)
    m << "max evaluations = " << max_evaluations << ": need >= 100";
  return m.str();
}

Eigen::MatrixXd EmittedStokes(const std::vector<double>& wl, const MagnetFitOptions& o, double field_gauss,
                              double doppler_width_nm, double centre_nm, double inclination_deg, double azimuth_deg) {
  const double s_inst = o.instrument_fwhm_nm / (2.0 * std::sqrt(std::log(2.0)));
  const double wp = std::sqrt(doppler_width_nm * doppler_width_nm + s_inst * s_inst);
  const double ap = o.damping * std::fabs(doppler_width_nm) / wp;
  const double lb = LorentzUnit_nm(o.rest_wavelength_nm, field_gauss);
  const Eigen::Index n = static_cast<Eigen::Index>(wl.size());
  Eigen::ArrayXd phi[3] = {Eigen::ArrayXd::Zero(n), Eigen::ArrayXd::Zero(n), Eigen::ArrayXd::Zero(n)};
  for (const ZeemanComponent& c : o.pattern.components) {
    const double pos = centre_nm + c.shift_lorentz * lb;
    Eigen::ArrayXd& p = phi[c.q + 1];
    for (Eigen::Index i = 0; i < n; ++i)
      p(i) += c.strength * VoigtH(ap, (wl[static_cast<std::size_t>(i)] - pos) / wp) / (kSqrtPi * wp);
  }
  const double g = inclination_deg * kDeg, chi = azimuth_deg * kDeg;
  const double s2 = std::sin(g) * std::sin(g), c2 = std::cos(g) * std::cos(g);
  Eigen::MatrixXd e(n, 4);
  e.col(0) = (0.5 * (phi[1] * s2 + 0.5 * (phi[0] + phi[2]) * (1.0 + c2))).matrix();
  const Eigen::ArrayXd lin = 0.5 * (phi[1] - 0.5 * (phi[0] + phi[2])) * s2;
  e.col(1) = (lin * std::cos(2.0 * chi)).matrix();
  e.col(2) = (lin * std::sin(2.0 * chi)).matrix();
  e.col(3) = (0.5 * (phi[2] - phi[0]) * std::cos(g)).matrix();
  return e;
}

MagnetFitResult FitMagnet(const std::vector<MagnetSpectrum>& spectra, const MagnetFitOptions& o) {
  if (const std::string bad = o.Validate(); !bad.empty()) throw OptionError(bad);
  if (spectra.empty()) throw OptionError("no --spectrum given");
  for (const MagnetSpectrum& s : spectra)
    if (!s.spectrum.has_qu() || !s.spectrum.has_v())
      throw CalibrationError(s.spectrum.source + ": the magnet check needs demodulated I, Q, U and V (found I" +
                             (s.spectrum.has_qu() ? "QU" : "") + (s.spectrum.has_v() ? "V" : "") + ")");
  const std::size_t ns = spectra.size();
  MagnetFitResult r;

  // Noise per spectrum and Stokes parameter.
  std::vector<std::array<double, 4>> noise(ns);
  for (std::size_t k = 0; k < ns; ++k)
    for (int q = 0; q < 4; ++q) noise[k][static_cast<std::size_t>(q)] = RobustNoise(StokesData(spectra[k].spectrum, q));

  // Start values per spectrum (background = median I, area and centroid of the excess), width from spectrum 0.
  std::vector<double> centre0(ns), amp0(ns), bg0(ns);
  double width0 = 0.0;
  for (std::size_t k = 0; k < ns; ++k) {
    const Spectrum1D& s = spectra[k].spectrum;
    std::vector<double> sorted = s.I;
    std::nth_element(sorted.begin(), sorted.begin() + static_cast<std::ptrdiff_t>(sorted.size() / 2), sorted.end());
    bg0[k] = sorted[sorted.size() / 2];
    double area = 0.0, first = 0.0, second = 0.0;
    for (std::size_t i = 0; i + 1 < s.size(); ++i) {
      const double dl = s.wavelength_nm[i + 1] - s.wavelength_nm[i];
      const double y = std::max(0.5 * (s.I[i] + s.I[i + 1]) - bg0[k], 0.0) * dl;
      const double lm = 0.5 * (s.wavelength_nm[i] + s.wavelength_nm[i + 1]);
      area += y;
      first += y * lm;
      second += y * lm * lm;
    }
    if (!(area > 0.0))
      throw CalibrationError(s.source + ": no emission line above the background (median I) in the spectrum");
    amp0[k] = area;
    centre0[k] = first / area;
    if (k == 0) {
      const double var = std::max(second / area - centre0[k] * centre0[k], 0.0);
      const double lb = LorentzUnit_nm(o.rest_wavelength_nm, o.nominal_field_gauss);
      const double g = spectra[k].inclination_deg * kDeg;
      double var_z = 0.0;
      for (const ZeemanComponent& c : o.pattern.components) {
        const double weight = c.q == 0 ? 0.5 * std::sin(g) * std::sin(g) : 0.25 * (1.0 + std::cos(g) * std::cos(g));
        var_z += weight * c.strength * c.shift_lorentz * c.shift_lorentz * lb * lb;
      }
      const double s_inst = o.instrument_fwhm_nm / (2.0 * std::sqrt(std::log(2.0)));
      const double w2 = 2.0 * (var - var_z) - s_inst * s_inst;
      width0 = std::max(std::sqrt(std::max(w2, 0.0)), 0.3 * std::sqrt(2.0 * var));
    }
  }

  std::size_t n_res = 0;
  for (const MagnetSpectrum& s : spectra) n_res += 4 * s.spectrum.size();

  auto make_residuals = [&](const Layout& l) {
    return [&, l](const Eigen::VectorXd& x, Eigen::VectorXd& res) {
      res.resize(static_cast<Eigen::Index>(n_res));
      const Eigen::Matrix4d xm = ResponseOf(l, x);
      Eigen::Index at = 0;
      for (std::size_t k = 0; k < ns; ++k) {
        const Spectrum1D& s = spectra[k].spectrum;
        const int b = l.first_spectrum + 3 * static_cast<int>(k);
        Eigen::MatrixXd e = x(b + 1) * EmittedStokes(s.wavelength_nm, o, x(0) * o.nominal_field_gauss, x(1), x(b),
                                                     spectra[k].inclination_deg, spectra[k].azimuth_deg);
        e.col(0).array() += x(b + 2);
        const Eigen::MatrixXd m = e * xm.transpose();
        for (int q = 0; q < 4; ++q) {
          const std::vector<double>& d = StokesData(s, q);
          const double sig = noise[k][static_cast<std::size_t>(q)];
          for (std::size_t i = 0; i < s.size(); ++i) res(at++) = (d[i] - m(static_cast<Eigen::Index>(i), q)) / sig;
        }
      }
    };
  };
  auto start = [&](const Layout& l) {
    Eigen::VectorXd x(l.size);
    x(0) = 1.0;
    x(1) = width0;
    for (std::size_t k = 0; k < l.x_elements.size(); ++k)
      x(2 + static_cast<Eigen::Index>(k)) = l.x_elements[k].first == l.x_elements[k].second ? 1.0 : 0.0;
    for (std::size_t k = 0; k < ns; ++k) {
      const int b = l.first_spectrum + 3 * static_cast<int>(k);
      x(b) = centre0[k];
      x(b + 1) = amp0[k];
      x(b + 2) = bg0[k];
    }
    return x;
  };
  auto steps = [&](const Layout& l, const Eigen::VectorXd& x) {
    Eigen::VectorXd h(l.size);
    h(0) = 1e-5;
    h(1) = 1e-4 * std::fabs(x(1));
    for (int p = 2; p < l.first_spectrum; ++p) h(p) = 1e-4;
    for (std::size_t k = 0; k < ns; ++k) {
      const int b = l.first_spectrum + 3 * static_cast<int>(k);
      h(b) = 1e-4 * std::fabs(x(1));
      h(b + 1) = 1e-5 * std::max(std::fabs(x(b + 1)), 1e-30);
      h(b + 2) = 1e-5 * std::max(std::fabs(x(b + 2)), std::fabs(x(b + 1)) / std::max(x(1), 1e-30) * 1e-3);
    }
    return h;
  };

  // Which columns of X do the geometries constrain? (Null space of the Jacobian at the start.)
  {
    const Layout all = MakeLayout({true, true, true, true}, ns);
    const Eigen::VectorXd x = start(all);
    const auto f = make_residuals(all);
    const Eigen::MatrixXd j = detail::NumericalJacobian(f, x, steps(all, x), static_cast<Eigen::Index>(n_res));
    r.column_constrained = {true, true, true, true};
    for (Eigen::Index p : detail::NullParameters(j, 1e-7, 1e-4)) {
      if (p < 2 || p >= all.first_spectrum) continue;
      r.column_constrained[static_cast<std::size_t>(all.x_elements[static_cast<std::size_t>(p - 2)].second)] = false;
    }
    for (int c = 1; c < 4; ++c)
      if (!r.column_constrained[static_cast<std::size_t>(c)]) r.unconstrained.push_back(kColumn[c]);
  }
  const Layout l = MakeLayout(r.column_constrained, ns);
  const auto f = make_residuals(l);
  const Eigen::VectorXd x0 = start(l);
  const detail::LeastSquaresResult fit =
      detail::SolveLeastSquares(f, x0, steps(l, x0), static_cast<Eigen::Index>(n_res), o.max_evaluations);
  if (const auto null = detail::NullParameters(fit.jacobian, 1e-9, 1e-4); !null.empty()) {
    std::string names;
    for (Eigen::Index p : null)
      names += std::string(names.empty() ? "" : ", ") +
               (p == 0 ? "field scale" : p == 1 ? "line width" : p < l.first_spectrum ? "response matrix" : "spectrum parameters");
    throw CalibrationError("the magnet spectra cannot constrain: " + names);
  }
  const Eigen::VectorXd& x = fit.x;
  r.converged = fit.converged;
  r.dof = static_cast<int>(n_res) - l.size;
  r.chi2_reduced = r.dof > 0 ? fit.chi2 / r.dof : std::nan("");
  const double scale = r.chi2_reduced > 1.0 ? std::sqrt(r.chi2_reduced) : 1.0;
  const Eigen::VectorXd err = fit.sigma * scale;
  r.field_scale = x(0);
  r.field_scale_err = err(0);
  r.doppler_width_nm = std::fabs(x(1));
  r.doppler_width_err_nm = err(1);
  r.response = ResponseOf(l, x);
  r.response_err = Eigen::Matrix4d::Zero();
  for (std::size_t k = 0; k < l.x_elements.size(); ++k)
    r.response_err(l.x_elements[k].first, l.x_elements[k].second) = err(2 + static_cast<Eigen::Index>(k));
  for (int c = 1; c < 4; ++c)
    if (!r.column_constrained[static_cast<std::size_t>(c)])
      for (int row = 0; row < 4; ++row) {
        r.response(row, c) = std::nan("");
        r.response_err(row, c) = std::nan("");
      }
  if (r.column_constrained[3]) {
    if (std::fabs(r.response(3, 3)) > 3.0 * r.response_err(3, 3)) r.v_sign = r.response(3, 3) > 0.0 ? 1 : -1;
    else r.warnings.push_back("X_VV is within 3 sigma of 0: the sign of the V response is not determined");
  } else {
    r.warnings.push_back("no spectrum has a longitudinal field component: the V column (and v_sign) is unconstrained");
  }
  Eigen::Index at = 0;
  const Eigen::VectorXd& res = fit.residuals;
  for (std::size_t k = 0; k < ns; ++k) {
    const Spectrum1D& s = spectra[k].spectrum;
    const int b = l.first_spectrum + 3 * static_cast<int>(k);
    MagnetSpectrumFit sf;
    sf.centre_nm = x(b);
    sf.centre_err_nm = err(b);
    sf.amplitude = x(b + 1);
    sf.amplitude_err = err(b + 1);
    sf.background = x(b + 2);
    sf.background_err = err(b + 2);
    sf.noise = noise[k];
    const Eigen::Index m = static_cast<Eigen::Index>(4 * s.size());
    sf.chi2_reduced = res.segment(at, m).squaredNorm() / static_cast<double>(m);
    at += m;
    Eigen::MatrixXd e = x(b + 1) * EmittedStokes(s.wavelength_nm, o, x(0) * o.nominal_field_gauss, x(1), x(b),
                                                 spectra[k].inclination_deg, spectra[k].azimuth_deg);
    e.col(0).array() += x(b + 2);
    sf.model = e * r.response.unaryExpr([](double v) { return std::isfinite(v) ? v : 0.0; }).transpose();
    r.spectra.push_back(sf);
  }
  if (!r.converged) r.warnings.push_back("the fit did not converge within the allowed evaluations");
  if (r.chi2_reduced > 3.0)
    r.warnings.push_back("chi2_reduced = " + std::to_string(r.chi2_reduced) +
                         ": the model does not describe the spectra well (line, instrument profile, geometry?)");
  return r;
}

}  // namespace zeeline::polarimetry
