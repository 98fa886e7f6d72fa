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

}  // namespace
}  // namespace zeeline
