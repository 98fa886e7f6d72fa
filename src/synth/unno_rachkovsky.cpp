// Milne-Eddington synthesis (Unno-Rachkovsky solution) with full Zeeman patterns and analytic Jacobian.
//
// Sign of the magneto-optical elements (why rho takes the same form as eta). Take the time dependence
// exp(-i omega t). A resonance gives a complex refractive index n - 1 = C (psi + i phi) with C > 0,
// phi the absorption and psi the dispersion profile (psi > 0 on the red side: n_r - 1 ~ (omega0 - omega)),
// i.e. the complex profile w(v + i a) = H + 2iF of voigt.hpp. A field amplitude then obeys
// dE/ds = -(kappa/2)(phi - i psi) E. For two orthogonal modes (x, y: linear; or the two circular
// modes) the Stokes equations dS/ds = -K S give, with U = 2 Re(Ex Ey*) and V = s 2 Im(Ex Ey*):
//   eta_Q = kappa (phi_x - phi_y)/2,    rho_Q = -s * (-1) * kappa (psi_x - psi_y)/2
// and likewise for the circular modes, eta_V and rho_V share one structure exactly when s = +1.
// With exp(-i omega t), Ex = 1, Ey = i rotates counter-clockwise as seen by the observer (IAU positive)
// and has 2 Im(Ex Ey*) = -2, so s = -1 is the IAU sign and s = +1 is zeeline's V = -V_IAU
// (docs/conventions.md). Hence in zeeline's convention rho_{Q,U,V} are eta_{Q,U,V} with phi -> psi, for
// the K layout given in the header. The sign of eta_V (phi_r - phi_b) is fixed by the convention that
// V > 0 in the blue wing for a field toward the observer (checked by the weak-field test).
#include "zeeline/synth/unno_rachkovsky.hpp"

#include <cmath>
#include <cstring>
#include <sstream>
#include <type_traits>

#include <Eigen/LU>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline {
namespace {

constexpr double kSpeedOfLight_kms = constants::kSpeedOfLight_m_s * 1e-3;
constexpr double kRadPerDeg = constants::kPi / 180.0;

// Angular weights: eI = A [phi_0 i_pi + (phi_b + phi_r) i_sigma], eQ = A lin lin_c, eU = A lin lin_s,
// eV = A (phi_r - phi_b) circ, with lin = phi_0 - (phi_b + phi_r)/2.
struct Angular {
  double i_pi, i_sigma, lin_c, lin_s, circ;
};

// Group sums of complex profiles: index 0 sigma_b, 1 pi, 2 sigma_r.
struct GroupSum {
  double re[3] = {0.0, 0.0, 0.0};
  double im[3] = {0.0, 0.0, 0.0};
  void Add(int g, double s, double r, double i) {
    re[g] += s * r;
    im[g] += s * i;
  }
};

// Line part of the seven elements (no continuum): e[0..3] = eta_I..eta_V, e[4..6] = rho_Q..rho_V.
inline void Elements(const GroupSum& x, double A, const Angular& g, double e[7]) {
  const double lin_re = x.re[1] - 0.5 * (x.re[0] + x.re[2]);
  const double lin_im = x.im[1] - 0.5 * (x.im[0] + x.im[2]);
  e[0] = A * (x.re[1] * g.i_pi + (x.re[0] + x.re[2]) * g.i_sigma);
  e[1] = A * lin_re * g.lin_c;
  e[2] = A * lin_re * g.lin_s;
  e[3] = A * (x.re[2] - x.re[0]) * g.circ;
  e[4] = A * lin_im * g.lin_c;
  e[5] = A * lin_im * g.lin_s;
  e[6] = A * (x.im[2] - x.im[0]) * g.circ;
}

// y = K^{-1} (1, 0, 0, 0)^T in closed form (header comment).
inline void UnnoRachkovskyY(const double e[7], double y[4]) {
  const double eI = e[0], eQ = e[1], eU = e[2], eV = e[3], rQ = e[4], rU = e[5], rV = e[6];
  const double eI2 = eI * eI;
  const double pi = eQ * rQ + eU * rU + eV * rV;
  const double r2 = rQ * rQ + rU * rU + rV * rV;
  const double delta = eI2 * (eI2 - eQ * eQ - eU * eU - eV * eV + r2) - pi * pi;
  const double inv = 1.0 / delta;
  y[0] = eI * (eI2 + r2) * inv;
  y[1] = -(eI2 * eQ + eI * (eV * rU - eU * rV) + rQ * pi) * inv;
  y[2] = -(eI2 * eU + eI * (eQ * rV - eV * rQ) + rU * pi) * inv;
  y[3] = -(eI2 * eV + eI * (eU * rQ - eQ * rU) + rV * pi) * inv;
}

inline Eigen::Matrix4d BuildK(const double e[7]) {
  Eigen::Matrix4d k;
  k << e[0], e[1], e[2], e[3],
       e[1], e[0], e[6], -e[5],
       e[2], -e[6], e[0], e[4],
       e[3], e[5], -e[4], e[0];
  return k;
}

// (dK) y for a K-shaped matrix built from the element derivatives de.
inline Eigen::Vector4d DkTimes(const double de[7], const double y[4]) {
  return {de[0] * y[0] + de[1] * y[1] + de[2] * y[2] + de[3] * y[3],
          de[1] * y[0] + de[0] * y[1] + de[6] * y[2] - de[5] * y[3],
          de[2] * y[0] - de[6] * y[1] + de[0] * y[2] + de[4] * y[3],
          de[3] * y[0] + de[5] * y[1] - de[4] * y[2] + de[0] * y[3]};
}

using FaddeevaFn = FaddeevaValue (*)(double, double);

}  // namespace

std::string MeOptions::Validate() const {
  std::ostringstream msg;
  if (!std::isfinite(mu) || mu <= 0.0 || mu > 1.0) msg << "mu = " << mu << " is outside the allowed range (0, 1]";
  return msg.str();
}

Eigen::Vector4d UnnoRachkovsky(const PropagationMatrix& k, double s0, double s1, double mu) {
  const double e[7] = {k.eta_I, k.eta_Q, k.eta_U, k.eta_V, k.rho_Q, k.rho_U, k.rho_V};
  double y[4];
  UnnoRachkovskyY(e, y);
  return {s0 + mu * s1 * y[0], mu * s1 * y[1], mu * s1 * y[2], mu * s1 * y[3]};
}

MilneEddingtonModel::MilneEddingtonModel(const std::vector<MeLine>& lines, const MeOptions& options)
    : options_(options) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("Milne-Eddington options: " + problem);
  if (lines.empty()) throw OptionError("Milne-Eddington model: no spectral lines given");
  for (std::size_t i = 0; i < lines.size(); ++i) {
    const MeLine& line = lines[i];
    std::ostringstream where;
    where << "Milne-Eddington line " << i << ": ";
    if (!std::isfinite(line.wavelength_nm) || line.wavelength_nm <= 0.0)
      throw OptionError(where.str() + "wavelength_nm = " + std::to_string(line.wavelength_nm) +
                        " must be positive");
    if (!std::isfinite(line.relative_strength) || line.relative_strength < 0.0)
      throw OptionError(where.str() + "relative_strength = " + std::to_string(line.relative_strength) +
                        " must be >= 0");
    if (line.pattern.components.empty()) throw OptionError(where.str() + "Zeeman pattern has no components");
    CompactLine c;
    c.wavelength_nm = line.wavelength_nm;
    c.lorentz_nm_per_gauss = LorentzUnit_nm(line.wavelength_nm, 1.0);
    c.relative_strength = line.relative_strength;
    c.first_component = static_cast<int>(components_.size());
    for (const auto& zc : line.pattern.components) {
      if (zc.strength <= 0.0) continue;
      components_.push_back({zc.shift_lorentz, zc.strength * line.relative_strength, zc.q + 1});
    }
    c.component_count = static_cast<int>(components_.size()) - c.first_component;
    lines_.push_back(c);
  }
}

PropagationMatrix MilneEddingtonModel::Propagation(double wavelength_nm, const MeParameters& p) const {
  const FaddeevaFn faddeeva = options_.voigt == VoigtMethod::kFast ? &FaddeevaFast : &FaddeevaReference;
  const double inv_wd = 1.0 / p.doppler_width_nm;
  GroupSum sum;
  for (const CompactLine& line : lines_) {
    const double centre = line.wavelength_nm * (1.0 + p.vlos_kms / kSpeedOfLight_kms);
    const double lb = line.lorentz_nm_per_gauss * p.field_gauss;
    for (int j = line.first_component; j < line.first_component + line.component_count; ++j) {
      const Component& c = components_[j];
      const FaddeevaValue w = faddeeva(p.damping, (wavelength_nm - centre - c.shift_lorentz * lb) * inv_wd);
      sum.Add(c.group, c.strength, w.w_re, w.w_im);
    }
  }
  const double g = p.inclination_deg * kRadPerDeg, chi = p.azimuth_deg * kRadPerDeg;
  const double sg = std::sin(g), cg = std::cos(g);
  const Angular ang{sg * sg, 0.5 * (1.0 + cg * cg), sg * sg * std::cos(2.0 * chi), sg * sg * std::sin(2.0 * chi), cg};
  double e[7];
  Elements(sum, 0.5 * p.eta0, ang, e);
  return {1.0 + e[0], e[1], e[2], e[3], e[4], e[5], e[6]};
}

// Everything one wavelength of a synthesis computes before the Jacobian assembly.
struct MilneEddingtonModel::Point {
  GroupSum val, dB, dvl, dwd, da;
  double hn = 0.0, hn_vl = 0.0, hn_wd = 0.0, hn_a = 0.0;  // non-magnetic sum of c_l H and derivatives
  double e[7];
  double y[4];
  double mag[4];
  double yn = 0.0, i_nonmag = 0.0;
  double stokes[4];  // the mixture f * magnetic + (1 - f) * non-magnetic
};

struct MilneEddingtonModel::Geometry {
  Angular ang, ang_g, ang_x;
  static Geometry Of(const MeParameters& p);
};

MilneEddingtonModel::Geometry MilneEddingtonModel::Geometry::Of(const MeParameters& p) {
  const double g = p.inclination_deg * kRadPerDeg, chi = p.azimuth_deg * kRadPerDeg;
  const double sg = std::sin(g), cg = std::cos(g);
  const double c2x = std::cos(2.0 * chi), s2x = std::sin(2.0 * chi);
  const double sg2 = sg * sg;
  return {Angular{sg2, 0.5 * (1.0 + cg * cg), sg2 * c2x, sg2 * s2x, cg},
          // d/d(inclination) and d/d(azimuth), per radian
          Angular{2.0 * sg * cg, -sg * cg, 2.0 * sg * cg * c2x, 2.0 * sg * cg * s2x, -sg},
          Angular{0.0, 0.0, -2.0 * sg2 * s2x, 2.0 * sg2 * c2x, 0.0}};
}

namespace {
constexpr std::size_t kPointDoubles = 64;  // room for MilneEddingtonModel::Point (static_assert below)
}  // namespace

void MilneEddingtonModel::Evaluate(double lambda, const MeParameters& p, bool derivatives, bool need_nonmag,
                                   Point& pt) const {
  const FaddeevaFn faddeeva = options_.voigt == VoigtMethod::kFast ? &FaddeevaFast : &FaddeevaReference;
  const double a = p.damping;
  const double inv_wd = 1.0 / p.doppler_width_nm;
  pt = Point{};
  for (const CompactLine& line : lines_) {
    const double centre = line.wavelength_nm * (1.0 + p.vlos_kms / kSpeedOfLight_kms);
    const double dv_dvlos = -line.wavelength_nm / kSpeedOfLight_kms * inv_wd;
    const double lb = line.lorentz_nm_per_gauss * p.field_gauss;
    const double x0 = lambda - centre;
    for (int j = line.first_component; j < line.first_component + line.component_count; ++j) {
      const Component& c = components_[j];
      const double v = (x0 - c.shift_lorentz * lb) * inv_wd;
      const FaddeevaValue w = faddeeva(a, v);
      pt.val.Add(c.group, c.strength, w.w_re, w.w_im);
      if (derivatives) {
        const double dv_dB = -c.shift_lorentz * line.lorentz_nm_per_gauss * inv_wd;
        pt.dB.Add(c.group, c.strength * dv_dB, w.dw_re, w.dw_im);
        pt.dvl.Add(c.group, c.strength * dv_dvlos, w.dw_re, w.dw_im);
        pt.dwd.Add(c.group, -c.strength * v * inv_wd, w.dw_re, w.dw_im);
        pt.da.Add(c.group, c.strength, -w.dw_im, w.dw_re);  // dw/da = i w'
      }
    }
    if (need_nonmag) {
      const double v = x0 * inv_wd;
      const FaddeevaValue w = faddeeva(a, v);
      const double s = line.relative_strength;
      pt.hn += s * w.w_re;
      pt.hn_vl += s * dv_dvlos * w.dw_re;
      pt.hn_wd += -s * v * inv_wd * w.dw_re;
      pt.hn_a += -s * w.dw_im;
    }
  }
}

void MilneEddingtonModel::SynthesizePoint(double lambda, const MeParameters& p, const Geometry& geo, bool derivatives,
                                          bool need_nonmag, Point& pt) const {
  Evaluate(lambda, p, derivatives, need_nonmag, pt);
  const double mu = options_.mu, f = p.fill;
  Elements(pt.val, 0.5 * p.eta0, geo.ang, pt.e);
  pt.e[0] += 1.0;
  UnnoRachkovskyY(pt.e, pt.y);
  pt.mag[0] = p.s0 + mu * p.s1 * pt.y[0];
  for (int s = 1; s < 4; ++s) pt.mag[s] = mu * p.s1 * pt.y[s];
  const double eta_n = 1.0 + p.eta0 * pt.hn;
  pt.yn = need_nonmag ? 1.0 / eta_n : 0.0;
  pt.i_nonmag = p.s0 + mu * p.s1 * pt.yn;
  pt.stokes[0] = f * pt.mag[0] + (1.0 - f) * pt.i_nonmag;
  for (int s = 1; s < 4; ++s) pt.stokes[s] = f * pt.mag[s];
}

void MilneEddingtonModel::Synthesize(const Eigen::Ref<const Eigen::ArrayXd>& wavelength_nm,
                                     const MeParameters& p, StokesArray& stokes,
                                     StokesJacobian* jacobian, const std::array<bool, kMeParamCount>* wanted) const {
  const Eigen::Index n = wavelength_nm.size();
  if (stokes.rows() != n) stokes.resize(n, 4);
  if (jacobian) jacobian->Resize(n);
  auto want = [wanted](MeParam q) { return wanted == nullptr || (*wanted)[static_cast<int>(q)]; };
  const bool need_nonmag = p.fill != 1.0 || (jacobian != nullptr && want(MeParam::kFill));
  const Geometry geo = Geometry::Of(p);
  Point pt;
  for (Eigen::Index k = 0; k < n; ++k) {
    SynthesizePoint(wavelength_nm[k], p, geo, jacobian != nullptr, need_nonmag, pt);
    for (int s = 0; s < 4; ++s) stokes(k, s) = pt.stokes[s];
    if (jacobian) PointJacobian(k, p, geo, pt, *jacobian, wanted);
  }
}

void MilneEddingtonModel::Synthesize(const Eigen::Ref<const Eigen::ArrayXd>& wavelength_nm,
                                     const MeParameters& p, StokesArray& stokes, SynthesisCache& cache,
                                     const std::array<bool, kMeParamCount>* wanted) const {
  static_assert(sizeof(Point) <= kPointDoubles * sizeof(double), "kPointDoubles too small");
  static_assert(std::is_trivially_copyable_v<Point>, "Point is copied as bytes");
  const Eigen::Index n = wavelength_nm.size();
  if (stokes.rows() != n) stokes.resize(n, 4);
  if (cache.state.size() != static_cast<std::size_t>(n) * kPointDoubles)
    cache.state.resize(static_cast<std::size_t>(n) * kPointDoubles);
  cache.params = p;
  cache.n = n;
  const bool need_nonmag = p.fill != 1.0 || wanted == nullptr || (*wanted)[static_cast<int>(MeParam::kFill)];
  const Geometry geo = Geometry::Of(p);
  Point pt;
  for (Eigen::Index k = 0; k < n; ++k) {
    SynthesizePoint(wavelength_nm[k], p, geo, true, need_nonmag, pt);
    for (int s = 0; s < 4; ++s) stokes(k, s) = pt.stokes[s];
    std::memcpy(cache.state.data() + static_cast<std::size_t>(k) * kPointDoubles, &pt, sizeof(Point));
  }
}

void MilneEddingtonModel::JacobianFromCache(const SynthesisCache& cache, StokesJacobian& jacobian,
                                            const std::array<bool, kMeParamCount>* wanted) const {
  jacobian.Resize(cache.n);
  const Geometry geo = Geometry::Of(cache.params);
  Point pt;
  for (Eigen::Index k = 0; k < cache.n; ++k) {
    std::memcpy(static_cast<void*>(&pt), cache.state.data() + static_cast<std::size_t>(k) * kPointDoubles, sizeof(Point));
    PointJacobian(k, cache.params, geo, pt, jacobian, wanted);
  }
}

void MilneEddingtonModel::PointJacobian(Eigen::Index k, const MeParameters& p, const Geometry& geo, const Point& pt,
                                        StokesJacobian& J, const std::array<bool, kMeParamCount>* wanted) const {
  auto want = [wanted](MeParam q) { return wanted == nullptr || (*wanted)[static_cast<int>(q)]; };
  const double mu = options_.mu, f = p.fill;
  const double A = 0.5 * p.eta0;
  const double* y = pt.y;
  const double yn = pt.yn;
  const Eigen::Matrix4d kinv = BuildK(pt.e).inverse();
  const double scale = -mu * p.s1 * f;
  auto put = [&](MeParam which, const double de[7], double dn_deta) {
    if (!want(which)) return;
    const Eigen::Vector4d dy = kinv * DkTimes(de, y);
    StokesArray& out = J[which];
    // non-magnetic: dI_n = -mu s1 yn^2 d(eta_n)
    out(k, 0) = scale * dy[0] - (1.0 - f) * mu * p.s1 * yn * yn * dn_deta;
    out(k, 1) = scale * dy[1];
    out(k, 2) = scale * dy[2];
    out(k, 3) = scale * dy[3];
  };
  double de[7];
  Elements(pt.dB, A, geo.ang, de);
  put(MeParam::kField, de, 0.0);
  Elements(pt.val, A * kRadPerDeg, geo.ang_g, de);
  put(MeParam::kInclination, de, 0.0);
  Elements(pt.val, A * kRadPerDeg, geo.ang_x, de);
  put(MeParam::kAzimuth, de, 0.0);
  Elements(pt.dvl, A, geo.ang, de);
  put(MeParam::kVlos, de, p.eta0 * pt.hn_vl);
  Elements(pt.dwd, A, geo.ang, de);
  put(MeParam::kDopplerWidth, de, p.eta0 * pt.hn_wd);
  Elements(pt.da, A, geo.ang, de);
  put(MeParam::kDamping, de, p.eta0 * pt.hn_a);
  Elements(pt.val, 0.5, geo.ang, de);
  put(MeParam::kEta0, de, pt.hn);

  if (want(MeParam::kS0)) {
    StokesArray& js0 = J[MeParam::kS0];
    js0(k, 0) = 1.0;
    js0(k, 1) = js0(k, 2) = js0(k, 3) = 0.0;
  }
  if (want(MeParam::kS1)) {
    StokesArray& js1 = J[MeParam::kS1];
    js1(k, 0) = mu * (f * y[0] + (1.0 - f) * yn);
    for (int s = 1; s < 4; ++s) js1(k, s) = mu * f * y[s];
  }
  if (want(MeParam::kFill)) {
    StokesArray& jf = J[MeParam::kFill];
    jf(k, 0) = pt.mag[0] - pt.i_nonmag;
    for (int s = 1; s < 4; ++s) jf(k, s) = pt.mag[s];
  }
}

}  // namespace zeeline
