// axis_ticks.hpp (private) -- tick steps and labels shared by the picture writers (io/quicklook,
// synth/profile_plot).
#pragma once

#include <string>

namespace zeeline {

/// "Nice" tick step (1, 2 or 5 times a power of ten) giving about `target` intervals over `span`.
double NiceTickStep(double span, int target);

/// Label of a tick at `v` for a tick step `step`: fixed decimals matching the step, %g outside 1e-3..1e5.
std::string TickLabel(double v, double step);

}  // namespace zeeline
