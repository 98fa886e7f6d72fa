// Zeeman patterns: textbook cases, sum rules (LL04 sect. 3.4) and the closed forms for g_eff and G.
#include "zeeline/atomic/zeeman_pattern.hpp"

#include <cmath>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kTight = 1e-12;
const LandeOptions kTextbook{2.0, 1.0};

ZeemanPattern Pattern(const char* lower, const char* upper) {
  return ComputeZeemanPattern(ParseLevel(lower), ParseLevel(upper), kTextbook);
}

double Moment(const ZeemanPattern& p, int q, int power) {
  double m = 0.0;
  for (const auto& c : p.components)
    if (c.q == q) m += c.strength * std::pow(c.shift_lorentz, power);
  return m;
}

TEST(ZeemanPattern, NormalTripletHasThreeEquallySpacedComponents) {
  // 1P1 -> 1D2 (e.g. Cd I 643.8 nm): the normal Zeeman effect, components at 0 and +-1 Lorentz units
  // (every textbook; from memory). All nine M components collapse onto three positions.
  const ZeemanPattern p = Pattern("1P1", "1D2");
  EXPECT_CLOSE(p.g_eff, 1.0, kTight);
  EXPECT_CLOSE(p.G, 1.0, kTight);
  for (const auto& c : p.components) EXPECT_CLOSE(c.shift_lorentz, static_cast<double>(c.q), kTight, kTight);
  EXPECT_EQ(p.components.size(), 9u);
}

TEST(ZeemanPattern, SodiumDLinesHaveTextbookEffectiveFactors) {
  // D1 2S1/2 -> 2P1/2: g_eff = 4/3; D2 2S1/2 -> 2P3/2: g_eff = 7/6 (g_s = 2; from memory, standard values).
  EXPECT_CLOSE(Pattern("2S1/2", "2P1/2").g_eff, 4.0 / 3.0, kTight);
  EXPECT_CLOSE(Pattern("2S1/2", "2P3/2").g_eff, 7.0 / 6.0, kTight);
  // D1 has 4 components at +-2/3 and +-4/3 (anomalous pattern, from memory).
  const ZeemanPattern d1 = Pattern("2S1/2", "2P1/2");
  ASSERT_EQ(d1.components.size(), 4u);
  EXPECT_CLOSE(std::fabs(d1.components[0].shift_lorentz), 4.0 / 3.0, kTight);
  // D2 has 6 components: +-1/3, +-1, +-5/3.
  const ZeemanPattern d2 = Pattern("2S1/2", "2P3/2");
  ASSERT_EQ(d2.components.size(), 6u);
  EXPECT_CLOSE(d2.components.front().shift_lorentz, -5.0 / 3.0, kTight);
}

TEST(ZeemanPattern, IronLinesHaveKnownEffectiveFactors) {
  // Fe I 630.25 nm 5P1 -> 5D0: g_eff = 2.5; Fe I 630.15 nm 5P2 -> 5D2: g_eff = 1.667;
  // Fe I 525.02 nm 5D0 -> 7D1: g_eff = 3.0 (standard solar-line values, from memory).
  EXPECT_CLOSE(Pattern("5P1", "5D0").g_eff, 2.5, kTight);
  EXPECT_CLOSE(Pattern("5P2", "5D2").g_eff, 5.0 / 3.0, kTight);
  EXPECT_CLOSE(Pattern("5D0", "7D1").g_eff, 3.0, kTight);
}

TEST(ZeemanPattern, StrengthsSumToOneInEachGroup) {
  for (const char* up : {"5D3", "5D4", "5F5", "5F3"}) {
    const ZeemanPattern p = Pattern("5D4", up);
    for (int q = -1; q <= 1; ++q) EXPECT_CLOSE(Moment(p, q, 0), 1.0, kTight) << up << " q=" << q;
  }
}

TEST(ZeemanPattern, SumRulesGiveEffectiveFactorsForManyTransitions) {
  // LL04 sect. 3.4: the q = +1 centroid equals g_eff (and q = -1 its negative); the combination of second
  // moments (<s^2>_{+1} + <s^2>_{-1})/2 - <s^2>_0 equals G. g factors arbitrary (not just LS values).
  int checked = 0;
  for (int tjl = 0; tjl <= 9; ++tjl)
    for (int tju = (tjl >= 2 ? tjl - 2 : tjl); tju <= tjl + 2; tju += 2) {
      if (tjl == 0 && tju == 0) continue;
      const double gl = 0.37 + 0.11 * tjl, gu = 1.91 - 0.13 * tju;
      const ZeemanPattern p = ComputeZeemanPattern(tjl, gl, tju, gu);
      EXPECT_CLOSE(Moment(p, +1, 1), p.g_eff, 1e-12, 1e-12);
      EXPECT_CLOSE(Moment(p, -1, 1), -p.g_eff, 1e-12, 1e-12);
      EXPECT_CLOSE(Moment(p, 0, 1), 0.0, 0.0, 1e-12);
      const double g2 = 0.5 * (Moment(p, +1, 2) + Moment(p, -1, 2)) - Moment(p, 0, 2);
      EXPECT_CLOSE(g2, p.G, 1e-11, 1e-12) << "2Jl=" << tjl << " 2Ju=" << tju;
      ++checked;
    }
  EXPECT_GT(checked, 20);
}

TEST(ZeemanPattern, ShiftSignIsPositiveTowardTheRedForQPlusOne) {
  const ZeemanPattern p = Pattern("1S0", "1P1");  // lower J = 0: shift = -g_u M_u, q = M_l - M_u
  for (const auto& c : p.components) EXPECT_CLOSE(c.shift_lorentz, static_cast<double>(c.q), kTight, kTight);
}

TEST(ZeemanPattern, ForbiddenTransitionsAreRejected) {
  EXPECT_THROW(Pattern("1S0", "3P0"), LevelParseError);   // J = 0 -> 0
  EXPECT_THROW(Pattern("5D4", "5D2"), LevelParseError);   // |dJ| = 2
  EXPECT_THROW(Pattern("2S1/2", "3P1"), LevelParseError); // integer / half-integer mix
  try {
    Pattern("1S0", "3P0");
  } catch (const LevelParseError& e) {
    EXPECT_NE(std::string(e.what()).find("J = 0 -> J = 0"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("1S0"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace zeeline
