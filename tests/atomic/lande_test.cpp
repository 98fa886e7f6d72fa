// Landé factors: textbook values (named sources), the closed LS formula, and the coupling schemes.
#include "zeeline/atomic/lande.hpp"

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/atomic/level.hpp"

namespace zeeline {
namespace {

constexpr double kExact = 1e-13;  // rational arithmetic in double
const LandeOptions kTextbook{2.0, 1.0};

double G(const char* level, const LandeOptions& o = kTextbook) { return LandeG(ParseLevel(level), o); }

TEST(Lande, TextbookLsValuesWithGsTwo) {
  // g = 3/2 + [S(S+1) - L(L+1)] / [2J(J+1)]; values from memory, common in every atomic-physics text
  // (e.g. Condon & Shortley 1935, Table 1^16).
  EXPECT_CLOSE(G("2S1/2"), 2.0, kExact);
  EXPECT_CLOSE(G("2P1/2"), 2.0 / 3.0, kExact);
  EXPECT_CLOSE(G("2P3/2"), 4.0 / 3.0, kExact);
  EXPECT_CLOSE(G("5P1"), 2.5, kExact);   // lower level of Fe I 630.25 nm, g_eff = 2.5 (from memory)
  EXPECT_CLOSE(G("7D1"), 3.0, kExact);   // upper level of Fe I 525.02 nm, g_eff = 3 (from memory)
  EXPECT_CLOSE(G("1P1"), 1.0, kExact);   // singlets: g = 1
  EXPECT_CLOSE(G("1D2"), 1.0, kExact);
  EXPECT_CLOSE(G("3S1"), 2.0, kExact);
  EXPECT_CLOSE(G("3P2"), 1.5, kExact);
  EXPECT_CLOSE(G("4D1/2"), 0.0, kExact); // 4D1/2: g = 0 (a well-known zero-g level, from memory)
  EXPECT_CLOSE(G("6F1/2"), -2.0 / 3.0, kExact);  // negative g (from memory)
}

TEST(Lande, ZeroJHasNoSplitting) { EXPECT_EQ(G("5D0"), 0.0); }

TEST(Lande, CodataSpinFactorShiftsGByTheAnomaly) {
  // With g_s = 2 + 2a the LS formula is linear in g_s: g(g_s) - g(2) = (g_s - 2) (J(J+1) - L(L+1) + S(S+1)) /
  // (2 J(J+1)). For 2S1/2 the whole g is spin: g = g_s = 2.00231930436 (CODATA 2018).
  EXPECT_CLOSE(LandeG(ParseLevel("2S1/2")), 2.00231930436256, 1e-14);
  const double ds = LandeOptions{}.g_spin - 2.0;
  // 5P1: J(J+1)=2, L(L+1)=2, S(S+1)=6 -> coefficient 6/4.
  EXPECT_CLOSE(LandeG(ParseLevel("5P1")) - 2.5, ds * 6.0 / 4.0, 1e-12);
}

TEST(Lande, PairCouplingForNeonLevels) {
  // Ne I 2p5 3s [3/2]_2 ("1s5") and 2p5 3p [5/2]_3 ("2p9") in jK coupling, g_s = 2.
  // Hand evaluation of the vector model (K = J1 + l, J = K + s):
  //   [3/2]_2: g_K = g(2P3/2) = 4/3 (l = 0); g = 4/3 * 3/4 + 2 * 1/4 = 3/2
  //   [5/2]_3: g_K = 4/3 * 0.6 + 1 * 0.4 = 6/5; g = 6/5 * 5/6 + 2 * 1/6 = 4/3
  // Measured values 1.503 and 1.329 (from memory) are close, as expected for near-pure jK levels.
  EXPECT_CLOSE(G("jK(2P3/2,s,3/2,2)"), 1.5, kExact);
  EXPECT_CLOSE(G("jK(2P3/2,p,5/2,3)"), 4.0 / 3.0, kExact);
  EXPECT_NEAR(G("jK(2P3/2,s,3/2,2)"), 1.503, 0.01);
  EXPECT_NEAR(G("jK(2P3/2,p,5/2,3)"), 1.329, 0.01);
}

TEST(Lande, JjCouplingOfTwoSubsystems) {
  // jj(2P1/2, 2S1/2, J=1): g = g1 (J(J+1)+j1(j1+1)-j2(j2+1))/(2J(J+1)) + g2 (...) = (2/3 + 2)/2 = 4/3
  EXPECT_CLOSE(G("jj(2P1/2,2S1/2,1)"), 4.0 / 3.0, kExact);
  // J = 0 of the same pair does not split.
  EXPECT_EQ(G("jj(2P1/2,2S1/2,0)"), 0.0);
}

TEST(Lande, JKWithKZeroIsPureSpin) {
  // K = 0 (J1 = l, here a 3P1 core with a p electron): J = 1/2 and g = g_s whatever the core's g.
  EXPECT_CLOSE(G("jK(3P1,p,0,1/2)"), 2.0, kExact);
}

TEST(Lande, MeasuredGOverridesTheFormula) { EXPECT_EQ(G("5D4:g=1.4321"), 1.4321); }

TEST(LandeOptions, ValidateNamesTheBadField) {
  LandeOptions o;
  EXPECT_TRUE(o.Validate().empty());
  o.g_spin = 3.0;
  EXPECT_NE(o.Validate().find("g_spin"), std::string::npos);
}

}  // namespace
}  // namespace zeeline
