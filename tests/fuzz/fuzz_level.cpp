// Fuzz target: level designations (LS, jK, jj, ":g=") and the transition built from two of them.
// Input: "LOWER|UPPER" (one designation alone is parsed as both).
#include <cstddef>
#include <cstdint>

#include "fuzz/fuzz_input.hpp"
#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/errors.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace zeeline;
  const auto f = fuzz::Split(fuzz::Text(data, size), '|', 2);
  try {
    const Level lower = ParseLevel(f[0]);
    const Level upper = ParseLevel(f.size() > 1 ? f[1] : f[0]);
    (void)LandeG(lower);
    (void)ElectricDipoleParityProblem(lower, upper);
    (void)ComputeZeemanPattern(lower, upper);
  } catch (const LevelParseError&) {
  }
  return 0;
}
