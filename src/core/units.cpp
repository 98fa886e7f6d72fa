#include "zeeline/core/units.hpp"

#include <cctype>
#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <string_view>
#include <utility>
#include <vector>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

struct UnitFactor {
  const char* name;
  double factor;  // multiply the number by this to get the internal unit
};

// Split "630.25 nm" into 630.25 and "nm"; the number must be finite and the whole text used.
std::pair<double, std::string> SplitNumberAndUnit(const std::string& text, const char* what) {
  const char* begin = text.c_str();
  char* end = nullptr;
  errno = 0;
  const double value = std::strtod(begin, &end);
  if (end == begin || errno == ERANGE || !std::isfinite(value)) {
    throw UnitError("cannot read a " + std::string(what) + " from '" + text +
                    "': expected a finite number followed by a unit");
  }
  std::string unit(end);
  while (!unit.empty() && std::isspace(static_cast<unsigned char>(unit.front()))) unit.erase(0, 1);
  while (!unit.empty() && std::isspace(static_cast<unsigned char>(unit.back()))) unit.pop_back();
  return {value, unit};
}

double Convert(const std::string& text, const char* what, const std::vector<UnitFactor>& units,
               const char* default_unit) {
  auto [value, unit] = SplitNumberAndUnit(text, what);
  if (unit.empty()) unit = default_unit;
  std::string allowed;
  for (const auto& u : units) {
    if (unit == u.name) return value * u.factor;
    if (!allowed.empty()) allowed += ", ";
    allowed += u.name;
  }
  throw UnitError("unknown " + std::string(what) + " unit '" + unit + "' in '" + text +
                  "': expected one of " + allowed);
}

// Lengths (and wavelengths) to nm.
const std::vector<UnitFactor>& LengthUnits() {
  static const std::vector<UnitFactor> kUnits = {
      {"nm", 1.0},   {"A", 0.1},   {"AA", 0.1},   {"Angstrom", 0.1}, {"angstrom", 0.1},
      {"m", 1e9},    {"cm", 1e7},  {"mm", 1e6},   {"um", 1e3},       {"micron", 1e3},
      {"pm", 1e-3}};
  return kUnits;
}

}  // namespace

double ParseWavelength_nm(const std::string& text) {
  const double nm = Convert(text, "wavelength", LengthUnits(), "nm");
  if (!(nm > 0.0)) throw UnitError("wavelength '" + text + "' must be positive");
  return nm;
}

double ParseField_gauss(const std::string& text) {
  static const std::vector<UnitFactor> kUnits = {
      {"G", 1.0}, {"kG", 1e3}, {"T", 1e4}, {"mT", 10.0}, {"uT", 1e-2}, {"gauss", 1.0}, {"tesla", 1e4}};
  return Convert(text, "magnetic field", kUnits, "G");
}

double ParseVelocity_kms(const std::string& text) {
  static const std::vector<UnitFactor> kUnits = {
      {"km/s", 1.0}, {"kms", 1.0}, {"m/s", 1e-3}, {"cm/s", 1e-5}};
  return Convert(text, "velocity", kUnits, "km/s");
}

double ParseTemperature_K(const std::string& text) {
  // 1 eV / k_B = e / k_B (CODATA 2018 exact values): 11604.518... K.
  static const std::vector<UnitFactor> kUnits = {
      {"K", 1.0}, {"kK", 1e3}, {"eV", constants::kElementaryCharge_C / constants::kBoltzmann_J_K}};
  const double kelvin = Convert(text, "temperature", kUnits, "K");
  if (!(kelvin > 0.0)) throw UnitError("temperature '" + text + "' must be positive");
  return kelvin;
}

double ParsePressure_Pa(const std::string& text) {
  // 1 Torr = 101325/760 Pa and 1 atm = 101325 Pa (exact by definition).
  static const std::vector<UnitFactor> kUnits = {
      {"Pa", 1.0},      {"hPa", 1e2},  {"kPa", 1e3},           {"MPa", 1e6},
      {"mbar", 1e2},    {"bar", 1e5},  {"Torr", 101325.0 / 760.0}, {"mTorr", 0.101325 / 760.0},
      {"atm", 101325.0}};
  const double pa = Convert(text, "pressure", kUnits, "Pa");
  if (!(pa >= 0.0)) throw UnitError("pressure '" + text + "' must not be negative");
  return pa;
}

double ParseNumberDensity_cm3(const std::string& text) {
  static const std::vector<UnitFactor> kUnits = {
      {"cm-3", 1.0}, {"cm^-3", 1.0}, {"/cm3", 1.0}, {"/cm^3", 1.0}, {"m-3", 1e-6}, {"m^-3", 1e-6}, {"/m3", 1e-6}};
  const double n = Convert(text, "number density", kUnits, "cm-3");
  if (!(n >= 0.0)) throw UnitError("number density '" + text + "' must not be negative");
  return n;
}

double ParseMass_u(const std::string& text) {
  static const std::vector<UnitFactor> kUnits = {
      {"u", 1.0}, {"amu", 1.0}, {"Da", 1.0}, {"kg", 1.0 / constants::kAtomicMassUnit_kg}};
  const double u = Convert(text, "mass", kUnits, "u");
  if (!(u > 0.0)) throw UnitError("mass '" + text + "' must be positive");
  return u;
}

double ParseLength_nm(const std::string& text) {
  const double nm = Convert(text, "length", LengthUnits(), "nm");
  if (!(nm > 0.0)) throw UnitError("length '" + text + "' must be positive");
  return nm;
}

double ParseRate_per_s(const std::string& text) {
  static const std::vector<UnitFactor> kUnits = {{"s-1", 1.0}, {"/s", 1.0}, {"s^-1", 1.0}, {"Hz", 1.0}};
  const double rate = Convert(text, "rate", kUnits, "s-1");
  if (!(rate >= 0.0)) throw UnitError("rate '" + text + "' must not be negative");
  return rate;
}

double LorentzUnit_nm(double wavelength_nm, double field_gauss) {
  const double lambda_m = wavelength_nm * 1e-9;
  const double field_tesla = field_gauss * 1e-4;
  return constants::kLorentzCoeff_per_m_per_T * lambda_m * lambda_m * field_tesla * 1e9;
}

}  // namespace zeeline
