#include "zeeline/io/quality_flags.hpp"

namespace zeeline {

std::vector<std::string> QualityBitNames(std::uint32_t flags) {
  static const struct {
    std::uint32_t bit;
    const char* name;
  } kBits[] = {{kQualityNonFiniteInput, "NONFINITE_INPUT"}, {kQualityLowSignal, "LOW_SIGNAL"},
               {kQualityNotConverged, "NOT_CONVERGED"},     {kQualityOutOfRange, "OUT_OF_RANGE"},
               {kQualityMasked, "MASKED"},                  {kQualityBadFit, "BAD_FIT"},
               {kQualityNoContinuum, "NO_CONTINUUM"},       {kQualitySaturatedLine, "SATURATED_LINE"},
               {kQualityModelMismatch, "MODEL_MISMATCH"},   {kQualityInconsistent, "INCONSISTENT"},
               {kQualityLowTransverse, "LOW_TRANSVERSE"},   {kQualityAbsurdInput, "ABSURD_INPUT"},
               {kQualityNonPositiveI, "NONPOSITIVE_I"},     {kQualityPolExceedsI, "POL_EXCEEDS_I"}};
  std::vector<std::string> out;
  std::uint32_t known = 0;
  for (const auto& b : kBits) {
    known |= b.bit;
    if (flags & b.bit) out.emplace_back(b.name);
  }
  if (flags & ~known) out.emplace_back("UNKNOWN");
  return out;
}

}  // namespace zeeline
