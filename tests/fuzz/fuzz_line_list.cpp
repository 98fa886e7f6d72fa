// Fuzz target: the line-list CSV (docs/line_list.md), text as it would be read from a file.
#include <cstddef>
#include <cstdint>

#include "fuzz/fuzz_input.hpp"
#include "zeeline/atomic/line_list.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/errors.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace zeeline;
  try {
    const std::vector<LineEntry> lines = ParseLineList(fuzz::Text(data, size), "fuzz.csv");
    for (const LineEntry& l : lines) (void)ComputeZeemanPattern(l.lower, l.upper);
    if (!lines.empty()) (void)FindLine(lines, lines.front().name, "fuzz.csv");
  } catch (const LineListError&) {
  } catch (const LevelParseError&) {  // ComputeZeemanPattern of a forbidden pair
  }
  return 0;
}
