// Mixed-regime (incomplete Paschen–Back) patterns: the weak- and strong-field limits, the closed form of the
// 2P doublet blocks, strength sums and invariants, the breakdown field, and the error paths.
#include "zeeline/atomic/paschen_back.hpp"

#include <cmath>
#include <cstdio>
#include <map>
#include <utility>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

// Weak-field limit: the issue asks for 1e-6 Lorentz units in positions and strengths; at 1e-3 G the
// second-order departure is ~ mu_B B / dE ~ 1e-9 for intervals of 0.3 cm^-1 and more.
constexpr double kWeakTol = 1e-6;
// Closed forms are evaluated in double precision on energies of order 10 cm^-1: 1e-9 cm^-1 is ~1e5 ulp.
constexpr double kEnergyTol_cm1 = 1e-9;
// Sums of normalised strengths: rounding only.
constexpr double kSumTol = 1e-12;
// mu_B / (h c) per gauss in cm^-1: CODATA 2018 mu_B/(hc) = 46.686447783 m^-1 T^-1 (scipy.constants,
// physical_constants['Bohr magneton in inverse meter per tesla']) -> 4.6686447783e-5 cm^-1/G.
constexpr double kMuB_cm1_per_G = 4.6686447783e-5;

const LandeOptions kTextbook{2.0, 1.0};

// Na I 3p 2P: 2P1/2 at 16956.170 cm^-1, 2P3/2 at 16973.366 cm^-1 (interval 17.196 cm^-1; from memory).
const TermEnergies kSodium2P{{1, 16956.170}, {3, 16973.366}};
// Li I 2p 2P interval 0.335 cm^-1 (2P1/2 14903.66, 2P3/2 14904.00 cm^-1; from memory, rounded).
const TermEnergies kLithium2P{{1, 14903.66}, {3, 14904.00}};
// A 3P term obeying the Landé interval rule E_J = E_c + (A/2)[J(J+1) - L(L+1) - S(S+1)] with A = 20 cm^-1
// (invented numbers; shaped like the 3s3p 3P term of Mg I, whose intervals are about 20 and 41 cm^-1).
constexpr double kA3P = 20.0;
const TermEnergies k3PIntervalRule{{0, 0.5 * kA3P * (0 - 2 - 2)}, {2, 0.5 * kA3P * (2 - 2 - 2)},
                                   {4, 0.5 * kA3P * (6 - 2 - 2)}};

PaschenBackLine Line(const char* lower, const TermEnergies& el, const char* upper, const TermEnergies& eu,
                     const LandeOptions& o = kTextbook) {
  return MakePaschenBackLine(ParseLevel(lower), el, ParseLevel(upper), eu, o);
}

using Key = std::pair<double, double>;  // (M_u, M_l)
std::map<Key, ZeemanComponent> ByLabel(const ZeemanPattern& p) {
  std::map<Key, ZeemanComponent> m;
  for (const auto& c : p.components) m[{c.M_upper, c.M_lower}] = c;
  return m;
}

void ExpectMatchesLinear(const PaschenBackLine& line, const ZeemanPattern& linear, double field_gauss) {
  const auto pb = ByLabel(ComputePaschenBackPattern(line, field_gauss).pattern);
  const auto lin = ByLabel(linear);
  for (const auto& [key, c] : lin) {
    auto it = pb.find(key);
    ASSERT_NE(it, pb.end()) << "component " << key.first << " -> " << key.second << " missing";
    EXPECT_CLOSE(it->second.shift_lorentz, c.shift_lorentz, 0.0, kWeakTol);
    EXPECT_CLOSE(it->second.strength, c.strength, 0.0, kWeakTol);
    EXPECT_EQ(it->second.q, c.q);
  }
  for (const auto& [key, c] : pb)  // extra components (forbidden at B = 0) must be negligible
    if (!lin.count(key)) EXPECT_LT(c.strength, kWeakTol);
}

// ---------------------------------------------------------------------------- weak-field limit
TEST(PaschenBack, WeakFieldLimitEqualsTheLinearPatternOfTheAtomicModule) {
  // Reference: ComputeZeemanPattern (zeeman_pattern.hpp, LL04 eqs. 3.13-3.14), itself checked against
  // sympy's Wigner 3j; the two codes share only the 3j routine.
  struct Case {
    const char* lower;
    TermEnergies el;
    const char* upper;
    TermEnergies eu;
  };
  const std::vector<Case> cases = {
      {"2S1/2", {}, "2P1/2", kSodium2P},  {"2S1/2", {}, "2P3/2", kSodium2P},
      {"2S1/2", {}, "2P3/2", kLithium2P}, {"3P0", k3PIntervalRule, "3S1", {}},
      {"3P1", k3PIntervalRule, "3S1", {}}, {"3P2", k3PIntervalRule, "3S1", {}},
      {"3S1", {}, "3P1", k3PIntervalRule},
  };
  for (const auto& c : cases) {
    for (const LandeOptions& o : {kTextbook, LandeOptions{}}) {
      SCOPED_TRACE(std::string(c.lower) + " -> " + c.upper + " g_s = " + std::to_string(o.g_spin));
      const PaschenBackLine line = Line(c.lower, c.el, c.upper, c.eu, o);
      const ZeemanPattern linear = ComputeZeemanPattern(ParseLevel(c.lower), ParseLevel(c.upper), o);
      ExpectMatchesLinear(line, linear, 1e-3);
    }
  }
}

// ---------------------------------------------------------------------------- strong-field limit
TEST(PaschenBack, StrongFieldApproachesCompletePaschenBackWithFirstOrderFineStructure) {
  // Complete Paschen–Back regime with the first-order fine-structure correction, for a term obeying the
  // interval rule (H_fs = A L.S): E(M_L, M_S) = E_c + mu_B B (M_L + g_s M_S) + A M_L M_S, E_c the
  // (2J+1)-weighted centroid (textbook: Bethe & Salpeter 1957, sect. 47; Condon & Shortley 1935, ch. XVI;
  // from memory). The remaining error is second order, ~ A^2 / (mu_B B): in Lorentz units ~ (A / mu_B B)^2.
  // Line 3S1 (upper, single level, at 0) -> 3P2 of the interval-rule term (lower).
  const PaschenBackLine line = Line("3P2", k3PIntervalRule, "3S1", {}, kTextbook);
  const double e_centroid = 0.0;  // (1 E0 + 3 E1 + 5 E2) / 9 = (-40 - 60 + 100) / 9 = 0
  const double e_lower_level = 0.5 * kA3P * (6 - 2 - 2);  // E(3P2)
  double previous_error = 0.0;
  for (double field_gauss : {2e7, 4e7}) {
    const double x = kMuB_cm1_per_G * field_gauss;
    const double ratio = kA3P / x;
    const PaschenBackPattern pb = ComputePaschenBackPattern(line, field_gauss);
    ASSERT_FALSE(pb.pattern.components.empty());
    double worst = 0.0;
    for (std::size_t k = 0; k < pb.pattern.components.size(); ++k) {
      const auto& d = pb.details[k];
      if (d.two_MS_upper != d.two_MS_lower) {  // dipole acts on L: M_S changing components fade as B grows
        EXPECT_LT(pb.pattern.components[k].strength, 4.0 * ratio * ratio);
        continue;
      }
      const double MLu = 0.5 * d.two_ML_upper, MLl = 0.5 * d.two_ML_lower, MS = 0.5 * d.two_MS_lower;
      const double eu = x * (MLu + 2.0 * MS);  // 3S: L = 0, no fine structure
      const double el = e_centroid + x * (MLl + 2.0 * MS) + kA3P * MLl * MS - e_lower_level;
      const double expected_shift = -(eu - el) / x;
      worst = std::max(worst, std::fabs(pb.pattern.components[k].shift_lorentz - expected_shift));
    }
    EXPECT_LT(worst, 4.0 * ratio * ratio) << "at " << field_gauss << " G";
    if (previous_error > 0.0) EXPECT_CLOSE(worst / previous_error, 0.25, 0.02);  // second order: 1/B^2
    previous_error = worst;
  }
}

TEST(PaschenBack, StrongFieldEnergiesOfEachBlockFollowTheFirstOrderFormula) {
  // Same textbook formula for every sublevel of the 3P term (per M block, sorted energies), g_s = CODATA.
  const TermStructure t = MakeTermStructure(ParseLevel("3P1"), k3PIntervalRule, "test");
  const double gs = constants::kElectronSpinG;
  const double field_gauss = 5e6, x = kMuB_cm1_per_G * field_gauss;
  const auto levels = TermSublevels(t, field_gauss, gs);
  std::map<int, std::vector<double>> expected, got;
  for (int ML = -1; ML <= 1; ++ML)
    for (int two_MS = -2; two_MS <= 2; two_MS += 2)
      expected[2 * ML + two_MS].push_back(x * (ML + gs * 0.5 * two_MS) + kA3P * ML * 0.5 * two_MS);
  for (const auto& s : levels) got[s.two_M].push_back(s.energy_cm1);
  const double ratio = kA3P / x;
  for (auto& [two_M, e] : expected) {
    std::sort(e.begin(), e.end());
    ASSERT_EQ(e.size(), got[two_M].size());
    for (std::size_t k = 0; k < e.size(); ++k)
      EXPECT_CLOSE(got[two_M][k], e[k], 0.0, 2.0 * kA3P * ratio) << "2M = " << two_M;
  }
}

// ---------------------------------------------------------------------------- closed form, 2P doublet
// The M = +-1/2 blocks of a 2P term are 2x2; with g_s = 2 and E_J = E_c + (A/2)[J(J+1) - 11/4]:
//   E_+-(M) = E_c - A/4 + mu_B B M +- (1/2) sqrt(A^2 (L + 1/2)^2 + 2 A mu_B B M + (mu_B B)^2),   L = 1
// (the doublet formula of the incomplete Paschen–Back effect: Bethe & Salpeter 1957, sect. 47; from memory).
// A = (2/3)(E_3/2 - E_1/2); E_+ belongs to J = 3/2 when A > 0.
struct DoubletRoots {
  double plus, minus;
};
DoubletRoots Doublet(double A, double x, double M) {
  const double r = 0.5 * std::sqrt(A * A * 2.25 + 2.0 * A * x * M + x * x);
  return {-0.25 * A + x * M + r, -0.25 * A + x * M - r};
}

TEST(PaschenBack, DoubletBlocksMatchTheClosedFormFromWeakToStrongField) {
  for (const TermEnergies* energies : {&kSodium2P, &kLithium2P}) {
    const TermStructure t = MakeTermStructure(ParseLevel("2P3/2"), *energies, "test");
    const double A = (2.0 / 3.0) * (t.Energy(3) - t.Energy(1));
    const double centroid = (2.0 * t.Energy(1) + 4.0 * t.Energy(3)) / 6.0;
    for (double tesla : {0.1, 0.3, 1.0, 3.0, 10.0}) {
      const double field_gauss = tesla * 1e4, x = kMuB_cm1_per_G * field_gauss;
      SCOPED_TRACE("A = " + std::to_string(A) + " cm^-1, B = " + std::to_string(tesla) + " T");
      for (const auto& s : TermSublevels(t, field_gauss, 2.0, centroid)) {
        const double M = 0.5 * s.two_M;
        if (std::abs(s.two_M) == 3) {
          EXPECT_CLOSE(s.energy_cm1, 0.5 * A + (4.0 / 3.0) * x * M, 0.0, kEnergyTol_cm1);  // M_L + 2 M_S = (4/3) M
          continue;
        }
        const DoubletRoots r = Doublet(A, x, M);
        EXPECT_CLOSE(s.energy_cm1, s.two_J == 3 ? r.plus : r.minus, 0.0, kEnergyTol_cm1);
      }
    }
  }
}

TEST(PaschenBack, DoubletLineShiftsMatchTheClosedForm) {
  // D2-like line 2S1/2 -> 2P3/2 and D1-like 2S1/2 -> 2P1/2 with the sodium interval: the 2S1/2 sublevels move
  // linearly (2 M mu_B B), the 2P ones by the closed form; shift = -(dE_u - dE_l) / (mu_B B).
  const TermStructure t = MakeTermStructure(ParseLevel("2P3/2"), kSodium2P, "test");
  const double A = (2.0 / 3.0) * (t.Energy(3) - t.Energy(1));
  for (int two_Ju : {1, 3}) {
    const PaschenBackLine line = Line("2S1/2", {}, two_Ju == 3 ? "2P3/2" : "2P1/2", kSodium2P);
    const double e_level = two_Ju == 3 ? 0.5 * A : -A;  // relative to the centroid
    for (double tesla : {0.1, 1.0, 10.0}) {
      const double field_gauss = tesla * 1e4, x = kMuB_cm1_per_G * field_gauss;
      for (const auto& c : ComputePaschenBackPattern(line, field_gauss).pattern.components) {
        double eu;
        if (std::fabs(c.M_upper) > 1.0) {
          eu = 0.5 * A + (4.0 / 3.0) * x * c.M_upper;  // M_u = +-3/2: M_L + 2 M_S = +-2
        } else {
          const DoubletRoots r = Doublet(A, x, c.M_upper);
          eu = two_Ju == 3 ? r.plus : r.minus;
        }
        const double expected = -((eu - e_level) - 2.0 * x * c.M_lower) / x;
        EXPECT_CLOSE(c.shift_lorentz, expected, 0.0, kEnergyTol_cm1 / x)
            << "2J_u = " << two_Ju << ", " << tesla << " T, M_u = " << c.M_upper;
      }
    }
  }
}

// ---------------------------------------------------------------------------- strengths
double GroupSum(const ZeemanPattern& p, int q) {
  double s = 0.0;
  for (const auto& c : p.components)
    if (c.q == q) s += c.strength;
  return s;
}

TEST(PaschenBack, StrengthsSumToOneInEachGroupAtEveryField) {
  // Normalisation required of the `line` output (each Delta M group of the line sums to 1), for the doublet
  // and for a 3S-3P triplet with interval-rule energies, from 1 G to 100 T; no NaN.
  struct Case {
    const char* lower;
    TermEnergies el;
    const char* upper;
    TermEnergies eu;
  };
  const std::vector<Case> cases = {{"2S1/2", {}, "2P3/2", kSodium2P}, {"2S1/2", {}, "2P1/2", kLithium2P},
                                   {"3S1", {}, "3P0", k3PIntervalRule}, {"3S1", {}, "3P1", k3PIntervalRule},
                                   {"3S1", {}, "3P2", k3PIntervalRule}};
  for (const auto& c : cases)
    for (double field_gauss : {1.0, 1e2, 1e4, 1e5, 1e6}) {
      const ZeemanPattern p = ComputePaschenBackPattern(Line(c.lower, c.el, c.upper, c.eu), field_gauss).pattern;
      for (int q = -1; q <= 1; ++q)
        EXPECT_CLOSE(GroupSum(p, q), 1.0, kSumTol) << c.lower << " -> " << c.upper << " q " << q << " at "
                                                    << field_gauss << " G";
    }
}

TEST(PaschenBack, MultipletStrengthPerGroupIsFieldIndependent) {
  // Sum over all lines J_u -> J_l of the multiplet of |<u|d_q|l>|^2 is the trace of d_q d_q^+ over the two
  // terms, invariant under the field's unitary mixing (sum rule; e.g. Condon & Shortley 1935 ch. IX, from
  // memory). With <L_u||d||L_l> = 1 it equals, per q, sum over M_L of 3j(L_u 1 L_l; -M_Lu -q M_Ll)^2 times
  // (2S+1) = (2S+1)/3 (orthogonality of 3j symbols, Edmonds 1957 eq. 3.7.8). Case 3S -> 3P, 2S + 1 = 3.
  for (double field_gauss : {10.0, 1e4, 3e5, 3e6}) {
    double total[3] = {0, 0, 0};
    for (const char* lower : {"3P0", "3P1", "3P2"}) {
      const PaschenBackLine line = Line(lower, k3PIntervalRule, "3S1", {});
      const PaschenBackPattern p = ComputePaschenBackPattern(line, field_gauss);
      for (std::size_t k = 0; k < p.details.size(); ++k) total[p.pattern.components[k].q + 1] += p.details[k].raw_strength;
    }
    for (int q = 0; q < 3; ++q) EXPECT_CLOSE(total[q], 3.0 / 3.0, 1e-12) << "q " << q - 1 << " at " << field_gauss;
  }
}

// ---------------------------------------------------------------------------- breakdown field
TEST(PaschenBack, BreakdownFieldOfTheD1LineAgreesWithTheClosedForm) {
  // The departure of 2S1/2 -> 2P1/2 computed here from the closed-form roots (textbook formula above,
  // g_s = 2): max |shift - linear| / mean |linear sigma shift| (= 4/3), solved for 0.1 by bisection.
  const TermStructure t = MakeTermStructure(ParseLevel("2P3/2"), kSodium2P, "test");
  const double A = (2.0 / 3.0) * (t.Energy(3) - t.Energy(1));
  auto departure = [&](double field_gauss) {
    const double x = kMuB_cm1_per_G * field_gauss;
    double worst = 0.0;
    for (double Mu : {-0.5, 0.5})
      for (double Ml : {-0.5, 0.5}) {
        const double shift = -((Doublet(A, x, Mu).minus + A) - 2.0 * x * Ml) / x;
        const double linear = 2.0 * Ml - (2.0 / 3.0) * Mu;
        worst = std::max(worst, std::fabs(shift - linear));
      }
    return worst / (4.0 / 3.0);
  };
  double lo = 1.0, hi = 1e7;
  for (int i = 0; i < 200; ++i) {
    const double mid = std::sqrt(lo * hi);
    (departure(mid) > 0.1 ? hi : lo) = mid;
  }
  const PaschenBackLine line = Line("2S1/2", {}, "2P1/2", kSodium2P);
  EXPECT_CLOSE(LinearBreakdownField_gauss(line), hi, 1e-5);
  EXPECT_CLOSE(LinearDeparture(line, hi), departure(hi), 1e-8);
}

TEST(PaschenBack, BreakdownScalesWithTheFineStructureInterval) {
  // The departure depends on mu_B B / A only (scaling of H), so the breakdown field is proportional to the
  // interval: sodium / lithium = 17.196 / 0.34.
  const double na = LinearBreakdownField_gauss(Line("2S1/2", {}, "2P3/2", kSodium2P));
  const double li = LinearBreakdownField_gauss(Line("2S1/2", {}, "2P3/2", kLithium2P));
  EXPECT_CLOSE(na / li, (16973.366 - 16956.170) / (14904.00 - 14903.66), 1e-5);
}

TEST(PaschenBack, SingletAndSingleLevelTermsNeverBreakDown) {
  // 1P1 -> 1D2: each term has one level, H is linear in B (normal Zeeman effect at every field).
  const PaschenBackLine line = Line("1P1", {}, "1D2", {});
  EXPECT_TRUE(std::isinf(LinearBreakdownField_gauss(line)));
  EXPECT_LT(LinearDeparture(line, 1e7), 1e-9);
}

TEST(PaschenBack, SplittingTableInvertsTheSigmaHalfSeparation) {
  // Round trip against direct evaluation at fields from 2 G to 900 T; the table interpolates g_split
  // linearly in ln B at 64 points per decade; measured worst error 5.4e-6 relative, tolerance 2e-5.
  const PaschenBackLine line = Line("2S1/2", {}, "2P3/2", kLithium2P);
  const SigmaSplittingTable table(line);
  EXPECT_CLOSE(table.g_split_weak(), 7.0 / 6.0, 1e-3);  // D2 g_eff = 7/6 (standard value; from memory)
  double worst = 0.0;
  for (double field_gauss = 2.0; field_gauss < 9e6; field_gauss *= 1.37) {
    const double h = SigmaHalfSeparation(ComputePaschenBackPattern(line, field_gauss).pattern) * field_gauss;
    const auto s = table.FieldForHalfSeparation(h);
    ASSERT_TRUE(s.ok);
    EXPECT_CLOSE(s.field_gauss, field_gauss, 2e-5);
    worst = std::max(worst, std::fabs(s.field_gauss / field_gauss - 1.0));
  }
  std::printf("[ splitting table ] worst relative field error 2 G - 9 MG: %.2e\n", worst);
  EXPECT_FALSE(table.FieldForHalfSeparation(1e12).ok);
}

// ---------------------------------------------------------------------------- inputs and errors
TEST(PaschenBack, ParsesTermEnergies) {
  const TermEnergies e = ParseTermEnergies(" 1/2=16956.17 ; 1.5 = 16973.37", "test");
  ASSERT_EQ(e.size(), 2u);
  EXPECT_EQ(e[0].two_J, 1);
  EXPECT_EQ(e[1].two_J, 3);
  EXPECT_DOUBLE_EQ(e[1].energy_cm1, 16973.37);
  EXPECT_EQ(ParseTermEnergies(TermEnergiesText(e), "x").size(), 2u);
  EXPECT_EQ(ZeemanRegimeFromString("paschen-back"), ZeemanRegime::kPaschenBack);
  EXPECT_THROW(ZeemanRegimeFromString("strong"), OptionError);
}

TEST(PaschenBack, RefusesIncompleteOrImpossibleInputNamingTheProblem) {
  struct Bad {
    const char* text;
    const char* needle;
  };
  for (const Bad& b : {Bad{"", "empty"}, Bad{"1/2", "J=E"}, Bad{"1/3=4", "angular momentum"},
                       Bad{"1/2=abc", "not a finite number"}, Bad{"-1=0", "angular momentum"}}) {
    try {
      ParseTermEnergies(b.text, "--upper-term-energies");
      ADD_FAILURE() << "accepted '" << b.text << "'";
    } catch (const LevelParseError& e) {
      EXPECT_NE(std::string(e.what()).find(b.needle), std::string::npos) << e.what();
      EXPECT_NE(std::string(e.what()).find("--upper-term-energies"), std::string::npos) << e.what();
    }
  }
  auto message = [](auto&& f) -> std::string {
    try {
      f();
    } catch (const LevelParseError& e) {
      return e.what();
    }
    return "(no error)";
  };
  EXPECT_NE(message([] { Line("2S1/2", {}, "2P3/2", {{3, 1.0}}); }).find("missing the energy of J = 1/2"),
            std::string::npos);
  EXPECT_NE(message([] { Line("2S1/2", {}, "2P3/2", {}); }).find("J = 1/2, 3/2"), std::string::npos);
  EXPECT_NE(message([] { Line("2S1/2", {}, "2P3/2", {{1, 0.0}, {3, 1.0}, {5, 2.0}}); }).find("J = 5/2 is not a level"),
            std::string::npos);
  EXPECT_NE(message([] { Line("2S1/2", {}, "2P3/2", {{1, 0.0}, {1, 1.0}}); }).find("twice"), std::string::npos);
  EXPECT_NE(message([] { Line("2S1/2", {}, "2P3/2", {{1, 5.0}, {3, 5.0}}); }).find("same energy"), std::string::npos);
  EXPECT_NE(message([] { Line("1S0", {}, "3P1", k3PIntervalRule); }).find("spin changes"), std::string::npos);
  EXPECT_NE(message([] { Line("2S1/2:g=2.1", {}, "2P3/2", kSodium2P); }).find("measured g"), std::string::npos);
  EXPECT_NE(message([] { Line("jK(2P3/2,s,3/2,2)", {}, "2P3/2", kSodium2P); }).find("LS term"), std::string::npos);
  EXPECT_NE(message([] { Line("2S1/2", {}, "2D3/2", {{3, 0.0}, {5, 1.0}}); }).find("not an electric-dipole"),
            std::string::npos);
  EXPECT_THROW(ComputePaschenBackPattern(Line("2S1/2", {}, "2P3/2", kSodium2P), 0.0), OptionError);
}

}  // namespace
}  // namespace zeeline
