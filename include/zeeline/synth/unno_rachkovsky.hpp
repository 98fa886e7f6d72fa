// zeeline/synth/unno_rachkovsky.hpp -- Milne-Eddington Stokes synthesis: the Unno-Rachkovsky solution
// with magneto-optical effects, full anomalous Zeeman patterns and analytic derivatives.
//
// Model (LL04 sect. 9.8; del Toro Iniesta 2003, ch. 8): a plane-parallel atmosphere with constant
// propagation matrix K (normalised to the continuum absorption) and source function S = s0 + s1 tau
// (tau the vertical continuum optical depth). The emergent Stokes vector at mu = cos(theta) is
//   S_out = (s0, 0, 0, 0) + mu s1 K^{-1} (1, 0, 0, 0)^T,
// written in closed form (LL04 sect. 9.8; del Toro Iniesta 2003 sect. 8.2) as
//   Delta = eI^2 (eI^2 - eQ^2 - eU^2 - eV^2 + rQ^2 + rU^2 + rV^2) - Pi^2,  Pi = eQ rQ + eU rU + eV rV
//   I = s0 + mu s1 eI (eI^2 + rQ^2 + rU^2 + rV^2) / Delta
//   Q = -mu s1 [eI^2 eQ + eI (eV rU - eU rV) + rQ Pi] / Delta
//   U = -mu s1 [eI^2 eU + eI (eQ rV - eV rQ) + rU Pi] / Delta
//   V = -mu s1 [eI^2 eV + eI (eU rQ - eQ rU) + rV Pi] / Delta
// for K = [[eI, eQ, eU, eV], [eQ, eI, rV, -rU], [eU, -rV, eI, rQ], [eV, rU, -rQ, eI]].
//
// Absorption-matrix elements, summed over lines l (relative strength c_l) and over the components j of
// each line's full Zeeman pattern (strength S_j, shift s_j in Lorentz units, group q = -1 sigma_b, 0 pi,
// +1 sigma_r):
//   v_j = (lambda - lambda_l (1 + vlos/c) - s_j Delta lambda_B) / Delta lambda_D,  Phi_q = sum c_l S_j w(v_j + i a)
//   phi_q = Re Phi_q = sum H,   psi_q = Im Phi_q = sum 2F          (voigt.hpp)
//   eI = 1 + (eta0/2) [phi_0 sin^2(g) + (phi_b + phi_r)/2 (1 + cos^2(g))]
//   eQ = (eta0/2) [phi_0 - (phi_b + phi_r)/2] sin^2(g) cos(2 chi)
//   eU = (eta0/2) [phi_0 - (phi_b + phi_r)/2] sin^2(g) sin(2 chi)
//   eV = (eta0/2) [phi_r - phi_b] cos(g)
//   rQ, rU, rV: the same with phi -> psi.
// Signs (docs/conventions.md): eV is negative in the blue wing for cos(g) > 0, g_eff > 0, which makes V > 0
// there (weak field: V = -Delta lambda_B g_eff cos(g) dI/dlambda); eQ > 0 at line centre for chi = 0,
// so Q < 0 there. With this V sign and these K entries the magneto-optical elements take exactly the
// same form as the absorption ones (derivation in src/synth/unno_rachkovsky.cpp and
// docs/line_formation.md).
//
// Filling factor: I = f I_mag + (1 - f) I_nonmag where the non-magnetic atmosphere has the same
// thermodynamics and B = 0 (so Q = U = V = 0 there): I_nonmag = s0 + mu s1 / (1 + eta0 sum c_l H(a, v_l)).
//
// Derivatives: with y = K^{-1} e0, dy/dp = -K^{-1} (dK/dp) y for p in {B, incl, azimuth, vlos,
// Delta lambda_D, a, eta0}; dI/ds0 = 1, dS/ds1 = mu y; d/df = S_mag - S_nonmag. dK/dp follows from the
// Voigt derivatives (voigt.hpp) and the angular factors.
//
// All lines share Delta lambda_D (in nm), a, vlos and the thermodynamics: intended for lines within one
// spectral window (a few nm). Wavelengths in nm (same air/vacuum frame as the line wavelengths).
#pragma once

#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/synth/me_parameters.hpp"
#include "zeeline/synth/voigt.hpp"

namespace zeeline {

/// One spectral line of the model.
struct MeLine {
  double wavelength_nm = 0.0;     ///< rest wavelength
  ZeemanPattern pattern;          ///< full pattern (ComputeZeemanPattern)
  double relative_strength = 1.0; ///< this line's eta0 / MeParameters::eta0 (1 for the main line)
};

struct MeOptions {
  double mu = 1.0;                           ///< cos(heliocentric angle), (0, 1]
  VoigtMethod voigt = VoigtMethod::kFast;    ///< Faddeeva evaluation in the synthesis loop

  std::string Validate() const;
};

/// The seven independent elements of the propagation matrix (continuum-normalised, eI includes the 1).
struct PropagationMatrix {
  double eta_I = 1.0, eta_Q = 0.0, eta_U = 0.0, eta_V = 0.0;
  double rho_Q = 0.0, rho_U = 0.0, rho_V = 0.0;
};

/// The closed-form Unno-Rachkovsky solution for one wavelength: (I, Q, U, V).
Eigen::Vector4d UnnoRachkovsky(const PropagationMatrix& k, double s0, double s1, double mu);

/// Milne-Eddington model for a fixed set of lines. Construction precomputes each line's pattern in a
/// compact form; Synthesize is allocation-free once the output buffers have the right size, const and
/// thread-safe (one model can serve many threads).
class MilneEddingtonModel {
 public:
  /// Throws OptionError when a line or the options are invalid (names the line index and field).
  explicit MilneEddingtonModel(const std::vector<MeLine>& lines, const MeOptions& options = {});

  /// Stokes spectra at the given wavelengths (any grid); `stokes` and, when non-null, `jacobian` are
  /// resized to the grid length if needed. The parameters must satisfy MeParameters::Validate() (not
  /// checked here: this is the per-pixel hot path).
  /// `wanted` (optional, with a jacobian): derivatives only for the parameters marked true; the other
  /// entries of the jacobian are left as they were. With the filling factor not wanted and fill = 1 the
  /// non-magnetic profile is not evaluated at all (a quarter of the Voigt evaluations of a triplet).
  void Synthesize(const Eigen::Ref<const Eigen::ArrayXd>& wavelength_nm, const MeParameters& p,
                  StokesArray& stokes, StokesJacobian* jacobian = nullptr,
                  const std::array<bool, kMeParamCount>* wanted = nullptr) const;

  /// Two-step form of the same: the spectra now, keeping in `cache` what the Jacobian needs (the Voigt
  /// sums and their derivatives per wavelength), and the Jacobian later from the cache, only if the caller
  /// wants it (a rejected Levenberg-Marquardt trial costs the spectra alone). Results equal the one-step
  /// call bit for bit. The cache holds one point's state per wavelength (no allocation once sized).
  struct SynthesisCache {
    std::vector<double> state;
    MeParameters params;
    Eigen::Index n = 0;
  };
  void Synthesize(const Eigen::Ref<const Eigen::ArrayXd>& wavelength_nm, const MeParameters& p,
                  StokesArray& stokes, SynthesisCache& cache,
                  const std::array<bool, kMeParamCount>* wanted = nullptr) const;
  void JacobianFromCache(const SynthesisCache& cache, StokesJacobian& jacobian,
                         const std::array<bool, kMeParamCount>* wanted = nullptr) const;

  /// The magnetic component's propagation matrix at one wavelength (for tests and diagnostics).
  PropagationMatrix Propagation(double wavelength_nm, const MeParameters& p) const;

  const MeOptions& options() const { return options_; }
  std::size_t line_count() const { return lines_.size(); }
  /// Rest wavelength of line i (nm).
  double line_wavelength_nm(std::size_t i) const { return lines_[i].wavelength_nm; }

 private:
  struct Component {
    double shift_lorentz;  // positive = red
    double strength;       // times the line's relative strength
    int group;             // 0 sigma_b, 1 pi, 2 sigma_r
  };
  struct CompactLine {
    double wavelength_nm;
    double lorentz_nm_per_gauss;  // Delta lambda_B / B
    double relative_strength;
    int first_component, component_count;
  };
  struct Point;     // the per-wavelength state of a synthesis (unno_rachkovsky.cpp)
  struct Geometry;  // angular weights and their derivatives
  void Evaluate(double lambda, const MeParameters& p, bool derivatives, bool need_nonmag, Point& pt) const;
  // Evaluate, then the propagation-matrix elements, the Unno-Rachkovsky solution and the Stokes mixture.
  void SynthesizePoint(double lambda, const MeParameters& p, const Geometry& geo, bool derivatives, bool need_nonmag,
                       Point& pt) const;
  void PointJacobian(Eigen::Index k, const MeParameters& p, const Geometry& geo, const Point& pt, StokesJacobian& J,
                     const std::array<bool, kMeParamCount>* wanted) const;

  std::vector<CompactLine> lines_;
  std::vector<Component> components_;
  MeOptions options_;
};

}  // namespace zeeline
