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

/// "wfa", "cog", "split", "me", "auto".
std::string ToString(MapMethod m);
/// Inverse of ToString; throws OptionError listing the choices.
MapMethod MapMethodFromString(const std::string& text);

}  // namespace zeeline
