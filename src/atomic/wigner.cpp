#include "zeeline/atomic/wigner.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdlib>

namespace zeeline {
namespace {

constexpr int kMaxFactorial = 200;

const std::array<long double, kMaxFactorial + 1>& FactorialTable() {
  static const std::array<long double, kMaxFactorial + 1> table = [] {
    std::array<long double, kMaxFactorial + 1> t{};
    t[0] = 1.0L;
    for (int i = 1; i <= kMaxFactorial; ++i) t[i] = t[i - 1] * static_cast<long double>(i);
    return t;
  }();
  return table;
}

long double Fact(int n) { return FactorialTable()[static_cast<std::size_t>(n)]; }

}  // namespace

double Wigner3j(int two_j1, int two_j2, int two_j3, int two_m1, int two_m2, int two_m3) {
  if (two_j1 < 0 || two_j2 < 0 || two_j3 < 0) return 0.0;
  if (two_m1 + two_m2 + two_m3 != 0) return 0.0;
  if (std::abs(two_m1) > two_j1 || std::abs(two_m2) > two_j2 || std::abs(two_m3) > two_j3) return 0.0;
  if ((two_j1 + two_m1) % 2 || (two_j2 + two_m2) % 2 || (two_j3 + two_m3) % 2) return 0.0;
  if ((two_j1 + two_j2 + two_j3) % 2) return 0.0;
  if (two_j3 < std::abs(two_j1 - two_j2) || two_j3 > two_j1 + two_j2) return 0.0;
  if ((two_j1 + two_j2 + two_j3) / 2 + 1 > kMaxFactorial) return std::nan("");

  // Integer combinations (all exact because of the checks above).
  const int a = (two_j1 + two_j2 - two_j3) / 2;   // j1+j2-j3
  const int b = (two_j1 - two_j2 + two_j3) / 2;   // j1-j2+j3
  const int c = (-two_j1 + two_j2 + two_j3) / 2;  // -j1+j2+j3
  const int s = (two_j1 + two_j2 + two_j3) / 2 + 1;
  const int j1pm1 = (two_j1 + two_m1) / 2, j1mm1 = (two_j1 - two_m1) / 2;
  const int j2pm2 = (two_j2 + two_m2) / 2, j2mm2 = (two_j2 - two_m2) / 2;
  const int j3pm3 = (two_j3 + two_m3) / 2, j3mm3 = (two_j3 - two_m3) / 2;
  const int t1 = (two_j3 - two_j2 + two_m1) / 2;   // j3-j2+m1
  const int t2 = (two_j3 - two_j1 - two_m2) / 2;   // j3-j1-m2

  const int k_min = std::max({0, -t1, -t2});
  const int k_max = std::min({a, j1mm1, j2pm2});
  long double sum = 0.0L;
  for (int k = k_min; k <= k_max; ++k) {
    const long double term =
        1.0L / (Fact(k) * Fact(a - k) * Fact(j1mm1 - k) * Fact(j2pm2 - k) * Fact(t1 + k) * Fact(t2 + k));
    sum += (k % 2 == 0) ? term : -term;
  }
  const long double delta = Fact(a) * Fact(b) * Fact(c) / Fact(s);
  const long double norm =
      std::sqrt(delta * Fact(j1pm1) * Fact(j1mm1) * Fact(j2pm2) * Fact(j2mm2) * Fact(j3pm3) * Fact(j3mm3));
  const int phase_twice = two_j1 - two_j2 - two_m3;  // 2(j1-j2-m3), always even here
  const long double sign = ((phase_twice / 2) % 2 == 0) ? 1.0L : -1.0L;
  return static_cast<double>(sign * norm * sum);
}

}  // namespace zeeline
