#include "zeeline/polarimetry/modulation_fit.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "least_squares.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline::polarimetry {
namespace {

// Parameter layout: O (row-major, N x 4), delta, offset, T of the light states except the first open one,
// then d (N) when dark states exist.
struct Layout {
  int n = 0;                       // modulation states
  std::vector<int> t_index;        // per state: parameter index of T_k, -1 = fixed at 1 or dark
  int delta = 0, offset = 0, dark = -1, size = 0;
};

Layout MakeLayout(const CalibrationSequence& seq) {
  Layout l;
  l.n = seq.n_modulation;
  l.delta = 4 * l.n;
  l.offset = l.delta + 1;
  int next = l.offset + 1;
  const int first_open = seq.FirstOpen();
  bool any_dark = false;
  for (std::size_t k = 0; k < seq.states.size(); ++k) {
    const CalibrationState& s = seq.states[k];
    any_dark = any_dark || s.dark;
    l.t_index.push_back(s.dark || static_cast<int>(k) == first_open ? -1 : next);
    if (l.t_index.back() >= 0) ++next;
  }
  if (any_dark) {
    l.dark = next;
    next += l.n;
  }
  l.size = next;
  return l;
}

// Model counts of every state (states x N) at parameters x.
Eigen::MatrixXd ModelCounts(const CalibrationSequence& seq, const Layout& l, const Eigen::VectorXd& x) {
  const Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, 4, Eigen::RowMajor>> o(x.data(), l.n, 4);
  Eigen::MatrixXd m(static_cast<Eigen::Index>(seq.states.size()), l.n);
  for (std::size_t k = 0; k < seq.states.size(); ++k) {
    const CalibrationState& s = seq.states[k];
    const Eigen::Index row = static_cast<Eigen::Index>(k);
    if (s.dark) {
      m.row(row).setZero();
    } else {
      const double t = l.t_index[k] >= 0 ? x(l.t_index[k]) : 1.0;
      m.row(row) = (t * (o * CalibrationInput(s, x(l.delta), x(l.offset)))).transpose();
    }
    if (l.dark >= 0) m.row(row) += x.segment(l.dark, l.n).transpose();
  }
  return m;
}

std::string PartName(const CalibrationSequence& seq, const Layout& l, Eigen::Index p) {
  static const char* kColumns[] = {"I column", "Q column", "U column", "V column"};
  if (p < 4 * l.n) return std::string(kColumns[p % 4]) + " of the modulation matrix";
  if (p == l.delta) return "retardance";
  if (p == l.offset) return "retarder offset";
  if (l.dark >= 0 && p >= l.dark) return "dark offsets";
  for (std::size_t k = 0; k < l.t_index.size(); ++k)
    if (l.t_index[k] == p) return "transmission of state '" + seq.states[k].name + "'";
  return "parameter " + std::to_string(p);
}

std::vector<std::string> PartNames(const CalibrationSequence& seq, const Layout& l,
                                   const std::vector<Eigen::Index>& null) {
  std::vector<std::string> parts;
  for (Eigen::Index p : null) {
    const std::string name = PartName(seq, l, p);
    if (std::find(parts.begin(), parts.end(), name) == parts.end()) parts.push_back(name);
  }
  return parts;
}

std::string RefusalMessage(const CalibrationSequence& seq, const std::vector<std::string>& parts,
                           const char* where) {
  std::ostringstream m;
  m << seq.source << ": the calibration sequence cannot constrain ";
  for (std::size_t i = 0; i < parts.size(); ++i) m << (i ? ", " : "") << parts[i];
  m << " (" << where << "); no modulation matrix was fitted.";
  const bool v = std::find(parts.begin(), parts.end(), "V column of the modulation matrix") != parts.end();
  const bool lin = std::find(parts.begin(), parts.end(), "Q column of the modulation matrix") != parts.end() ||
                   std::find(parts.begin(), parts.end(), "U column of the modulation matrix") != parts.end();
  if (v)
    m << " No state sends circular polarisation into the polarimeter: add states with the retarder's fast axis"
         " between the polariser's axes (e.g. 30, 45, 60 deg from the polariser).";
  if (lin)
    m << " The linear states do not span Q and U: add polariser (or retarder) angles that are not multiples of"
         " 90 deg apart (e.g. 0, 45, 90, 135 deg).";
  return m.str();
}

// Row weights: 1 / sigma_kj.
Eigen::MatrixXd NoiseSigma(const CalibrationSequence& seq, double gain, double read, const Eigen::VectorXd& dbar) {
  Eigen::MatrixXd sigma(static_cast<Eigen::Index>(seq.states.size()), seq.n_modulation);
  for (std::size_t k = 0; k < seq.states.size(); ++k)
    for (int j = 0; j < seq.n_modulation; ++j) {
      const double var = std::max(seq.states[k].counts(j) - dbar(j), 0.0) / gain + read * read;
      sigma(static_cast<Eigen::Index>(k), j) = std::sqrt(std::max(var, 1.0));
    }
  return sigma;
}

detail::ResidualFunction MakeResiduals(const CalibrationSequence& seq, const Layout& l, const Eigen::MatrixXd& data,
                                       const Eigen::MatrixXd& sigma) {
  return [&seq, l, data, sigma](const Eigen::VectorXd& x, Eigen::VectorXd& r) {
    const Eigen::MatrixXd diff = ((data - ModelCounts(seq, l, x)).array() / sigma.array()).matrix();
    r = Eigen::Map<const Eigen::VectorXd>(diff.data(), diff.size());
  };
}

Eigen::VectorXd Steps(const Layout& l, const Eigen::VectorXd& x) {
  Eigen::VectorXd h(l.size);
  for (int p = 0; p < l.size; ++p) h(p) = std::max(1e-6 * std::fabs(x(p)), 1e-6);
  h(l.delta) = 1e-4;
  h(l.offset) = 1e-4;
  return h;
}

Eigen::MatrixXd DataMatrix(const CalibrationSequence& seq) {
  Eigen::MatrixXd d(static_cast<Eigen::Index>(seq.states.size()), seq.n_modulation);
  for (std::size_t k = 0; k < seq.states.size(); ++k) d.row(static_cast<Eigen::Index>(k)) = seq.states[k].counts;
  return d;
}

}  // namespace

std::string ModulationFitOptions::Validate() const {
  std::ostringstream m;
  if (!(retardance_start_deg > 0.0 && retardance_start_deg < 180.0))
    m << "retardance start = " << retardance_start_deg << " deg: need 0 < value < 180";
  else if (!(gain_e_per_count > 0.0) || !std::isfinite(gain_e_per_count))
    m << "gain = " << gain_e_per_count << " e-/count: need a finite value > 0";
  else if (read_noise_counts && !(*read_noise_counts >= 0.0 && std::isfinite(*read_noise_counts)))
    m << "read noise = " << *read_noise_counts << " counts: need a finite value >= 0";
  else if (max_evaluations < 100)
    m << "max evaluations = " << max_evaluations << ": need >= 100";
  return m.str();
}

Stokes CalibrationInput(const CalibrationState& s, double retardance_deg, double retarder_offset_deg) {
  if (s.dark) return Stokes::Zero();
  Stokes st(1.0, 0.0, 0.0, 0.0);
  if (s.polariser_deg) st = LinearPolariser(*s.polariser_deg) * st;
  if (s.retarder_deg) st = LinearRetarder(*s.retarder_deg + retarder_offset_deg, retardance_deg) * st;
  return st;
}

std::vector<std::string> UnconstrainedParts(const CalibrationSequence& seq, const ModulationFitOptions& o) {
  const Layout l = MakeLayout(seq);
  Eigen::VectorXd x(l.size);
  for (int j = 0; j < l.n; ++j)  // a generic O: every entry non-zero, no special relation between rows
    for (int i = 0; i < 4; ++i)
      x(4 * j + i) = i == 0 ? 1000.0 + 37.0 * j : 300.0 * std::sin(1.3 * j + 2.1 * i + 0.5);
  x(l.delta) = o.retardance_start_deg;
  x(l.offset) = 0.0;
  for (int t : l.t_index)
    if (t >= 0) x(t) = 1.0;
  if (l.dark >= 0) x.segment(l.dark, l.n).setConstant(10.0);
  const Eigen::MatrixXd data = DataMatrix(seq);
  const Eigen::MatrixXd unit = Eigen::MatrixXd::Ones(data.rows(), data.cols());
  const auto f = MakeResiduals(seq, l, data, unit);
  const Eigen::MatrixXd j = detail::NumericalJacobian(f, x, Steps(l, x), data.size());
  return PartNames(seq, l, detail::NullParameters(j));
}

ModulationFitResult FitModulation(const CalibrationSequence& seq, const ModulationFitOptions& o) {
  if (const std::string bad = o.Validate(); !bad.empty()) throw OptionError(bad);
  if (const auto parts = UnconstrainedParts(seq, o); !parts.empty())
    throw CalibrationError(RefusalMessage(seq, parts, "Jacobian null space at the nominal design"));

  const Layout l = MakeLayout(seq);
  const Eigen::MatrixXd data = DataMatrix(seq);
  ModulationFitResult r;

  // Dark level and read noise from the dark states.
  Eigen::VectorXd dbar = Eigen::VectorXd::Zero(l.n);
  std::vector<Eigen::Index> dark_rows;
  for (std::size_t k = 0; k < seq.states.size(); ++k)
    if (seq.states[k].dark) dark_rows.push_back(static_cast<Eigen::Index>(k));
  for (Eigen::Index k : dark_rows) dbar += data.row(k).transpose() / static_cast<double>(dark_rows.size());
  double read = o.read_noise_counts.value_or(0.0);
  if (!o.read_noise_counts) {
    if (dark_rows.size() >= 2) {
      double ss = 0.0;
      for (Eigen::Index k : dark_rows) ss += (data.row(k).transpose() - dbar).squaredNorm();
      read = std::sqrt(ss / (static_cast<double>(dark_rows.size() - 1) * l.n));
      r.read_noise_estimated = true;
    } else {
      r.warnings.push_back("read noise unknown (fewer than 2 dark states, no --read-noise): photon noise only, "
                           "with a floor of 1 count");
    }
  }
  r.read_noise_counts = read;
  if (dark_rows.empty()) r.warnings.push_back("no dark state: dark offsets fixed at 0 counts");
  const Eigen::MatrixXd sigma = NoiseSigma(seq, o.gain_e_per_count, read, dbar);

  // Start: delta and offset nominal, T = 1, O by linear least squares over the light states.
  Eigen::VectorXd x = Eigen::VectorXd::Zero(l.size);
  x(l.delta) = o.retardance_start_deg;
  for (int t : l.t_index)
    if (t >= 0) x(t) = 1.0;
  if (l.dark >= 0) x.segment(l.dark, l.n) = dbar;
  {
    std::vector<Eigen::Index> light;
    for (std::size_t k = 0; k < seq.states.size(); ++k)
      if (!seq.states[k].dark) light.push_back(static_cast<Eigen::Index>(k));
    Eigen::MatrixXd a(static_cast<Eigen::Index>(light.size()), 4), b(static_cast<Eigen::Index>(light.size()), l.n);
    for (std::size_t i = 0; i < light.size(); ++i) {
      const Eigen::Index k = light[i];
      a.row(static_cast<Eigen::Index>(i)) = CalibrationInput(seq.states[static_cast<std::size_t>(k)], x(l.delta), 0.0).transpose();
      b.row(static_cast<Eigen::Index>(i)) = data.row(k) - dbar.transpose();
    }
    const Eigen::MatrixXd ot = a.completeOrthogonalDecomposition().solve(b);  // 4 x N
    for (int j = 0; j < l.n; ++j)
      for (int i = 0; i < 4; ++i) x(4 * j + i) = ot(i, j);
  }

  const auto f = MakeResiduals(seq, l, data, sigma);
  const detail::LeastSquaresResult fit =
      detail::SolveLeastSquares(f, x, Steps(l, x), data.size(), o.max_evaluations);
  if (const auto null = detail::NullParameters(fit.jacobian); !null.empty())
    throw CalibrationError(RefusalMessage(seq, PartNames(seq, l, null), "Jacobian null space at the solution"));
  x = fit.x;
  Eigen::VectorXd err = fit.sigma;

  // Canonical retardance in (0, 180): (delta, O_V) ~ (-delta, -O_V); offset in (-90, 90].
  double delta = std::remainder(x(l.delta), 360.0);  // (-180, 180]
  if (delta < 0.0) {
    delta = -delta;
    for (int j = 0; j < l.n; ++j) x(4 * j + 3) = -x(4 * j + 3);
  }
  x(l.delta) = delta;
  double offset = std::remainder(x(l.offset), 180.0);
  if (offset <= -90.0) offset += 180.0;
  x(l.offset) = offset;

  r.modulation.resize(l.n, 4);
  r.modulation_err.resize(l.n, 4);
  for (int j = 0; j < l.n; ++j)
    for (int i = 0; i < 4; ++i) {
      r.modulation(j, i) = x(4 * j + i);
      r.modulation_err(j, i) = err(4 * j + i);
    }
  r.retardance_deg = x(l.delta);
  r.retardance_err_deg = err(l.delta);
  r.retarder_offset_deg = x(l.offset);
  r.retarder_offset_err_deg = err(l.offset);
  for (std::size_t k = 0; k < seq.states.size(); ++k) {
    r.state_names.push_back(seq.states[k].name);
    const int t = l.t_index[k];
    if (seq.states[k].dark) {
      r.transmission.push_back(std::nan(""));
      r.transmission_err.push_back(std::nan(""));
    } else {
      r.transmission.push_back(t >= 0 ? x(t) : 1.0);
      r.transmission_err.push_back(t >= 0 ? err(t) : 0.0);
    }
  }
  r.dark_fitted = l.dark >= 0;
  r.dark_counts = r.dark_fitted ? Eigen::VectorXd(x.segment(l.dark, l.n)) : Eigen::VectorXd::Zero(l.n);
  r.dark_counts_err = r.dark_fitted ? Eigen::VectorXd(err.segment(l.dark, l.n)) : Eigen::VectorXd::Zero(l.n);

  r.model = ModelCounts(seq, l, x);
  r.normalised_residuals = ((data - r.model).array() / sigma.array()).matrix();
  r.chi2 = r.normalised_residuals.squaredNorm();
  r.dof = static_cast<int>(data.size()) - l.size;
  r.chi2_reduced = r.dof > 0 ? r.chi2 / r.dof : std::nan("");
  r.converged = fit.converged;
  if (!r.converged) r.warnings.push_back("the fit did not converge within the allowed evaluations");
  if (r.dof <= 0) r.warnings.push_back("no degrees of freedom left: chi2 and sigmas are not meaningful");
  if (r.chi2_reduced > 3.0)
    r.warnings.push_back("chi2_reduced = " + std::to_string(r.chi2_reduced) +
                         ": the model or the noise model does not fit the counts; sigmas are underestimated");

  const DemodulationResult dem = Demodulate(r.modulation);
  r.demodulation = dem.demodulation;
  const double norm = r.modulation.col(0).maxCoeff();
  if (!(norm > 0.0)) throw CalibrationError(seq.source + ": the fitted I column has no positive entry");
  r.efficiency = Demodulate(r.modulation / norm).efficiency;
  return r;
}

}  // namespace zeeline::polarimetry
