// Modulation-matrix calibration: recovery of an injected O, retardance and offset from noisy sequences
// simulated through the Jones route (calibration_sim.hpp), pulls against the reported sigmas, refusal of
// sequences that cannot constrain O (del Toro Iniesta & Collados 2000 for the efficiencies), and the
// calibration-table parser's error messages.
#include "zeeline/polarimetry/modulation_fit.hpp"

#include <cmath>
#include <string>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "polarimetry/calibration_sim.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline::polarimetry {
namespace {

using testing::GoodDesign;
using testing::SimTruth;
using testing::Simulate;
using testing::StateSpec;
using testing::TrueModulation;

// Pull widths from 40 realisations: the sample RMS of 40 unit normals lies within 1 +- 0.25 with
// probability > 99.5 % (chi-square with 40 dof, common practice); a mean pull beyond 0.6 flags bias.
constexpr int kRealisations = 40;
constexpr double kPullRmsLow = 0.75, kPullRmsHigh = 1.3, kPullMeanMax = 0.6;
constexpr double kChi2MeanTol = 0.16;  // 3.2 standard deviations of the mean reduced chi2 (see below)

TEST(ModulationFit, NoiseFreeSequenceGivesTheInjectedValuesExactly) {
  SimTruth t;
  t.o = TrueModulation();
  t.read_noise = 0.0;
  t.gain = 1e300;  // no photon noise either: the counts are the exact model
  std::vector<double> tk;
  const CalibrationSequence seq = Simulate(GoodDesign(), t, 1, &tk);
  ModulationFitOptions o;
  o.read_noise_counts = 1.0;
  const ModulationFitResult r = FitModulation(seq, o);
  EXPECT_CLOSE(r.retardance_deg, t.retardance_deg, 1e-7);
  EXPECT_CLOSE(r.retarder_offset_deg, t.offset_deg, 1e-6);
  for (int j = 0; j < 4; ++j)
    for (int i = 0; i < 4; ++i) EXPECT_CLOSE(r.modulation(j, i), t.o(j, i), 1e-7, 1e-4) << j << i;
  for (std::size_t k = 0; k < tk.size(); ++k)
    if (!seq.states[k].dark) EXPECT_CLOSE(r.transmission[k], tk[k], 1e-8) << seq.states[k].name;
  EXPECT_CLOSE(r.dark_counts(2), t.dark_counts, 1e-8);
  // D O = 1 and the efficiencies obey the bounds (del Toro Iniesta & Collados 2000, eqs. 36-38).
  EXPECT_TRUE((r.demodulation * r.modulation).isApprox(Eigen::Matrix4d::Identity(), 1e-10));
  EXPECT_LE(r.efficiency(0), 1.0 + 1e-12);
  EXPECT_LE(r.efficiency.tail<3>().squaredNorm(), 1.0 + 1e-12);
}

TEST(ModulationFit, NoisyFitsRecoverTheInjectionWithinTheReportedSigma) {
  SimTruth t;
  t.o = TrueModulation();
  std::vector<double> pull_delta, pull_offset, pull_ov, pull_oq, pull_t;
  double chi2_sum = 0.0;
  for (int n = 0; n < kRealisations; ++n) {
    std::vector<double> tk;
    const CalibrationSequence seq = Simulate(GoodDesign(), t, 1000u + static_cast<unsigned>(n), &tk);
    const ModulationFitResult r = FitModulation(seq);
    ASSERT_TRUE(r.converged);
    pull_delta.push_back((r.retardance_deg - t.retardance_deg) / r.retardance_err_deg);
    pull_offset.push_back((r.retarder_offset_deg - t.offset_deg) / r.retarder_offset_err_deg);
    pull_ov.push_back((r.modulation(1, 3) - t.o(1, 3)) / r.modulation_err(1, 3));
    pull_oq.push_back((r.modulation(2, 1) - t.o(2, 1)) / r.modulation_err(2, 1));
    pull_t.push_back((r.transmission[5] - tk[5]) / r.transmission_err[5]);
    chi2_sum += r.chi2_reduced;
  }
  auto check = [](const std::vector<double>& p, const char* what) {
    double mean = 0.0, ms = 0.0;
    for (double x : p) {
      mean += x / static_cast<double>(p.size());
      ms += x * x / static_cast<double>(p.size());
    }
    EXPECT_LT(std::fabs(mean), kPullMeanMax) << what;
    EXPECT_GT(std::sqrt(ms), kPullRmsLow) << what;
    EXPECT_LT(std::sqrt(ms), kPullRmsHigh) << what;
  };
  check(pull_delta, "retardance");
  check(pull_offset, "retarder offset");
  check(pull_ov, "O(2,V)");
  check(pull_oq, "O(3,Q)");
  check(pull_t, "transmission");
  // The noise model matches the simulation: each fit has 20 degrees of freedom, so the mean of 40 reduced
  // chi2 values has a standard deviation sqrt(2/20/40) = 0.05 (chi-square statistics, common practice).
  EXPECT_CLOSE(chi2_sum / kRealisations, 1.0, kChi2MeanTol);
}

TEST(ModulationFit, PolariserOnlySequenceIsRefusedNamingTheVColumn) {
  SimTruth t;
  t.o = TrueModulation();
  std::vector<StateSpec> s = {{"dark", {}, {}}, {"open", {}, {}}};
  for (double p : {0.0, 45.0, 90.0, 135.0, 22.5}) s.push_back({"pol" + std::to_string(int(p)), p, {}});
  const CalibrationSequence seq = Simulate(s, t, 7);
  try {
    FitModulation(seq);
    FAIL() << "a polariser-only sequence must be refused";
  } catch (const CalibrationError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("V column"), std::string::npos) << m;
    EXPECT_NE(m.find("retardance"), std::string::npos) << m;
  }
}

TEST(ModulationFit, RetarderOnlyParallelOrPerpendicularIsRefused) {
  SimTruth t;
  t.o = TrueModulation();
  std::vector<StateSpec> s = {{"dark", {}, {}}, {"open", {}, {}}};
  for (double p : {0.0, 45.0, 90.0, 135.0}) s.push_back({"pol" + std::to_string(int(p)), p, {}});
  for (double p : {0.0, 60.0}) {
    s.push_back({"par" + std::to_string(int(p)), p, p});
    s.push_back({"perp" + std::to_string(int(p)), p, p + 90.0});
  }
  const CalibrationSequence seq = Simulate(s, t, 8);
  const auto parts = UnconstrainedParts(seq);
  ASSERT_FALSE(parts.empty());
  try {
    FitModulation(seq);
    FAIL() << "no circular light: must be refused";
  } catch (const CalibrationError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("V column"), std::string::npos) << m;
    EXPECT_NE(m.find("retardance"), std::string::npos) << m;
  }
  EXPECT_TRUE(UnconstrainedParts(Simulate(GoodDesign(), t, 9)).empty());
}

TEST(CalibrationTable, ParsesBlankAnglesAndNamesTheFirstOpenState) {
  const CalibrationSequence s = ParseCalibrationTable(
      "# lab sequence\nstate_name,polarizer_deg,retarder_deg,m1,m2,m3,m4\n"
      "dark,,,1,2,3,4\nopen_a,,,10,20,30,40\npol0,0,,5,5,5,5\nq30,0,30,1,1,1,1\nopen_b,,,9,9,9,9\n",
      "t.csv");
  ASSERT_EQ(s.states.size(), 5u);
  EXPECT_EQ(s.n_modulation, 4);
  EXPECT_TRUE(s.states[0].dark);
  EXPECT_EQ(s.FirstOpen(), 1);
  EXPECT_FALSE(s.states[2].retarder_deg.has_value());
  EXPECT_DOUBLE_EQ(*s.states[3].retarder_deg, 30.0);
  EXPECT_EQ(s.states[3].line, 6);
  // A UTF-8 byte-order mark before the header (spreadsheet export) is skipped (Unicode Standard, sect. 23.8).
  const CalibrationSequence b =
      ParseCalibrationTable("\xEF\xBB\xBFstate_name,polarizer_deg,retarder_deg,m1,m2,m3,m4\nopen,,,1,2,3,4\n", "b.csv");
  EXPECT_EQ(b.states.size(), 1u);
}

TEST(CalibrationTable, MalformedTablesNameTheLineAndColumn) {
  const std::string h = "state_name,polarizer_deg,retarder_deg,m1,m2,m3,m4\n";
  const struct {
    std::string text, expect;
  } cases[] = {
      {"name,pol,ret,m1,m2,m3,m4\nopen,,,1,1,1,1\n", "t.csv:1: header column 1"},
      {"state_name,polarizer_deg,retarder_deg,m1,m2,m3\nopen,,,1,1,1\n", "at least 4"},
      {"state_name,polarizer_deg,retarder_deg,m1,m2,m4,m3\n", "expected 'm3'"},
      {h + "open,,,1,1,1,x\n", "t.csv:2: column 7 (m4): 'x'"},
      {h + "open,,,1,1,1\n", "t.csv:2: 6 columns, expected 7"},
      {h + "open,,,1,1,1,1\nopen,,,1,1,1,1\n", "appears twice"},
      {h + "open,10,,1,1,1,1\n", "named open"},
      {h + "pol,zero,,1,1,1,1\nopen,,,1,1,1,1\n", "column 2 (polarizer_deg): 'zero'"},
      {h + "pol,0,,1,1,1,1\n", "no state named open"},
      {"", "no header line"},
  };
  for (const auto& c : cases) {
    try {
      ParseCalibrationTable(c.text, "t.csv");
      ADD_FAILURE() << "accepted: " << c.text;
    } catch (const CalibrationError& e) {
      EXPECT_NE(std::string(e.what()).find(c.expect), std::string::npos) << e.what() << "\n expected: " << c.expect;
    }
  }
}

TEST(ModulationFit, BadOptionsAreRefused) {
  ModulationFitOptions o;
  o.retardance_start_deg = 180.0;
  EXPECT_NE(o.Validate().find("retardance"), std::string::npos);
  o = {};
  o.gain_e_per_count = 0.0;
  EXPECT_NE(o.Validate().find("gain"), std::string::npos);
}

}  // namespace
}  // namespace zeeline::polarimetry
