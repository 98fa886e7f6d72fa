#include "zeeline/core/wavelength_frame.hpp"

#include <algorithm>
#include <cctype>

#include "zeeline/core/errors.hpp"

namespace zeeline {

std::string ToString(WavelengthFrame frame) { return frame == WavelengthFrame::kAir ? "air" : "vacuum"; }

WavelengthFrame WavelengthFrameFromString(const std::string& text) {
  std::string t = text;
  std::transform(t.begin(), t.end(), t.begin(), [](unsigned char c) { return std::tolower(c); });
  if (t == "air") return WavelengthFrame::kAir;
  if (t == "vacuum" || t == "vac") return WavelengthFrame::kVacuum;
  throw OptionError("wavelength frame '" + text + "': expected 'air' or 'vacuum'");
}

}  // namespace zeeline
