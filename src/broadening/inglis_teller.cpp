#include "zeeline/broadening/inglis_teller.hpp"

#include <cmath>

namespace zeeline {

double InglisTellerDensity_cm3(double last_resolved_n) {
  return std::pow(10.0, kInglisTellerConstant - kInglisTellerSlope * std::log10(last_resolved_n));
}

double InglisTellerLastResolved(double electron_density_cm3) {
  return std::pow(10.0, (kInglisTellerConstant - std::log10(electron_density_cm3)) / kInglisTellerSlope);
}

}  // namespace zeeline
