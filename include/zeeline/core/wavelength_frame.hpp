// zeeline/core/wavelength_frame.hpp -- air or vacuum wavelengths, with the string helpers used by the
// CLI and the line-list reader. The conversion between the two frames lives in io/air_vacuum.hpp.
#pragma once

#include <string>

namespace zeeline {

enum class WavelengthFrame { kAir, kVacuum };

/// "air" or "vacuum".
std::string ToString(WavelengthFrame frame);
/// Accepts "air" / "vacuum" / "vac" (case-insensitive); throws OptionError naming the text otherwise.
WavelengthFrame WavelengthFrameFromString(const std::string& text);

}  // namespace zeeline
