// zeeline/atomic/wigner.hpp -- Wigner 3j symbols by the Racah formula, exact for half-integers.
//
//   ( j1 j2 j3 )
//   ( m1 m2 m3 ) = delta(m1+m2+m3, 0) (-1)^(j1-j2-m3) sqrt(Delta(j1 j2 j3))
//                  sqrt[(j1+m1)!(j1-m1)!(j2+m2)!(j2-m2)!(j3+m3)!(j3-m3)!]
//                  sum_k (-1)^k / [k!(j1+j2-j3-k)!(j1-m1-k)!(j2+m2-k)!(j3-j2+m1+k)!(j3-j1-m2+k)!]
//   Delta(a b c) = (a+b-c)!(a-b+c)!(-a+b+c)!/(a+b+c+1)!
// Source: Edmonds (1957), Angular Momentum in Quantum Mechanics, eq. (3.7.3); Racah (1942).
// All arguments are passed doubled (2j, 2m) so half-integers are exact. Factorials are tabulated in long
// double; the sum is accurate to ~1e-15 relative for j up to about 40 (far beyond atomic levels).
// Returns 0 for any selection-rule violation (triangle, m ranges, integer sums).
#pragma once

namespace zeeline {

double Wigner3j(int two_j1, int two_j2, int two_j3, int two_m1, int two_m2, int two_m3);

}  // namespace zeeline
