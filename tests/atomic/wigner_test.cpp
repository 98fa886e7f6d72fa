// Wigner 3j symbols against sympy.physics.wigner (reference table made by tests/data/gen_wigner3j.py)
// and against closed forms from Edmonds (1957), Table 2.
#include "zeeline/atomic/wigner.hpp"

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"

namespace zeeline {
namespace {

// sympy evaluates exactly; our long-double Racah sum agrees to a few ulp for j <= 30.
constexpr double kRelTol = 1e-12;
constexpr double kAbsTol = 1e-14;

TEST(Wigner3j, MatchesSympyReferenceTable) {
  std::ifstream in(std::string(ZEELINE_TEST_DATA_DIR) + "/wigner3j_sympy.csv");
  ASSERT_TRUE(in) << "missing tests/data/wigner3j_sympy.csv";
  std::string line;
  std::getline(in, line);  // header
  int rows = 0;
  while (std::getline(in, line)) {
    std::stringstream ss(line);
    int a[6];
    char comma;
    double expected;
    for (int& x : a) ss >> x >> comma;
    ss >> expected;
    ASSERT_FALSE(ss.fail()) << line;
    EXPECT_CLOSE(Wigner3j(a[0], a[1], a[2], a[3], a[4], a[5]), expected, kRelTol, kAbsTol) << line;
    ++rows;
  }
  EXPECT_GT(rows, 2000);
}

TEST(Wigner3j, ClosedFormForJ3EqualZero) {
  // (j j 0; m -m 0) = (-1)^(j-m) / sqrt(2j+1)   (Edmonds 1957, eq. 3.7.9)
  for (int two_j = 0; two_j <= 12; ++two_j) {
    for (int two_m = -two_j; two_m <= two_j; two_m += 2) {
      const double sign = (((two_j - two_m) / 2) % 2 == 0) ? 1.0 : -1.0;
      EXPECT_CLOSE(Wigner3j(two_j, two_j, 0, two_m, -two_m, 0), sign / std::sqrt(two_j + 1.0), kRelTol);
    }
  }
}

TEST(Wigner3j, SelectionRulesGiveZero) {
  EXPECT_EQ(Wigner3j(2, 2, 2, 2, 2, -2), 0.0);   // m sum not zero
  EXPECT_EQ(Wigner3j(2, 2, 6, 0, 0, 0), 0.0);    // triangle violated
  EXPECT_EQ(Wigner3j(2, 2, 2, 0, 0, 0), 0.0);    // j1+j2+j3 odd with all m = 0
  EXPECT_EQ(Wigner3j(1, 1, 2, 3, -3, 0), 0.0);   // |m1| > j1
}

TEST(Wigner3j, OrthogonalitySumsToOne) {
  // sum_{m1 m2} (2 j3 + 1) (j1 j2 j3; m1 m2 m3)^2 = 1 for fixed j3, m3 (Edmonds eq. 3.7.8).
  for (int tj1 = 0; tj1 <= 9; ++tj1)
    for (int tj2 = 0; tj2 <= 9; ++tj2)
      for (int tj3 = std::abs(tj1 - tj2); tj3 <= tj1 + tj2; tj3 += 2)
        for (int tm3 = -tj3; tm3 <= tj3; tm3 += 2) {
          double sum = 0.0;
          for (int tm1 = -tj1; tm1 <= tj1; tm1 += 2) {
            const double w = Wigner3j(tj1, tj2, tj3, tm1, -tm1 - tm3, tm3);
            sum += (tj3 + 1.0) * w * w;
          }
          EXPECT_CLOSE(sum, 1.0, 1e-12);
        }
}

}  // namespace
}  // namespace zeeline
