// Fuzz target: unit-bearing values ("630.25nm", "1.2kG", "1e15cm-3", ...) and term-energy lists
// ("1/2=0,3/2=17.196"). The first byte picks the parser, the rest is the text.
#include <cstddef>
#include <cstdint>

#include "fuzz/fuzz_input.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace zeeline;
  if (size == 0) return 0;
  const std::string text = fuzz::Text(data + 1, size - 1);
  try {
    switch (data[0] % 10) {
      case 0: (void)ParseWavelength_nm(text); break;
      case 1: (void)ParseField_gauss(text); break;
      case 2: (void)ParseVelocity_kms(text); break;
      case 3: (void)ParseTemperature_K(text); break;
      case 4: (void)ParsePressure_Pa(text); break;
      case 5: (void)ParseNumberDensity_cm3(text); break;
      case 6: (void)ParseMass_u(text); break;
      case 7: (void)ParseLength_nm(text); break;
      case 8: (void)ParseRate_per_s(text); break;
      default: (void)ParseTermEnergies(text, "fuzz"); break;
    }
  } catch (const UnitError&) {
  } catch (const LevelParseError&) {  // ParseTermEnergies
  }
  return 0;
}
