// Uses one function of each installed library and prints what it got; consumer_check.cmake compares the
// output with outside values.
#include <cstdio>

#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/polarimetry/mueller.hpp"

int main() {
  zeeline::LandeOptions textbook;
  textbook.g_spin = 2.0;
  // 2P3/2 with g_s = 2: g = 1 + [J(J+1) + S(S+1) - L(L+1)] / [2J(J+1)] = 4/3 (textbook LS formula).
  const double g = zeeline::LandeG(zeeline::ParseLevel("2P3/2"), textbook);
  // Ideal linear polariser at 0 deg: M00 = M01 = M10 = M11 = 1/2, the rest 0 (textbook Mueller matrix).
  const zeeline::polarimetry::Mueller m = zeeline::polarimetry::LinearPolariser(0.0);
  std::printf("g=%.12f m00=%.12f m01=%.12f m22=%.12f\n", g, m(0, 0), m(0, 1), m(2, 2));
  return 0;
}
