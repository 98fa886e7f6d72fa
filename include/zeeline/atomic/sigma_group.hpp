// zeeline/atomic/sigma_group.hpp -- the names of the three groups of Zeeman components, used by every
// command that reports components (`line`, `measure`) in text and JSON.
//
// q = M_l - M_u (docs/conventions.md): q = -1 is the blue sigma group, q = 0 the pi group, q = +1 the red
// sigma group (LL04 sect. 3.1).
#pragma once

namespace zeeline {

/// "sigma_b" (q = -1), "pi" (q = 0), "sigma_r" (q = +1).
inline const char* SigmaGroupLabel(int q) { return q == 0 ? "pi" : (q > 0 ? "sigma_r" : "sigma_b"); }

}  // namespace zeeline
