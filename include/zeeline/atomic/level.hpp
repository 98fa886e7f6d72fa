// zeeline/atomic/level.hpp -- atomic level designations in LS, jK (pair) and jj coupling.
//
// Accepted text forms (angular momenta are integers or n/2; spaces are not allowed):
//   LS term        "5D4", "2P3/2", "3P1", "4F9/2"          (2S+1)(L letter)(J)
//                  a parity mark may follow the L letter: 'o' or '*' odd ("5Fo5", "3P*2"), 'e' even
//                  ("5De0"); without a mark the parity is not stated (see ElectricDipoleParityProblem)
//   jK coupling    "jK(2P3/2,p,5/2,2)"   core LS term (its J is J1), outer electron's l as a letter,
//                  K (J1 + l = K), J (K + s = J, s = 1/2).  Noble-gas excited levels, e.g. Ne 2p^5 3p.
//   jj coupling    "jj(2P1/2,2S1/2,1)"   two LS subsystems with J1 and J2, then J (J1 + J2 = J).
//   measured g     any of the above followed by ":g=<number>", e.g. "5D4:g=1.502"; the number overrides
//                  the computed Landé factor (a line list may give a measured or intermediate-coupling g).
// L letters: S P D F G H I K L M N O Q for L = 0..12 (J is skipped, as is standard; Martin, Zalubas &
// Hagan 1978, NSRDS-NBS 60, introduction). Orbital letters for l are the lower-case equivalents.
// Validity checks: J must lie in |L-S|..L+S (and likewise K in |J1-l|..J1+l, J = K +/- 1/2,
// J in |J1-J2|..J1+J2) with integer steps; violations throw LevelParseError naming the token.
#pragma once

#include <optional>
#include <string>

namespace zeeline {

/// Parity as written in the designation: only a mark states it.
enum class Parity { kUnstated, kEven, kOdd };

/// An LS term with all angular momenta stored doubled (2S, 2J) so half-integers are exact.
struct LsTerm {
  int two_S = 0;  ///< 2S = multiplicity - 1
  int L = 0;      ///< orbital angular momentum quantum number
  int two_J = 0;  ///< 2J
  Parity parity = Parity::kUnstated;  ///< from the mark after the L letter ('o'/'*' odd, 'e' even)
};

enum class Coupling { kLS, kJK, kJJ };

/// One parsed level. Fields that do not apply to the coupling are left at zero.
struct Level {
  std::string text;            ///< the designation as the user wrote it
  Coupling coupling = Coupling::kLS;
  LsTerm term;                 ///< LS: the term; jK: the core term; jj: the first subsystem
  LsTerm second;               ///< jj: the second subsystem
  int l = 0;                   ///< jK: outer electron's orbital angular momentum
  int two_K = 0;               ///< jK: 2K
  int two_J = 0;               ///< 2J of the level
  std::optional<double> measured_g;  ///< overrides the computed Landé factor when present

  double J() const { return 0.5 * two_J; }
};

/// Parse a level designation (see the file comment). Throws LevelParseError with the token and reason.
Level ParseLevel(const std::string& text);

/// Laporte's rule: an electric-dipole transition connects levels of opposite parity (Condon & Shortley
/// 1935, sect. 4.9; Cowan 1981, sect. 14.6, from memory). Returns "" when the rule holds or cannot be
/// checked (a level in jK/jj form or an LS level without a parity mark), else a message naming both levels.
std::string ElectricDipoleParityProblem(const Level& lower, const Level& upper);

/// Spectroscopic letter for an orbital quantum number (upper case: terms; lower case: electrons).
char OrbitalLetter(int L, bool upper_case);

/// Human-readable value of a doubled angular momentum: 3 -> "3/2", 4 -> "2".
std::string HalfIntegerText(int twice_value);

}  // namespace zeeline
