#include "zeeline/atomic/lande.hpp"

#include <cmath>
#include <sstream>

namespace zeeline {

std::string LandeOptions::Validate() const {
  std::ostringstream msg;
  if (!std::isfinite(g_spin) || g_spin < 1.9 || g_spin > 2.1)
    msg << "g_spin = " << g_spin << " is outside the accepted range [1.9, 2.1]";
  else if (!std::isfinite(g_orbital) || g_orbital < 0.9 || g_orbital > 1.1)
    msg << "g_orbital = " << g_orbital << " is outside the accepted range [0.9, 1.1]";
  return msg.str();
}

double CoupledG(int two_a, double g_a, int two_b, double g_b, int two_c) {
  if (two_c == 0) return 0.0;  // no splitting for a zero angular momentum
  const double a = 0.5 * two_a, b = 0.5 * two_b, c = 0.5 * two_c;
  const double cc = c * (c + 1.0), aa = a * (a + 1.0), bb = b * (b + 1.0);
  return g_a * (cc + aa - bb) / (2.0 * cc) + g_b * (cc - aa + bb) / (2.0 * cc);
}

double LandeLS(const LsTerm& term, const LandeOptions& options) {
  return CoupledG(2 * term.L, options.g_orbital, term.two_S, options.g_spin, term.two_J);
}

double LandeG(const Level& level, const LandeOptions& options) {
  if (level.measured_g) return *level.measured_g;
  switch (level.coupling) {
    case Coupling::kLS:
      return LandeLS(level.term, options);
    case Coupling::kJK: {
      // K = J1 + l, then J = K + s (s = 1/2).
      const double g_core = LandeLS(level.term, options);
      const double g_K = CoupledG(level.term.two_J, g_core, 2 * level.l, options.g_orbital, level.two_K);
      return CoupledG(level.two_K, g_K, 1, options.g_spin, level.two_J);
    }
    case Coupling::kJJ: {
      const double g1 = LandeLS(level.term, options);
      const double g2 = LandeLS(level.second, options);
      return CoupledG(level.term.two_J, g1, level.second.two_J, g2, level.two_J);
    }
  }
  return 0.0;
}

}  // namespace zeeline
