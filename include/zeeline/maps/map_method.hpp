// zeeline/maps/map_method.hpp -- the field-map methods offered on the command line, with their string
// names and the integer codes written to the METHOD map (docs/methods.md).
#pragma once

#include <string>

namespace zeeline {

enum class MapMethod {
  kWeakField = 1,        ///< "wfa": weak-field approximation
  kCentreOfGravity = 2,  ///< "cog": centre of gravity (Rees & Semel 1979)
  kSplitting = 3,        ///< "split": resolved Zeeman splitting
  kMilneEddington = 4,   ///< "me": Milne–Eddington inversion
  kAuto = 0,             ///< "auto": chosen per pixel (the METHOD map records the choice)
};

/// The weak-field regime test of `map` and `measure` (--weak-ratio, one default and one meaning): the
/// weak-field answer is used (auto) and counts as valid when r = g_eff Delta lambda_B(B) / w is below this,
/// with w the 1/e half-width of the line's intensity profile as observed. LL04 sect. 9.6 asks for
/// g_eff Delta lambda_B << Delta lambda_D; 0.15 keeps the weak-field B_LOS bias of a Milne-Eddington line
/// near a per cent (docs/methods.md).
inline constexpr double kDefaultWeakRatio = 0.15;

/// The detection test of the linear polarisation in `map` (LOW_TRANSVERSE, --transverse-detection) and
/// `measure` (a verdict note): B_T^2 below this many of its sigma leaves B_T, |B| and the angles
/// noise-dominated (docs/methods.md).
inline constexpr double kDefaultTransverseDetection = 6.0;

/// "wfa", "cog", "split", "me", "auto".
std::string ToString(MapMethod m);
/// Inverse of ToString; throws OptionError listing the choices.
MapMethod MapMethodFromString(const std::string& text);

}  // namespace zeeline
