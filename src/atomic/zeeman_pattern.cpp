#include "zeeline/atomic/zeeman_pattern.hpp"

#include <algorithm>
#include <cstdlib>

#include "zeeline/atomic/wigner.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {

double EffectiveLande(int two_J_lower, double g_lower, int two_J_upper, double g_upper) {
  const double Jl = 0.5 * two_J_lower, Ju = 0.5 * two_J_upper;
  const double d = Ju * (Ju + 1.0) - Jl * (Jl + 1.0);
  return 0.5 * (g_upper + g_lower) + 0.25 * (g_upper - g_lower) * d;
}

double SecondOrderTransverseG(int two_J_lower, double g_lower, int two_J_upper, double g_upper) {
  const double Jl = 0.5 * two_J_lower, Ju = 0.5 * two_J_upper;
  const double s = Ju * (Ju + 1.0) + Jl * (Jl + 1.0);
  const double d = Ju * (Ju + 1.0) - Jl * (Jl + 1.0);
  const double delta = g_upper - g_lower;
  const double g_eff = EffectiveLande(two_J_lower, g_lower, two_J_upper, g_upper);
  return g_eff * g_eff - delta * delta * (16.0 * s - 7.0 * d * d - 4.0) / 80.0;
}

ZeemanPattern ComputeZeemanPattern(int two_J_lower, double g_lower, int two_J_upper, double g_upper) {
  if (two_J_lower < 0 || two_J_upper < 0)
    throw LevelParseError("transition: J must be non-negative (got 2J_lower = " +
                          std::to_string(two_J_lower) + ", 2J_upper = " + std::to_string(two_J_upper) + ")");
  if ((two_J_lower - two_J_upper) % 2 != 0)
    throw LevelParseError("transition J_lower = " + HalfIntegerText(two_J_lower) + " -> J_upper = " +
                          HalfIntegerText(two_J_upper) + ": one is integer and the other half-integer");
  if (two_J_lower == 0 && two_J_upper == 0)
    throw LevelParseError("transition J = 0 -> J = 0 is forbidden for electric-dipole radiation");
  if (std::abs(two_J_lower - two_J_upper) > 2)
    throw LevelParseError("transition J_lower = " + HalfIntegerText(two_J_lower) + " -> J_upper = " +
                          HalfIntegerText(two_J_upper) + " is not an electric-dipole transition (|dJ| > 1)");

  ZeemanPattern p;
  p.two_J_lower = two_J_lower;
  p.two_J_upper = two_J_upper;
  p.g_lower = g_lower;
  p.g_upper = g_upper;
  p.g_eff = EffectiveLande(two_J_lower, g_lower, two_J_upper, g_upper);
  p.G = SecondOrderTransverseG(two_J_lower, g_lower, two_J_upper, g_upper);

  for (int q = -1; q <= 1; ++q) {
    double total = 0.0;
    const std::size_t first = p.components.size();
    for (int two_Mu = -two_J_upper; two_Mu <= two_J_upper; two_Mu += 2) {
      const int two_Ml = two_Mu + 2 * q;
      if (std::abs(two_Ml) > two_J_lower) continue;
      const double w = Wigner3j(two_J_upper, two_J_lower, 2, -two_Mu, two_Ml, -2 * q);
      const double strength = 3.0 * w * w;
      if (strength <= 0.0) continue;
      ZeemanComponent c;
      c.M_upper = 0.5 * two_Mu;
      c.M_lower = 0.5 * two_Ml;
      c.q = q;
      c.shift_lorentz = g_lower * c.M_lower - g_upper * c.M_upper;
      c.strength = strength;
      total += strength;
      p.components.push_back(c);
    }
    // 3 * sum of squared 3j over a q group is exactly 1 (orthogonality); renormalise the rounding.
    for (std::size_t i = first; i < p.components.size(); ++i) p.components[i].strength /= total;
    std::sort(p.components.begin() + static_cast<std::ptrdiff_t>(first), p.components.end(),
              [](const ZeemanComponent& a, const ZeemanComponent& b) { return a.shift_lorentz < b.shift_lorentz; });
  }
  return p;
}

ZeemanPattern ComputeZeemanPattern(const Level& lower, const Level& upper, const LandeOptions& options) {
  try {
    return ComputeZeemanPattern(lower.two_J, LandeG(lower, options), upper.two_J, LandeG(upper, options));
  } catch (const LevelParseError& e) {
    throw LevelParseError("lower '" + lower.text + "', upper '" + upper.text + "': " + e.what());
  }
}

}  // namespace zeeline
