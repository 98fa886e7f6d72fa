// zeeline/atomic/paschen_back.hpp -- Zeeman patterns beyond the linear regime (incomplete Paschen–Back
// effect) for a transition between two LS terms whose fine-structure level energies are known.
//
// Model. For an LS term (L, S) with level energies E_J (every J in |L-S|..L+S) in a field B along z,
//   H = sum_J E_J P_J + mu_B B (L_z + g_s S_z)          (g_L = 1; g_s CODATA 2018 by default, or 2)
// with P_J the projector on the level J (Condon & Shortley 1935, ch. XVI; Landi Degl'Innocenti &
// Landolfi 2004, hereafter LL04, sect. 3.4). The field keeps M = M_L + M_S a good quantum number, so H is
// block diagonal in M. Each block is built in the uncoupled basis |M_L M_S> (M_L + M_S = M):
//   H_M = C diag(E_J - E_ref) C^T + mu_B B diag(M_L + g_s M_S),
//   C[(M_L, M_S), J] = <L M_L S M_S | J M> = (-1)^(L - S + M) sqrt(2J + 1) (L S J; M_L M_S -M)
// (Clebsch–Gordan coefficients from our Wigner 3j, Edmonds 1957 eq. 3.7.3) and diagonalised with Eigen's
// SelfAdjointEigenSolver. E_ref is the energy of the line's own level, so tiny fields keep full precision.
// Energies are in cm^-1; mu_B B / (h c) = 4.6686e-5 cm^-1 per gauss (the Lorentz unit in wavenumbers,
// CODATA 2018 via constants::kLorentzCoeff_per_m_per_T).
//
// Labels. An eigenstate is named by the |J M> it reaches continuously as B -> 0 (adiabatic label): within a
// block of fixed M the k-th lowest eigenvalue belongs to the k-th lowest E_J among the J >= |M| (levels of
// equal M of one term never cross: von Neumann & Wigner 1929 non-crossing rule). The energies of one term
// must therefore be distinct. The label is *not* the largest |J M> overlap at the given field.
//
// Components. The electric-dipole operator acts on L only (LS coupling, Delta S = 0), so in the uncoupled
// basis (Wigner–Eckart theorem, Edmonds 1957 eq. 5.4.1)
//   <L_u M_Lu S M_S | d_p | L_l M_Ll S M_S'> = delta(M_S, M_S') (-1)^(L_u - M_Lu) (L_u 1 L_l; -M_Lu p M_Ll) <L_u||d||L_l>
// with p = M_u - M_l = -q. A component of the line J_u -> J_l joins an upper eigenstate labelled (J_u, M_u) to
// a lower one labelled (J_l, M_l) with |q| <= 1; its strength is |sum over the basis of both eigenvectors|^2
// (raw_strength, <L_u||d||L_l> = 1), normalised to 1 within each q group of the line (strength).
// Its shift, in Lorentz units of the given field (positive toward the red, as in zeeman_pattern.hpp), is
//   shift = -[(E_u - E_Ju) - (E_l - E_Jl)] / (mu_B B / h c),
// which tends to g_l M_l - g_u M_u as B -> 0 (the linear pattern) and, in the complete Paschen–Back regime,
// to -(M_Lu - M_Ll) plus the first-order fine-structure terms (tests: tests/atomic/paschen_back_test.cpp).
// The sum of raw strengths over all lines of the multiplet is independent of B in each q group (the
// trace of |d_q|^2 is basis independent); within one line strength moves between fine-structure lines.
//
// Linear breakdown field. With s_k(B) the shifts above and s_k^lin the linear ones, the breakdown field is
// the smallest B at which max_k |s_k(B) - s_k^lin| exceeds 10 % of the strength-weighted mean |s^lin| of the
// sigma components (components matched by their labels). It is found on a logarithmic grid (16 points per
// decade, 1e-3 G to 1e8 G) and refined by bisection to 1e-7 relative; +infinity when the pattern never departs
// (e.g. singlet terms, or terms of a single level). The regime `auto` uses the mixed pattern when the field
// exceeds a tenth of the breakdown field.
#pragma once

#include <cstdlib>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"

namespace zeeline {

/// Energy of one fine-structure level of a term, as given by the user (cm^-1).
struct TermLevelEnergy {
  int two_J = 0;
  double energy_cm1 = 0.0;
};
using TermEnergies = std::vector<TermLevelEnergy>;

/// Parses "J=E,J=E,..." (';' also separates): J as an integer, n/2 or a decimal ending in .5; E in cm^-1.
/// Throws LevelParseError naming the token. `what` names the option or column in messages.
TermEnergies ParseTermEnergies(const std::string& text, const std::string& what);

/// Text form "1/2=0,3/2=17.196" (round-trips through ParseTermEnergies).
std::string TermEnergiesText(const TermEnergies& energies);

enum class ZeemanRegime { kZeeman, kPaschenBack, kAuto };
/// "zeeman", "paschen-back", "auto".
std::string ToString(ZeemanRegime regime);
/// Throws OptionError listing the accepted words.
ZeemanRegime ZeemanRegimeFromString(const std::string& text);

/// An LS term with the energies of all its levels (index i <-> 2J = two_J_min + 2 i).
struct TermStructure {
  int two_S = 0;
  int L = 0;
  std::vector<double> energy_cm1;
  int two_J_min() const { return std::abs(2 * L - two_S); }
  int two_J_max() const { return 2 * L + two_S; }
  double Energy(int two_J) const { return energy_cm1[static_cast<std::size_t>((two_J - two_J_min()) / 2)]; }
};

/// The term of an LS level with the energies given for it. A term of a single level needs none (its energy
/// is 0); otherwise every J must be present exactly once, no other J, all distinct. Throws LevelParseError
/// naming `which` (e.g. "--upper-term-energies") and the missing, unknown or repeated J.
TermStructure MakeTermStructure(const Level& level, const TermEnergies& energies, const std::string& which);

/// One line between two LS terms: what the mixed-regime pattern needs.
struct PaschenBackLine {
  TermStructure lower, upper;
  int two_J_lower = 0, two_J_upper = 0;
  double g_spin = constants::kElectronSpinG;
};

/// Checks the levels (LS, no measured g, equal S, dipole-allowed L and J) and builds the line.
/// Throws LevelParseError naming the level or the missing energies.
/// `lower_source` / `upper_source` name where the energies came from in messages (an option or a column).
PaschenBackLine MakePaschenBackLine(const Level& lower, const TermEnergies& lower_energies, const Level& upper,
                                    const TermEnergies& upper_energies, const LandeOptions& options = {},
                                    const std::string& lower_source = "lower term energies",
                                    const std::string& upper_source = "upper term energies");

/// The line when the model can be built: energies given -> it must build (throws, naming the problem); none
/// given -> built only when both terms are single levels, otherwise nullopt with the reason in `why_not`.
std::optional<PaschenBackLine> TryMakePaschenBackLine(const Level& lower, const TermEnergies& lower_energies,
                                                      const Level& upper, const TermEnergies& upper_energies,
                                                      const LandeOptions& options, const std::string& lower_source,
                                                      const std::string& upper_source, std::string* why_not);

/// An eigenstate of a term in the field: its adiabatic label, energy and uncoupled amplitudes.
struct TermSublevel {
  int two_J = 0, two_M = 0;    ///< adiabatic label |J M>
  double energy_cm1 = 0.0;     ///< relative to the reference energy passed in
  int two_ML_dominant = 0;     ///< 2 M_L of the largest uncoupled amplitude (strong-field name)
  int two_MS_dominant = 0;     ///< 2 M_S of the same
  std::vector<int> two_ML, two_MS;  ///< the uncoupled basis of the block
  Eigen::VectorXd amplitudes;       ///< eigenvector in that basis (real)
};

/// Every sublevel of the term at the field, energies relative to `reference_cm1`, ordered by M then energy.
std::vector<TermSublevel> TermSublevels(const TermStructure& term, double field_gauss, double g_spin,
                                        double reference_cm1 = 0.0);

/// Mixed-regime component details parallel to ZeemanPattern::components.
struct PaschenBackDetail {
  double raw_strength = 0.0;  ///< |<u|d_q|l>|^2 with <L_u||d||L_l> = 1
  int two_ML_upper = 0, two_MS_upper = 0, two_ML_lower = 0, two_MS_lower = 0;  ///< dominant uncoupled names
};

struct PaschenBackPattern {
  double field_gauss = 0.0;
  ZeemanPattern pattern;  ///< g_lower, g_upper, g_eff, G: the LS (zero-field) values; components at this field
  std::vector<PaschenBackDetail> details;  ///< parallel to pattern.components
};

/// The pattern of the line at `field_gauss` (> 0). Components of normalised strength below 1e-14 are dropped.
PaschenBackPattern ComputePaschenBackPattern(const PaschenBackLine& line, double field_gauss);

/// The linear (B -> 0) pattern with the LS g factors and the line's g_s.
ZeemanPattern LinearLimitPattern(const PaschenBackLine& line);

/// max_k |s_k(B) - s_k^lin| / (strength-weighted mean |s^lin| of the sigma components) at the field.
double LinearDeparture(const PaschenBackLine& line, double field_gauss);

/// The field where LinearDeparture first exceeds 0.1 (see the file comment); +infinity if never below 1e8 G.
double LinearBreakdownField_gauss(const PaschenBackLine& line);

/// What the pattern of a line should be at a field, by regime (`zeeline line`, `measure`, the line list).
struct RegimeOptions {
  ZeemanRegime regime = ZeemanRegime::kAuto;
  LandeOptions lande;
  std::optional<double> field_gauss;  ///< unset: no field given (auto then stays linear)
  TermEnergies lower_energies, upper_energies;  ///< empty: not known
  std::string lower_source = "lower term energies", upper_source = "upper term energies";  ///< for messages

  /// Empty when valid, otherwise a message naming the field and its value.
  std::string Validate() const;
};

struct RegimePattern {
  ZeemanRegime regime = ZeemanRegime::kZeeman;  ///< the pattern used: kZeeman (linear) or kPaschenBack
  ZeemanPattern pattern;                        ///< components at the field (mixed) or linear
  /// +infinity: never departs; NaN: unknown (energies not given, or not LS levels without measured g).
  double linear_breakdown_gauss = std::numeric_limits<double>::quiet_NaN();
  std::optional<PaschenBackLine> line;          ///< set when the mixed-regime model could be built
  std::string note;                             ///< one sentence: why this regime
};

/// Rules: energies given -> the mixed-regime model must build (errors are thrown, naming the problem);
/// none given -> it is built only when both terms are single levels. `zeeman` gives the linear pattern
/// (with the level's measured g, if any) and notes when the field exceeds a tenth of the breakdown field;
/// `paschen-back` needs the model and a field (OptionError otherwise; B = 0 gives the linear limit);
/// `auto` uses the mixed pattern when the model exists and the field exceeds a tenth of the breakdown field.
RegimePattern SelectPattern(const Level& lower, const Level& upper, const RegimeOptions& options);

/// Half the distance between the strength-weighted centroids of the q = +1 and q = -1 groups, in Lorentz
/// units (g_eff for a linear pattern). 0 when a sigma group is empty.
double SigmaHalfSeparation(const ZeemanPattern& pattern);

/// Field from a measured sigma half separation for a mixed-regime line: solves
///   h(B) = SigmaHalfSeparation(pattern at B) * B = target_lorentz_gauss
/// (target = half separation in nm / Lorentz unit per gauss) on a table built once, h interpolated in
/// log B between tabulated fields (64 per decade, 1 G to 1e7 G) and finished with fixed-point steps on the
/// interpolated curve. `ok` is false when the target lies outside the table or h is not monotonic below it.
class SigmaSplittingTable {
 public:
  explicit SigmaSplittingTable(const PaschenBackLine& line);
  struct Solution {
    double field_gauss = 0.0;
    double g_split = 0.0;  ///< SigmaHalfSeparation at that field
    bool ok = false;
    bool monotonic = true;
  };
  Solution FieldForHalfSeparation(double target_lorentz_gauss) const;
  double g_split_weak() const { return g_.empty() ? 0.0 : g_.front(); }

 private:
  std::vector<double> log_b_, g_, h_;
};

}  // namespace zeeline
