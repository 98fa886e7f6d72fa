// Units and the Lorentz unit, against scipy.constants (CODATA 2018) evaluated at test time.
#include "zeeline/core/units.hpp"

#include <array>
#include <cstdio>
#include <memory>
#include <string>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

std::string RunPython(const std::string& code) {
  const std::string cmd = std::string(ZEELINE_PYTHON) + " -c \"" + code + "\"";
  std::unique_ptr<FILE, int (*)(FILE*)> pipe(popen(cmd.c_str(), "r"), pclose);
  if (!pipe) return "";
  std::array<char, 256> buf{};
  std::string out;
  while (fgets(buf.data(), buf.size(), pipe.get())) out += buf.data();
  return out;
}

TEST(Units, LorentzConstantMatchesScipyCodata) {
  // e / (4 pi m_e c) from scipy.constants (CODATA 2018 in scipy 1.10), in Angstrom^-1 G^-1.
  const std::string out = RunPython(
      "import scipy.constants as c, math; "
      "print(repr(c.e / (4 * math.pi * c.m_e * c.c) * 1e-10 * 1e-4))");
  ASSERT_FALSE(out.empty()) << "could not run " << ZEELINE_PYTHON;
  const double scipy_value = std::stod(out);
  const double ours = constants::kLorentzCoeff_per_m_per_T * 1e-10 * 1e-4;
  EXPECT_CLOSE(ours, scipy_value, 1e-9);
  // The textbook figure 4.6686e-13 A^-1 G^-1 (LL04 eq. 3.8; from memory).
  EXPECT_CLOSE(ours, 4.6686e-13, 1e-4);
}

TEST(Units, ElectronSpinGMatchesScipyCodata) {
  const std::string out = RunPython(
      "import scipy.constants as c; print(repr(abs(c.physical_constants['electron g factor'][0])))");
  ASSERT_FALSE(out.empty());
  EXPECT_CLOSE(constants::kElectronSpinG, std::stod(out), 1e-13);
}

TEST(Units, LorentzSplittingOfAG1LineAt643nmIn1Tesla) {
  // 643.8 nm, g = 1, B = 1 T: about 0.0194 nm (from memory, common lab practice).
  EXPECT_NEAR(LorentzUnit_nm(643.8, 1e4), 0.0194, 0.0001);
}

TEST(Units, ParsesWavelengthsInSeveralUnits) {
  EXPECT_CLOSE(ParseWavelength_nm("630.2494nm"), 630.2494, 1e-15);
  EXPECT_CLOSE(ParseWavelength_nm("6302.494A"), 630.2494, 1e-15);
  EXPECT_CLOSE(ParseWavelength_nm("6302.494 Angstrom"), 630.2494, 1e-15);
  EXPECT_CLOSE(ParseWavelength_nm("0.6302494um"), 630.2494, 1e-15);
  EXPECT_CLOSE(ParseWavelength_nm("6.302494e-7m"), 630.2494, 1e-15);
  EXPECT_CLOSE(ParseWavelength_nm("630.2494"), 630.2494, 1e-15);
}

TEST(Units, ParsesFieldsInSeveralUnits) {
  EXPECT_CLOSE(ParseField_gauss("1200G"), 1200.0, 1e-15);
  EXPECT_CLOSE(ParseField_gauss("1.2kG"), 1200.0, 1e-15);
  EXPECT_CLOSE(ParseField_gauss("0.12T"), 1200.0, 1e-15);
  EXPECT_CLOSE(ParseField_gauss("120mT"), 1200.0, 1e-15);
  EXPECT_CLOSE(ParseVelocity_kms("500m/s"), 0.5, 1e-15);
}

TEST(Units, RejectsBadQuantitiesWithTheTextInTheMessage) {
  for (const char* bad : {"abc", "630xm", "nm", "-5nm", "0nm", "1e999nm"}) {
    try {
      ParseWavelength_nm(bad);
      FAIL() << "accepted " << bad;
    } catch (const UnitError& e) {
      EXPECT_NE(std::string(e.what()).find(bad), std::string::npos) << e.what();
    }
  }
  EXPECT_THROW(ParseField_gauss("3 furlongs"), UnitError);
}

TEST(Units, ParsesPlasmaQuantities) {
  // 1 eV / k_B from scipy.constants (CODATA 2018): e / k = 11604.518... K.
  const std::string out = RunPython("import scipy.constants as c; print(repr(c.e / c.k))");
  ASSERT_FALSE(out.empty());
  EXPECT_CLOSE(ParseTemperature_K("1eV"), std::stod(out), 1e-13);
  EXPECT_CLOSE(ParseTemperature_K("10000K"), 1e4, 1e-15);
  EXPECT_CLOSE(ParseTemperature_K("12kK"), 1.2e4, 1e-15);
  // 1 Torr = 101325/760 Pa, 1 atm = 101325 Pa, 1 bar = 1e5 Pa (definitions).
  EXPECT_CLOSE(ParsePressure_Pa("760Torr"), 101325.0, 1e-14);
  EXPECT_CLOSE(ParsePressure_Pa("1atm"), 101325.0, 1e-15);
  EXPECT_CLOSE(ParsePressure_Pa("1.3mbar"), 130.0, 1e-14);
  EXPECT_CLOSE(ParsePressure_Pa("50000"), 5e4, 1e-15);
  EXPECT_CLOSE(ParseNumberDensity_cm3("1e15cm-3"), 1e15, 1e-15);
  EXPECT_CLOSE(ParseNumberDensity_cm3("1e21m-3"), 1e15, 1e-15);
  EXPECT_CLOSE(ParseMass_u("4.0026u"), 4.0026, 1e-15);
  EXPECT_CLOSE(ParseMass_u("55.845"), 55.845, 1e-15);
  EXPECT_CLOSE(ParseMass_u("1.66053906660e-27kg"), 1.0, 1e-12);  // CODATA 2018 atomic mass constant
  EXPECT_CLOSE(ParseLength_nm("3.6A"), 0.36, 1e-15);
  EXPECT_CLOSE(ParseLength_nm("360pm"), 0.36, 1e-15);
  EXPECT_CLOSE(ParseRate_per_s("6.1e7/s"), 6.1e7, 1e-15);
  EXPECT_CLOSE(ParseRate_per_s("6.1e7s-1"), 6.1e7, 1e-15);
  EXPECT_CLOSE(ParseVelocity_kms("1.5km/s"), 1.5, 1e-15);
}

TEST(Units, RejectsBadPlasmaQuantities) {
  EXPECT_THROW(ParseTemperature_K("-5K"), UnitError);
  EXPECT_THROW(ParseTemperature_K("0K"), UnitError);
  EXPECT_THROW(ParseTemperature_K("300C"), UnitError);
  EXPECT_THROW(ParsePressure_Pa("-1Pa"), UnitError);
  EXPECT_THROW(ParsePressure_Pa("1psi"), UnitError);
  EXPECT_THROW(ParseNumberDensity_cm3("1e15cm3"), UnitError);
  EXPECT_THROW(ParseMass_u("0u"), UnitError);
  EXPECT_THROW(ParseLength_nm("0nm"), UnitError);
  EXPECT_THROW(ParseRate_per_s("-3/s"), UnitError);
  try {
    ParsePressure_Pa("3 furlongs");
    FAIL();
  } catch (const UnitError& e) {
    EXPECT_NE(std::string(e.what()).find("3 furlongs"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("Torr"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace zeeline
