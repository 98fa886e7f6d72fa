// Parsing of level designations: good forms, and a table of malformed or impossible ones.
#include "zeeline/atomic/level.hpp"

#include <string>

#include <gtest/gtest.h>

#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

TEST(ParseLevel, ReadsLsTerms) {
  const Level a = ParseLevel("5D4");
  EXPECT_EQ(a.coupling, Coupling::kLS);
  EXPECT_EQ(a.term.two_S, 4);
  EXPECT_EQ(a.term.L, 2);
  EXPECT_EQ(a.two_J, 8);
  const Level b = ParseLevel("2P3/2");
  EXPECT_EQ(b.term.two_S, 1);
  EXPECT_EQ(b.term.L, 1);
  EXPECT_EQ(b.two_J, 3);
  EXPECT_EQ(ParseLevel("3Po2").term.L, 1);
  EXPECT_EQ(ParseLevel("3P*2").two_J, 4);
  EXPECT_EQ(ParseLevel("2K15/2").term.L, 7);  // K = 7: the letter J is skipped
  EXPECT_EQ(ParseLevel("1Q12").term.L, 12);
  EXPECT_FALSE(ParseLevel("5D4").measured_g.has_value());
}

TEST(ParseLevel, ReadsPairAndJjCoupling) {
  const Level jk = ParseLevel("jK(2P3/2,p,5/2,2)");
  EXPECT_EQ(jk.coupling, Coupling::kJK);
  EXPECT_EQ(jk.term.two_J, 3);
  EXPECT_EQ(jk.l, 1);
  EXPECT_EQ(jk.two_K, 5);
  EXPECT_EQ(jk.two_J, 4);
  const Level jj = ParseLevel("jj(2P1/2,2S1/2,1)");
  EXPECT_EQ(jj.coupling, Coupling::kJJ);
  EXPECT_EQ(jj.term.two_J, 1);
  EXPECT_EQ(jj.second.two_J, 1);
  EXPECT_EQ(jj.two_J, 2);
}

TEST(ParseLevel, ReadsMeasuredG) {
  const Level a = ParseLevel("5D4:g=1.502");
  ASSERT_TRUE(a.measured_g.has_value());
  EXPECT_DOUBLE_EQ(*a.measured_g, 1.502);
  EXPECT_EQ(a.two_J, 8);
}

// Laporte's rule (Condon & Shortley 1935 sect. 4.9, from memory): an electric-dipole line joins levels of
// opposite parity. The rule is applied when both designations state a parity ('o'/'*' odd, 'e' even).
TEST(LevelParity, MarksAreReadAndSameParityLinesAreRefused) {
  EXPECT_EQ(ParseLevel("5Po1").term.parity, Parity::kOdd);
  EXPECT_EQ(ParseLevel("3P*2").term.parity, Parity::kOdd);
  EXPECT_EQ(ParseLevel("5De0").term.parity, Parity::kEven);
  EXPECT_EQ(ParseLevel("5D0").term.parity, Parity::kUnstated);
  EXPECT_EQ(ParseLevel("5De0").two_J, 0);
  // Fe I 630.25 nm is z5Po1 - e5D0 (odd -> even): allowed; same parity on both sides: refused.
  EXPECT_EQ(ElectricDipoleParityProblem(ParseLevel("5Po1"), ParseLevel("5De0")), "");
  EXPECT_EQ(ElectricDipoleParityProblem(ParseLevel("5Po1"), ParseLevel("5D0")), "");  // upper parity not stated
  EXPECT_EQ(ElectricDipoleParityProblem(ParseLevel("5P1"), ParseLevel("5D0")), "");   // neither stated
  const std::string odd = ElectricDipoleParityProblem(ParseLevel("5Po1"), ParseLevel("5Do0"));
  EXPECT_NE(odd.find("both levels are odd"), std::string::npos) << odd;
  EXPECT_NE(odd.find("5Po1"), std::string::npos) << odd;
  EXPECT_NE(ElectricDipoleParityProblem(ParseLevel("3Pe2"), ParseLevel("3De1")).find("even"), std::string::npos);
  // jK levels carry no parity mark: nothing to check.
  EXPECT_EQ(ElectricDipoleParityProblem(ParseLevel("jK(2P3/2,s,3/2,2)"), ParseLevel("jK(2P3/2,p,5/2,3)")), "");
}

struct BadLevel {
  const char* text;
  const char* must_mention;  // a fragment the message must contain
};

class MalformedLevel : public ::testing::TestWithParam<BadLevel> {};

TEST_P(MalformedLevel, IsRejectedWithAClearMessage) {
  const BadLevel bad = GetParam();
  try {
    ParseLevel(bad.text);
    FAIL() << "accepted '" << bad.text << "'";
  } catch (const LevelParseError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find(bad.must_mention), std::string::npos) << "message: " << msg;
    EXPECT_NE(msg.find(bad.text), std::string::npos) << "message does not quote the level: " << msg;
  }
}

INSTANTIATE_TEST_SUITE_P(
    Table, MalformedLevel,
    ::testing::Values(BadLevel{"", "empty"}, BadLevel{"D4", "multiplicity"}, BadLevel{"5X4", "not an L letter"},
                      BadLevel{"5J4", "not an L letter"}, BadLevel{"5D", "missing J"},
                      BadLevel{"5D9", "cannot be reached"}, BadLevel{"2P2", "cannot be reached"},
                      BadLevel{"3P3/2", "cannot be reached"}, BadLevel{"2P4/2", "n/2"},
                      BadLevel{"2P-1/2", "J"}, BadLevel{"0S0", "at least 1"}, BadLevel{"5D4:h=2", "g="},
                      BadLevel{"5D4:g=abc", "not a finite number"}, BadLevel{"5 D4", "spaces"},
                      BadLevel{"jK(2P3/2,p,5/2)", "4 arguments"}, BadLevel{"jK(2P3/2,p,9/2,4)", "K = 9/2"},
                      BadLevel{"jK(2P3/2,p,5/2,4)", "J = 4"}, BadLevel{"jK(2P3/2,P,5/2,2)", "lower-case"},
                      BadLevel{"jK(2P3/2,p,5/2,2", "closing parenthesis"},
                      BadLevel{"jj(2P1/2,2S1/2,2)", "J = 2"}, BadLevel{"jj(2P1/2,1)", "3 arguments"},
                      BadLevel{"xy(2P1/2,2S1/2,1)", "unknown coupling"}, BadLevel{"5D4.5", "J"}));

}  // namespace
}  // namespace zeeline
