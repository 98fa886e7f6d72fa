#include "zeeline/maps/map_method.hpp"

#include "zeeline/core/errors.hpp"

namespace zeeline {

std::string ToString(MapMethod m) {
  switch (m) {
    case MapMethod::kWeakField: return "wfa";
    case MapMethod::kCentreOfGravity: return "cog";
    case MapMethod::kSplitting: return "split";
    case MapMethod::kMilneEddington: return "me";
    case MapMethod::kAuto: return "auto";
  }
  return "?";
}

MapMethod MapMethodFromString(const std::string& text) {
  for (MapMethod m : {MapMethod::kWeakField, MapMethod::kCentreOfGravity, MapMethod::kSplitting,
                      MapMethod::kMilneEddington, MapMethod::kAuto})
    if (ToString(m) == text) return m;
  throw OptionError("method '" + text + "': expected one of wfa, cog, split, me, auto");
}

}  // namespace zeeline
