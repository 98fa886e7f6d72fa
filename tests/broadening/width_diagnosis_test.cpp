// The width diagnosis on spectra from the project's own line-set synthesis (line_set_model.hpp) with
// injected fields and Gaussian noise: detection with pulls inside 3 sigma, no detection and upper limits that
// cover the truth, the degeneracy rule; the significance conversion against scipy.stats.norm.
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "broadening/python_reference.hpp"
#include "common/expect_close.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/broadening/doppler_width.hpp"
#include "zeeline/broadening/width_diagnosis.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kPullLimit = 3.0;       // |recovered - injected| / sigma, per realisation
constexpr double kMassHe = 4.002602;
constexpr double kOneEv_K = 11604.518;   // e / k (scipy.constants; core units test)
constexpr double kNoise = 4.0;           // counts
constexpr double kBackground = 30.0;
constexpr double kInstrumentFwhm_nm = 0.003;

struct InjectedLine {
  std::string name;
  double wavelength_nm;
  const char* lower;
  const char* upper;
  double area;
  double g_upper_override = 0.0;  // 0 = computed
};

DiagnosisLine MakeLine(const InjectedLine& l) {
  DiagnosisLine d;
  d.name = l.name;
  d.line.rest_wavelength_nm = l.wavelength_nm;
  Level lower = ParseLevel(l.lower), upper = ParseLevel(l.upper);
  if (l.g_upper_override != 0.0) upper.measured_g = l.g_upper_override;
  d.line.pattern = ComputeZeemanPattern(lower, upper);
  return d;
}

const std::vector<InjectedLine> kThreeHe = {{"HeI_5016", 501.5678, "1S0", "1P1", 30.0},
                                            {"HeI_6678", 667.8151, "1P1", "1D2", 45.0},
                                            {"HeI_7281", 728.1349, "1P1", "1S0", 20.0}};

// Windows of +-0.15 nm every 2 pm around each line; I (and V) from the line-set model plus noise.
Spectrum1D Synthesize(const std::vector<InjectedLine>& lines, const LineSetShape& truth, unsigned seed, bool with_v,
                      double noise = kNoise) {
  std::vector<ModelLine> model;
  for (const InjectedLine& l : lines) model.push_back(MakeLine(l).line);
  Spectrum1D s;
  s.source = "synthetic";
  for (const InjectedLine& l : lines)
    for (int k = -75; k <= 75; ++k) s.wavelength_nm.push_back(l.wavelength_nm + 0.002 * k);
  std::vector<std::vector<double>> pI, pV;
  LineSetProfiles(model, truth, kInstrumentFwhm_nm, s.wavelength_nm, pI, pV);
  std::mt19937 rng(seed);
  std::normal_distribution<double> gauss(0.0, noise);
  s.I.assign(s.size(), kBackground);
  if (with_v) s.V.assign(s.size(), 0.0);
  for (std::size_t i = 0; i < lines.size(); ++i)
    for (std::size_t k = 0; k < s.size(); ++k) {
      s.I[k] += lines[i].area * pI[i][k];
      if (with_v) s.V[k] += lines[i].area * pV[i][k];
    }
  for (double& v : s.I) v += gauss(rng);
  for (double& v : s.V) v += gauss(rng);
  return s;
}

LineSetShape Truth(double temperature_K, double field_gauss, double inclination_deg) {
  LineSetShape t;
  t.speed_kms = DopplerSpeed_kms(temperature_K, kMassHe);
  t.lorentz_hwhm_nm = 0.001;
  t.vlos_kms = 1.2;
  t.field_gauss = field_gauss;
  t.inclination_deg = inclination_deg;
  return t;
}

WidthDiagnosisOptions Options(const std::vector<InjectedLine>& lines) {
  WidthDiagnosisOptions o;
  for (const InjectedLine& l : lines) o.lines.push_back(MakeLine(l));
  o.mass_u = kMassHe;
  o.instrument_fwhm_nm = kInstrumentFwhm_nm;
  return o;
}

TEST(WidthDiagnosis, SignificanceConversionMatchesScipyNormal) {
  // scipy.stats.norm.isf(p) for p = Phi(-3), Phi(-5), exp(-200), exp(-700).
  const auto ref = testing::PythonNumbers(
      "import math\nfrom scipy.stats import norm\n"
      "for p in [norm.sf(3.0), norm.sf(5.0), math.exp(-200.0), math.exp(-700.0)]:\n    print(repr(norm.isf(p)))\n");
  ASSERT_EQ(ref.size(), 4u);
  EXPECT_CLOSE(GaussianSigmaFromLogP(std::log(0.0013498980316300933)), ref[0], 1e-9);
  EXPECT_CLOSE(GaussianSigmaFromLogP(std::log(2.866515718791939e-07)), ref[1], 1e-9);
  EXPECT_CLOSE(GaussianSigmaFromLogP(-200.0), ref[2], 1e-9);
  EXPECT_CLOSE(GaussianSigmaFromLogP(-700.0), ref[3], 1e-9);
  EXPECT_EQ(GaussianSigmaFromLogP(0.0), 0.0);
}

TEST(WidthDiagnosis, DetectsAnInjectedFieldFromStokesIAloneWithinItsError) {
  const LineSetShape truth = Truth(kOneEv_K, 3500.0, 70.0);
  for (unsigned seed : {1u, 2u, 3u}) {
    SCOPED_TRACE("seed " + std::to_string(seed));
    const WidthDiagnosis d = DiagnoseWidths(Synthesize(kThreeHe, truth, seed, false), Options(kThreeHe));
    EXPECT_TRUE(d.magnetic_required) << d.verdict;
    EXPECT_FALSE(d.degenerate);
    EXPECT_GT(d.significance_sigma, 10.0);
    EXPECT_LT(std::fabs(d.field_gauss - 3500.0), kPullLimit * d.field_err_gauss)
        << d.field_gauss << " +- " << d.field_err_gauss;
    EXPECT_LT(std::fabs(d.temperature_K - kOneEv_K), kPullLimit * d.temperature_err_K)
        << d.temperature_K << " +- " << d.temperature_err_K;
    EXPECT_LT(d.magnetic.chi2 / d.magnetic.dof, 1.3);
    EXPECT_GT(d.delta_bic, 0.0);
  }
}

TEST(WidthDiagnosis, WithStokesVTheInclinationAndCrossChecksFollow) {
  const LineSetShape truth = Truth(kOneEv_K, 4500.0, 60.0);
  const WidthDiagnosis d = DiagnoseWidths(Synthesize(kThreeHe, truth, 4, true), Options(kThreeHe));
  ASSERT_TRUE(d.magnetic_required) << d.verdict;
  EXPECT_TRUE(d.has_v);
  EXPECT_LT(std::fabs(d.field_gauss - 4500.0), kPullLimit * d.field_err_gauss);
  EXPECT_LT(std::fabs(d.inclination_deg - 60.0), kPullLimit * d.inclination_err_deg);
  ASSERT_EQ(d.cross_checks.size(), 3u);
  // Centre of gravity is exact for a normal triplet (Rees & Semel 1979): B_LOS = 4500 cos 60 = 2250 G.
  for (const LineCrossCheck& x : d.cross_checks) {
    ASSERT_TRUE(x.available) << x.name;
    EXPECT_LT(std::fabs(x.cog_blos_gauss - 2250.0), 4.0 * x.cog_blos_err_gauss) << x.name;
  }
}

TEST(WidthDiagnosis, HotUnmagnetisedPlasmaGivesNoDetectionAndAnUpperLimit) {
  const LineSetShape truth = Truth(3.0 * kOneEv_K, 0.0, 90.0);
  for (unsigned seed : {5u, 6u}) {
    SCOPED_TRACE("seed " + std::to_string(seed));
    const WidthDiagnosis d = DiagnoseWidths(Synthesize(kThreeHe, truth, seed, false), Options(kThreeHe));
    EXPECT_FALSE(d.magnetic_required) << d.verdict;
    EXPECT_LT(d.significance_sigma, 3.0);
    ASSERT_TRUE(d.upper_limit_gauss.has_value()) << d.verdict;
    EXPECT_GT(*d.upper_limit_gauss, 0.0);
    EXPECT_LT(std::fabs(d.temperature_K - 3.0 * kOneEv_K), kPullLimit * d.temperature_err_K);
  }
}

TEST(WidthDiagnosis, UpperLimitCoversAWeakInjectedField) {
  // 700 G is below detection at this noise (2 x the hot spectrum's noise); the 95 % limit must lie above it.
  const LineSetShape truth = Truth(3.0 * kOneEv_K, 700.0, 60.0);
  int covered = 0;
  for (unsigned seed : {7u, 8u, 9u}) {
    const WidthDiagnosis d = DiagnoseWidths(Synthesize(kThreeHe, truth, seed, false, 2.0 * kNoise), Options(kThreeHe));
    EXPECT_FALSE(d.magnetic_required) << d.verdict;
    if (d.upper_limit_gauss && *d.upper_limit_gauss >= 700.0) ++covered;
  }
  EXPECT_GE(covered, 2);  // 95 % coverage: two misses in three would happen 0.7 % of the time
}

TEST(WidthDiagnosis, SingleLineIsDegenerateAndNeverADetectionFromWidths) {
  const std::vector<InjectedLine> one = {kThreeHe[1]};
  const WidthDiagnosis d = DiagnoseWidths(Synthesize(one, Truth(kOneEv_K, 6000.0, 70.0), 10, false, 1.0), Options(one));
  EXPECT_TRUE(d.degenerate);
  EXPECT_FALSE(d.magnetic_required) << d.verdict;
  EXPECT_NE(d.degeneracy_reason.find("single line"), std::string::npos);
  EXPECT_NE(d.verdict.find("no detection is claimed"), std::string::npos) << d.verdict;
}

TEST(WidthDiagnosis, SingleLineWithStokesVMayDetectFromV) {
  const std::vector<InjectedLine> one = {kThreeHe[1]};
  const WidthDiagnosis d = DiagnoseWidths(Synthesize(one, Truth(kOneEv_K, 3000.0, 40.0), 11, true), Options(one));
  EXPECT_TRUE(d.degenerate);
  EXPECT_TRUE(d.magnetic_required) << d.verdict;
  EXPECT_NE(d.verdict.find("rests on Stokes V"), std::string::npos) << d.verdict;
}

TEST(WidthDiagnosis, EqualWidthFactorTimesLambdaSquaredIsDegenerate) {
  // Normal triplets at 500 nm (g = 1) and 707.107 nm with g = 0.5 (measured-g override): z l^2 equal.
  const std::vector<InjectedLine> pair = {{"A_500", 500.0, "1S0", "1P1", 30.0},
                                          {"B_707", 707.10678, "1S0", "1P1", 30.0, 0.5}};
  const WidthDiagnosis d =
      DiagnoseWidths(Synthesize(pair, Truth(kOneEv_K, 6000.0, 70.0), 12, false, 1.0), Options(pair));
  EXPECT_TRUE(d.degenerate);
  EXPECT_FALSE(d.magnetic_required) << d.verdict;
  EXPECT_NE(d.degeneracy_reason.find("lambda^2"), std::string::npos) << d.degeneracy_reason;
}

TEST(WidthDiagnosis, EqualWidthFactorTimesLambdaIsDegenerateWithTemperature) {
  // g = 1 at 500 nm and g = 0.5 at 1000 nm: z l equal, so a field mimics a temperature.
  const std::vector<InjectedLine> pair = {{"A_500", 500.0, "1S0", "1P1", 30.0},
                                          {"C_1000", 1000.0, "1S0", "1P1", 30.0, 0.5}};
  WidthDiagnosisOptions o = Options(pair);
  const WidthDiagnosis d = DiagnoseWidths(Synthesize(pair, Truth(kOneEv_K, 2000.0, 70.0), 13, false, 1.0), o);
  EXPECT_TRUE(d.degenerate);
  EXPECT_NE(d.degeneracy_reason.find("temperature"), std::string::npos) << d.degeneracy_reason;
}

TEST(WidthDiagnosis, RejectsLinesOutsideTheSpectrumAndBadOptions) {
  const Spectrum1D s = Synthesize(kThreeHe, Truth(kOneEv_K, 0.0, 90.0), 14, false);
  std::vector<InjectedLine> off = kThreeHe;
  off.push_back({"HeI_4922", 492.1931, "1P1", "1D2", 1.0});
  try {
    DiagnoseWidths(s, Options(off));
    FAIL() << "accepted a line outside the spectrum";
  } catch (const BroadeningError& e) {
    EXPECT_NE(std::string(e.what()).find("HeI_4922"), std::string::npos) << e.what();
  }
  std::vector<InjectedLine> gap = kThreeHe;
  gap.push_back({"GAP_600", 600.0, "1S0", "1P1", 1.0});
  EXPECT_THROW(DiagnoseWidths(s, Options(gap)), BroadeningError);
  EXPECT_FALSE(SpectrumCovers(s, 600.0));
  EXPECT_TRUE(SpectrumCovers(s, 667.8151));
  WidthDiagnosisOptions o = Options(kThreeHe);
  o.mass_u = 0.0;
  EXPECT_THROW(DiagnoseWidths(s, o), OptionError);
  o = Options(kThreeHe);
  o.detection_sigma = -1.0;
  EXPECT_NE(o.Validate().find("detection_sigma"), std::string::npos);
}

}  // namespace
}  // namespace zeeline
