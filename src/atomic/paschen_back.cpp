#include "zeeline/atomic/paschen_back.hpp"

#include <algorithm>
#include <cerrno>
#include <cstdio>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <map>
#include <utility>

#include <Eigen/Eigenvalues>

#include "zeeline/atomic/wigner.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

/// mu_B B / (h c) in cm^-1 per gauss: e / (4 pi m_e c) [m^-1 T^-1] x 1e-2 [cm^-1 per m^-1] x 1e-4 [T per G].
constexpr double kLorentzWavenumber_cm1_per_G = constants::kLorentzCoeff_per_m_per_T * 1e-6;

/// Normalised strengths below this are dropped (they are rounding noise or vanishing mixing terms).
constexpr double kMinStrength = 1e-14;

std::string Trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t\r\n");
  if (b == std::string::npos) return "";
  const auto e = s.find_last_not_of(" \t\r\n");
  return s.substr(b, e - b + 1);
}

std::string TermName(const TermStructure& t) {
  return std::to_string(t.two_S + 1) + std::string(1, OrbitalLetter(t.L, true));
}

int Sign(int exponent) { return (exponent % 2 == 0) ? 1 : -1; }

// 2J from "3/2", "1.5", "2": throws with the token.
int ParseTwoJ(const std::string& token, const std::string& what) {
  auto fail = [&]() -> int {
    throw LevelParseError(what + ": '" + token + "' is not an angular momentum (expected 0, 1, 2, ... or n/2)");
  };
  if (token.empty()) return fail();
  const auto slash = token.find('/');
  char* end = nullptr;
  if (slash != std::string::npos) {
    if (token.substr(slash + 1) != "2") return fail();
    const std::string num = token.substr(0, slash);
    errno = 0;
    const long n = std::strtol(num.c_str(), &end, 10);
    if (num.empty() || *end != '\0' || errno == ERANGE || n < 0 || n % 2 == 0 || n > 200) return fail();
    return static_cast<int>(n);
  }
  errno = 0;
  const double v = std::strtod(token.c_str(), &end);
  if (*end != '\0' || errno == ERANGE || !(v >= 0.0) || v > 100.0) return fail();
  const double twice = 2.0 * v;
  if (std::fabs(twice - std::round(twice)) > 1e-9) return fail();
  return static_cast<int>(std::lround(twice));
}

}  // namespace

// ---------------------------------------------------------------------------- parsing and names
TermEnergies ParseTermEnergies(const std::string& text, const std::string& what) {
  TermEnergies out;
  std::string token;
  std::vector<std::string> tokens;
  for (char c : text + ",") {
    if (c == ',' || c == ';') {
      tokens.push_back(Trim(token));
      token.clear();
    } else {
      token += c;
    }
  }
  if (Trim(text).empty()) throw LevelParseError(what + ": empty; expected J=E,J=E,... with E in cm^-1");
  for (const std::string& t : tokens) {
    const auto eq = t.find('=');
    if (t.empty() || eq == std::string::npos)
      throw LevelParseError(what + ": '" + t + "' is not of the form J=E (E in cm^-1), e.g. 3/2=16973.37");
    TermLevelEnergy e;
    e.two_J = ParseTwoJ(Trim(t.substr(0, eq)), what);
    const std::string number = Trim(t.substr(eq + 1));
    char* end = nullptr;
    errno = 0;
    e.energy_cm1 = std::strtod(number.c_str(), &end);
    if (number.empty() || *end != '\0' || errno == ERANGE || !std::isfinite(e.energy_cm1))
      throw LevelParseError(what + ": energy '" + number + "' in '" + t + "' is not a finite number (cm^-1)");
    out.push_back(e);
  }
  return out;
}

std::string TermEnergiesText(const TermEnergies& energies) {
  std::string s;
  for (const auto& e : energies) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.17g", e.energy_cm1);
    s += (s.empty() ? "" : ",") + HalfIntegerText(e.two_J) + "=" + buf;
  }
  return s;
}

std::string ToString(ZeemanRegime regime) {
  switch (regime) {
    case ZeemanRegime::kZeeman: return "zeeman";
    case ZeemanRegime::kPaschenBack: return "paschen-back";
    case ZeemanRegime::kAuto: return "auto";
  }
  return "auto";
}

ZeemanRegime ZeemanRegimeFromString(const std::string& text) {
  if (text == "zeeman") return ZeemanRegime::kZeeman;
  if (text == "paschen-back") return ZeemanRegime::kPaschenBack;
  if (text == "auto") return ZeemanRegime::kAuto;
  throw OptionError("regime '" + text + "': expected zeeman, paschen-back or auto");
}

// ---------------------------------------------------------------------------- terms and lines
TermStructure MakeTermStructure(const Level& level, const TermEnergies& energies, const std::string& which) {
  if (level.coupling != Coupling::kLS)
    throw LevelParseError("level '" + level.text + "': the mixed-regime (Paschen-Back) pattern needs an LS term");
  TermStructure t;
  t.two_S = level.term.two_S;
  t.L = level.term.L;
  const int n = (t.two_J_max() - t.two_J_min()) / 2 + 1;
  std::string all;
  for (int tj = t.two_J_min(); tj <= t.two_J_max(); tj += 2) all += (all.empty() ? "" : ", ") + HalfIntegerText(tj);
  const std::string term = "term " + TermName(t) + " of level '" + level.text + "'";
  if (energies.empty()) {
    if (n == 1) {
      t.energy_cm1 = {0.0};
      return t;
    }
    throw LevelParseError(which + ": missing; " + term + " has levels J = " + all +
                          " and the mixed-regime pattern needs the energy of each (cm^-1)");
  }
  std::map<int, double> given;
  for (const auto& e : energies) {
    if (e.two_J < t.two_J_min() || e.two_J > t.two_J_max() || (e.two_J - t.two_J_min()) % 2 != 0)
      throw LevelParseError(which + ": J = " + HalfIntegerText(e.two_J) + " is not a level of " + term +
                            " (its levels: J = " + all + ")");
    if (given.count(e.two_J))
      throw LevelParseError(which + ": J = " + HalfIntegerText(e.two_J) + " is given twice");
    given[e.two_J] = e.energy_cm1;
  }
  std::string missing;
  for (int tj = t.two_J_min(); tj <= t.two_J_max(); tj += 2)
    if (!given.count(tj)) missing += (missing.empty() ? "" : ", ") + HalfIntegerText(tj);
  if (!missing.empty())
    throw LevelParseError(which + ": missing the energy of J = " + missing + " (" + term + " has levels J = " + all +
                          "; give every one)");
  for (const auto& [tj, e] : given) t.energy_cm1.push_back(e);
  for (auto a = given.begin(); a != given.end(); ++a)
    for (auto b = std::next(a); b != given.end(); ++b)
      if (a->second == b->second)
        throw LevelParseError(which + ": J = " + HalfIntegerText(a->first) + " and J = " + HalfIntegerText(b->first) +
                              " have the same energy; the adiabatic level labels need distinct energies");
  return t;
}

PaschenBackLine MakePaschenBackLine(const Level& lower, const TermEnergies& lower_energies, const Level& upper,
                                    const TermEnergies& upper_energies, const LandeOptions& options,
                                    const std::string& lower_source, const std::string& upper_source) {
  const std::string bad = options.Validate();
  if (!bad.empty()) throw OptionError(bad);
  for (const Level* lv : {&lower, &upper})
    if (lv->measured_g)
      throw LevelParseError("level '" + lv->text +
                            "' carries a measured g; the mixed-regime pattern is computed from the LS term and "
                            "would not reduce to it at zero field (drop ':g=' or use the zeeman regime)");
  PaschenBackLine line;
  line.lower = MakeTermStructure(lower, lower_energies, lower_source);
  line.upper = MakeTermStructure(upper, upper_energies, upper_source);
  line.two_J_lower = lower.two_J;
  line.two_J_upper = upper.two_J;
  line.g_spin = options.g_spin;
  const std::string pair = "lower '" + lower.text + "', upper '" + upper.text + "': ";
  if (line.lower.two_S != line.upper.two_S)
    throw LevelParseError(pair + "the spin changes (2S+1 = " + std::to_string(line.lower.two_S + 1) + " -> " +
                          std::to_string(line.upper.two_S + 1) +
                          "); an intercombination line is not an LS dipole transition acting on L");
  if (std::abs(line.lower.L - line.upper.L) > 1 || (line.lower.L == 0 && line.upper.L == 0))
    throw LevelParseError(pair + "L = " + std::to_string(line.lower.L) + " -> " + std::to_string(line.upper.L) +
                          " is not an electric-dipole transition between LS terms (|dL| <= 1, not 0 -> 0)");
  ComputeZeemanPattern(lower.two_J, 0.0, upper.two_J, 0.0);  // the J selection rules, with their messages
  return line;
}

// ---------------------------------------------------------------------------- the field Hamiltonian
std::vector<TermSublevel> TermSublevels(const TermStructure& t, double field_gauss, double g_spin,
                                        double reference_cm1) {
  const double x = kLorentzWavenumber_cm1_per_G * field_gauss;  // mu_B B / hc in cm^-1
  std::vector<TermSublevel> out;
  const int two_J_max = t.two_J_max();
  for (int two_M = -two_J_max; two_M <= two_J_max; two_M += 2) {
    std::vector<int> two_ML, two_MS;
    for (int ML = -t.L; ML <= t.L; ++ML) {
      const int ms = two_M - 2 * ML;
      if (std::abs(ms) <= t.two_S) {
        two_ML.push_back(2 * ML);
        two_MS.push_back(ms);
      }
    }
    std::vector<int> two_J;
    for (int tj = std::max(t.two_J_min(), std::abs(two_M)); tj <= two_J_max; tj += 2) two_J.push_back(tj);
    const auto n = static_cast<Eigen::Index>(two_ML.size());
    // n == two_J.size(): both count the states of this M (dimension check is a programmer invariant).
    Eigen::MatrixXd C(n, n);
    for (Eigen::Index i = 0; i < n; ++i)
      for (Eigen::Index j = 0; j < n; ++j) {
        const int tj = two_J[static_cast<std::size_t>(j)];
        const double w = Wigner3j(2 * t.L, t.two_S, tj, two_ML[static_cast<std::size_t>(i)],
                                  two_MS[static_cast<std::size_t>(i)], -two_M);
        C(i, j) = Sign((2 * t.L - t.two_S + two_M) / 2) * std::sqrt(tj + 1.0) * w;
      }
    Eigen::VectorXd e(n);
    for (Eigen::Index j = 0; j < n; ++j) e[j] = t.Energy(two_J[static_cast<std::size_t>(j)]) - reference_cm1;
    Eigen::MatrixXd H = C * e.asDiagonal() * C.transpose();
    for (Eigen::Index i = 0; i < n; ++i)
      H(i, i) += x * (0.5 * two_ML[static_cast<std::size_t>(i)] + g_spin * 0.5 * two_MS[static_cast<std::size_t>(i)]);
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(H);
    // Adiabatic labels: the k-th lowest eigenvalue <-> the k-th lowest E_J with J >= |M|.
    std::vector<int> by_energy = two_J;
    std::sort(by_energy.begin(), by_energy.end(), [&](int a, int b) { return t.Energy(a) < t.Energy(b); });
    for (Eigen::Index k = 0; k < n; ++k) {
      TermSublevel s;
      s.two_J = by_energy[static_cast<std::size_t>(k)];
      s.two_M = two_M;
      s.energy_cm1 = solver.eigenvalues()[k];
      s.amplitudes = solver.eigenvectors().col(k);
      Eigen::Index dom = 0;
      s.amplitudes.cwiseAbs().maxCoeff(&dom);
      s.two_ML_dominant = two_ML[static_cast<std::size_t>(dom)];
      s.two_MS_dominant = two_MS[static_cast<std::size_t>(dom)];
      s.two_ML = two_ML;
      s.two_MS = two_MS;
      out.push_back(std::move(s));
    }
  }
  return out;
}

// ---------------------------------------------------------------------------- the line pattern
ZeemanPattern LinearLimitPattern(const PaschenBackLine& line) {
  LandeOptions o;
  o.g_spin = line.g_spin;
  const double g_l = LandeLS(LsTerm{line.lower.two_S, line.lower.L, line.two_J_lower}, o);
  const double g_u = LandeLS(LsTerm{line.upper.two_S, line.upper.L, line.two_J_upper}, o);
  return ComputeZeemanPattern(line.two_J_lower, g_l, line.two_J_upper, g_u);
}

PaschenBackPattern ComputePaschenBackPattern(const PaschenBackLine& line, double field_gauss) {
  if (!(field_gauss > 0.0) || !std::isfinite(field_gauss))
    throw OptionError("mixed-regime pattern: field " + std::to_string(field_gauss) + " G must be > 0");
  const ZeemanPattern linear = LinearLimitPattern(line);
  PaschenBackPattern out;
  out.field_gauss = field_gauss;
  out.pattern = linear;
  out.pattern.components.clear();
  const double x = kLorentzWavenumber_cm1_per_G * field_gauss;
  const auto upper = TermSublevels(line.upper, field_gauss, line.g_spin, line.upper.Energy(line.two_J_upper));
  const auto lower = TermSublevels(line.lower, field_gauss, line.g_spin, line.lower.Energy(line.two_J_lower));
  const int Lu = line.upper.L, Ll = line.lower.L;
  struct Item {
    ZeemanComponent c;
    PaschenBackDetail d;
  };
  std::vector<Item> items;
  for (const auto& u : upper) {
    if (u.two_J != line.two_J_upper) continue;
    for (const auto& l : lower) {
      if (l.two_J != line.two_J_lower) continue;
      const int two_q = l.two_M - u.two_M;
      if (std::abs(two_q) > 2) continue;
      const int two_p = -two_q;
      double amplitude = 0.0;
      for (std::size_t i = 0; i < u.two_ML.size(); ++i) {
        if (u.amplitudes[static_cast<Eigen::Index>(i)] == 0.0) continue;
        for (std::size_t j = 0; j < l.two_ML.size(); ++j) {
          if (l.two_MS[j] != u.two_MS[i]) continue;
          const double w = Wigner3j(2 * Lu, 2, 2 * Ll, -u.two_ML[i], two_p, l.two_ML[j]);
          if (w == 0.0) continue;
          amplitude += u.amplitudes[static_cast<Eigen::Index>(i)] * l.amplitudes[static_cast<Eigen::Index>(j)] *
                       Sign(Lu - u.two_ML[i] / 2) * w;
        }
      }
      Item it;
      it.c.M_upper = 0.5 * u.two_M;
      it.c.M_lower = 0.5 * l.two_M;
      it.c.q = two_q / 2;
      it.c.shift_lorentz = -(u.energy_cm1 - l.energy_cm1) / x;
      it.c.strength = amplitude * amplitude;
      it.d.raw_strength = amplitude * amplitude;
      it.d.two_ML_upper = u.two_ML_dominant;
      it.d.two_MS_upper = u.two_MS_dominant;
      it.d.two_ML_lower = l.two_ML_dominant;
      it.d.two_MS_lower = l.two_MS_dominant;
      items.push_back(it);
    }
  }
  for (int q = -1; q <= 1; ++q) {
    double total = 0.0;
    for (const auto& it : items)
      if (it.c.q == q) total += it.c.strength;
    std::vector<Item> group;
    for (auto it : items) {
      if (it.c.q != q || !(total > 0.0)) continue;
      it.c.strength /= total;
      if (it.c.strength >= kMinStrength) group.push_back(it);
    }
    std::sort(group.begin(), group.end(),
              [](const Item& a, const Item& b) { return a.c.shift_lorentz < b.c.shift_lorentz; });
    for (const auto& it : group) {
      out.pattern.components.push_back(it.c);
      out.details.push_back(it.d);
    }
  }
  return out;
}

namespace {

double MeanSigmaShift(const ZeemanPattern& p) {
  double num = 0.0, den = 0.0;
  for (const auto& c : p.components)
    if (c.q != 0) {
      num += c.strength * std::fabs(c.shift_lorentz);
      den += c.strength;
    }
  return den > 0.0 ? num / den : 0.0;
}

}  // namespace

double LinearDeparture(const PaschenBackLine& line, double field_gauss) {
  const ZeemanPattern linear = LinearLimitPattern(line);
  double scale = MeanSigmaShift(linear);
  if (!(scale > 1e-9)) scale = 1.0;  // no sigma displacement at all: measure in Lorentz units
  const PaschenBackPattern pb = ComputePaschenBackPattern(line, field_gauss);
  double worst = 0.0;
  for (const auto& c : pb.pattern.components) {
    const double lin = linear.g_lower * c.M_lower - linear.g_upper * c.M_upper;
    worst = std::max(worst, std::fabs(c.shift_lorentz - lin));
  }
  return worst / scale;
}

double LinearBreakdownField_gauss(const PaschenBackLine& line) {
  constexpr double kThreshold = 0.1;
  constexpr int kPerDecade = 16;
  constexpr double kLogMin = -3.0, kLogMax = 8.0;
  double prev_log = -std::numeric_limits<double>::infinity();
  const int steps = static_cast<int>((kLogMax - kLogMin) * kPerDecade);
  for (int i = 0; i <= steps; ++i) {
    const double lg = kLogMin + static_cast<double>(i) / kPerDecade;
    if (LinearDeparture(line, std::pow(10.0, lg)) > kThreshold) {
      // bisection between the previous grid field (or 0) and this one
      double lo = std::isfinite(prev_log) ? std::pow(10.0, prev_log) : 0.0, hi = std::pow(10.0, lg);
      while (hi - lo > 1e-7 * hi) {
        const double mid = lo > 0.0 ? std::sqrt(lo * hi) : 0.5 * hi;
        (LinearDeparture(line, mid) > kThreshold ? hi : lo) = mid;
      }
      return hi;
    }
    prev_log = lg;
  }
  return std::numeric_limits<double>::infinity();
}

double SigmaHalfSeparation(const ZeemanPattern& p) {
  double c[2] = {0.0, 0.0}, w[2] = {0.0, 0.0};
  for (const auto& comp : p.components) {
    if (comp.q == 0) continue;
    const int k = comp.q > 0 ? 1 : 0;
    c[k] += comp.strength * comp.shift_lorentz;
    w[k] += comp.strength;
  }
  if (!(w[0] > 0.0) || !(w[1] > 0.0)) return 0.0;
  return 0.5 * (c[1] / w[1] - c[0] / w[0]);
}

// ---------------------------------------------------------------------------- regime choice
std::string RegimeOptions::Validate() const {
  const std::string bad = lande.Validate();
  if (!bad.empty()) return bad;
  if (field_gauss && (!(*field_gauss >= 0.0) || !std::isfinite(*field_gauss)))
    return "field_gauss = " + std::to_string(*field_gauss) + ": must be finite and >= 0";
  return {};
}

namespace {

std::string FieldText(double gauss) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.4g G", gauss);
  return buf;
}

}  // namespace

std::optional<PaschenBackLine> TryMakePaschenBackLine(const Level& lower, const TermEnergies& lower_energies,
                                                      const Level& upper, const TermEnergies& upper_energies,
                                                      const LandeOptions& options, const std::string& lower_source,
                                                      const std::string& upper_source, std::string* why_not) {
  if (!lower_energies.empty() || !upper_energies.empty())
    return MakePaschenBackLine(lower, lower_energies, upper, upper_energies, options, lower_source, upper_source);
  try {
    return MakePaschenBackLine(lower, {}, upper, {}, options, lower_source, upper_source);
  } catch (const LevelParseError& e) {
    if (why_not) *why_not = e.what();
  }
  return std::nullopt;
}

RegimePattern SelectPattern(const Level& lower, const Level& upper, const RegimeOptions& o) {
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  RegimePattern r;
  std::string why_not;
  r.line = TryMakePaschenBackLine(lower, o.lower_energies, upper, o.upper_energies, o.lande, o.lower_source,
                                  o.upper_source, &why_not);
  if (r.line) r.linear_breakdown_gauss = LinearBreakdownField_gauss(*r.line);
  const bool has_field = o.field_gauss.has_value();
  const double b = has_field ? *o.field_gauss : 0.0;
  const bool field_demands = r.line && has_field && b > 0.1 * r.linear_breakdown_gauss;
  const std::string breakdown_text =
      r.line ? (std::isinf(r.linear_breakdown_gauss) ? std::string("the pattern stays linear at every field")
                                                      : "linear breakdown field " + FieldText(r.linear_breakdown_gauss))
             : std::string("linear breakdown field unknown (no term energies)");
  auto linear = [&] { r.pattern = ComputeZeemanPattern(lower, upper, o.lande); };
  auto mixed = [&] {
    r.regime = ZeemanRegime::kPaschenBack;
    r.pattern = b > 0.0 ? ComputePaschenBackPattern(*r.line, b).pattern : LinearLimitPattern(*r.line);
  };
  switch (o.regime) {
    case ZeemanRegime::kZeeman:
      linear();
      r.note = "linear Zeeman pattern (requested); " + breakdown_text;
      if (field_demands)
        r.note += "; warning: the field " + FieldText(b) +
                  " exceeds a tenth of the breakdown field, the linear pattern is inaccurate here";
      break;
    case ZeemanRegime::kPaschenBack:
      if (!r.line) throw LevelParseError("regime paschen-back: " + why_not);
      if (!has_field) throw OptionError("regime paschen-back needs the field (--field)");
      mixed();
      r.note = "mixed-regime (Paschen-Back) pattern at " + FieldText(b) + " (requested); " + breakdown_text;
      break;
    case ZeemanRegime::kAuto:
      if (field_demands) {
        mixed();
        r.note = "mixed-regime (Paschen-Back) pattern: the field " + FieldText(b) + " exceeds a tenth of the " +
                 breakdown_text;
      } else {
        linear();
        r.note = "linear Zeeman pattern: ";
        if (!r.line)
          r.note += "no term energies for the mixed regime (" + why_not + ")";
        else if (!has_field)
          r.note += "no field given; " + breakdown_text;
        else if (std::isinf(r.linear_breakdown_gauss))
          r.note += breakdown_text;
        else
          r.note += "the field " + FieldText(b) + " is below a tenth of the " + breakdown_text;
      }
      break;
  }
  return r;
}

// ---------------------------------------------------------------------------- splitting table
SigmaSplittingTable::SigmaSplittingTable(const PaschenBackLine& line) {
  constexpr int kPerDecade = 64;
  constexpr double kLogMin = 0.0, kLogMax = 7.0;
  const int steps = static_cast<int>((kLogMax - kLogMin) * kPerDecade);
  for (int i = 0; i <= steps; ++i) {
    const double lg = kLogMin + static_cast<double>(i) / kPerDecade;
    const double b = std::pow(10.0, lg);
    const double g = SigmaHalfSeparation(ComputePaschenBackPattern(line, b).pattern);
    log_b_.push_back(lg * std::log(10.0));
    g_.push_back(g);
    h_.push_back(g * b);
  }
}

SigmaSplittingTable::Solution SigmaSplittingTable::FieldForHalfSeparation(double target) const {
  Solution s;
  if (g_.empty() || !(target >= 0.0) || !std::isfinite(target)) return s;
  const double t = target;
  if (t <= std::fabs(h_.front())) {  // below 1 G: linear in B to better than the table's accuracy
    s.g_split = g_.front();
    s.field_gauss = g_.front() != 0.0 ? t / std::fabs(g_.front()) : 0.0;
    s.ok = g_.front() != 0.0;
    return s;
  }
  for (std::size_t i = 1; i < h_.size(); ++i) {
    if (std::fabs(h_[i]) < std::fabs(h_[i - 1])) s.monotonic = false;
    if (std::fabs(h_[i]) < t) continue;
    // Interpolate g linearly in ln B inside [i-1, i] and bisect |g(lnB)| e^lnB = t.
    double lo = log_b_[i - 1], hi = log_b_[i];
    auto g_at = [&](double lb) {
      const double f = (lb - log_b_[i - 1]) / (log_b_[i] - log_b_[i - 1]);
      return g_[i - 1] + f * (g_[i] - g_[i - 1]);
    };
    for (int k = 0; k < 80; ++k) {
      const double mid = 0.5 * (lo + hi);
      (std::fabs(g_at(mid)) * std::exp(mid) < t ? lo : hi) = mid;
    }
    s.field_gauss = std::exp(0.5 * (lo + hi));
    s.g_split = g_at(0.5 * (lo + hi));
    s.ok = true;
    return s;
  }
  return s;  // beyond the table
}

}  // namespace zeeline
