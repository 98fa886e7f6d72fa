// Fuzz target: polarimeter calibration tables (polarimetry/calibration_table.hpp), text as read from a file.
#include <cstddef>
#include <cstdint>

#include "fuzz/fuzz_input.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/polarimetry/calibration_table.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace zeeline;
  try {
    const polarimetry::CalibrationSequence s = polarimetry::ParseCalibrationTable(fuzz::Text(data, size), "fuzz.csv");
    (void)s.FirstOpen();
  } catch (const CalibrationError&) {
  }
  return 0;
}
