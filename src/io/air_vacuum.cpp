#include "zeeline/io/air_vacuum.hpp"

#include <cmath>
#include <cstdio>
#include <string>

#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

std::string Format(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.10g", v);
  return buf;
}

void CheckRange(double vacuum_nm, const char* what) {
  if (!(vacuum_nm >= kAirVacuumMinVacuum_nm && vacuum_nm <= kAirVacuumMaxVacuum_nm)) {
    throw OptionError(std::string(what) + " " + Format(vacuum_nm) +
                      " nm is outside the air/vacuum conversion range (vacuum " +
                      Format(kAirVacuumMinVacuum_nm) + " .. " + Format(kAirVacuumMaxVacuum_nm) +
                      " nm, Morton 2000 eq. 8)");
  }
}

double IndexUnchecked(double vacuum_nm) {
  const double s = 1.0e4 / (vacuum_nm * 10.0);  // 1/micrometre
  const double s2 = s * s;
  return 1.0 + 8.34254e-5 + 2.406147e-2 / (130.0 - s2) + 1.5998e-4 / (38.9 - s2);
}

}  // namespace

double AirRefractiveIndex(double vacuum_nm) {
  CheckRange(vacuum_nm, "vacuum wavelength");
  return IndexUnchecked(vacuum_nm);
}

double VacuumToAir_nm(double vacuum_nm) { return vacuum_nm / AirRefractiveIndex(vacuum_nm); }

double AirToVacuum_nm(double air_nm) {
  const double min_air_nm = kAirVacuumMinVacuum_nm / IndexUnchecked(kAirVacuumMinVacuum_nm);
  const double max_air_nm = kAirVacuumMaxVacuum_nm / IndexUnchecked(kAirVacuumMaxVacuum_nm);
  if (!(air_nm >= min_air_nm && air_nm <= max_air_nm)) {
    throw OptionError("air wavelength " + Format(air_nm) +
                      " nm is outside the air/vacuum conversion range (air " + Format(min_air_nm) + " .. " +
                      Format(max_air_nm) + " nm, Morton 2000 eq. 8)");
  }
  double vac = air_nm;
  for (int i = 0; i < 50; ++i) {
    const double next = air_nm * IndexUnchecked(vac);
    if (std::fabs(next - vac) <= 1e-15 * vac) return next;
    vac = next;
  }
  return vac;
}

double ConvertWavelength_nm(double wavelength_nm, WavelengthFrame from, WavelengthFrame to) {
  if (from == to) return wavelength_nm;
  return from == WavelengthFrame::kAir ? AirToVacuum_nm(wavelength_nm) : VacuumToAir_nm(wavelength_nm);
}

std::vector<double> ConvertWavelengths_nm(const std::vector<double>& wavelength_nm, WavelengthFrame from,
                                          WavelengthFrame to) {
  std::vector<double> out;
  out.reserve(wavelength_nm.size());
  for (double w : wavelength_nm) out.push_back(ConvertWavelength_nm(w, from, to));
  return out;
}

}  // namespace zeeline
