// Fuzz target: spectrum tables (docs/measure.md), text as it would be read from a file.
#include <cstddef>
#include <cstdint>

#include "fuzz/fuzz_input.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace zeeline;
  try {
    (void)ParseSpectrumTable(fuzz::Text(data, size), "fuzz.txt");
  } catch (const SpectrumError&) {
  }
  return 0;
}
