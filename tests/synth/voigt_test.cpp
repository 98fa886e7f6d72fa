// Voigt H and Faraday-Voigt F: both paths against scipy.special.wofz, limits and derivatives.
#include "zeeline/synth/voigt.hpp"

#include <cmath>
#include <iostream>
#include <sstream>
#include <vector>

#include <gtest/gtest.h>

#include "synth/synth_test_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kSqrtPi = 1.7724538509055160273;
// libcerf vs scipy (both ~1e-13 relative); the derivative identity loses a few digits.
constexpr double kReferenceRelTol = 1e-11;
constexpr double kReferenceDerivAbsTol = 1e-10;
// Measured maximum errors of the Humlicek W4 fast path over a in [1e-4, 10], |v| <= 50 (printed by
// FastPathMatchesScipyWofz; docs/line_formation.md), rounded up.
constexpr double kFastHRelTol = 1e-4;        // |dH| / H (measured 8.6e-5)
constexpr double kFastFRelTol = 5e-5;        // |dF| / (|w| / 2) (measured 4.6e-5)
constexpr double kFastDerivRelTol = 4e-4;    // |dw'| / |w'| (measured 3.5e-4)
// Central differences with step 1e-6 of smooth functions of order 1: error ~ 1e-10.
constexpr double kFiniteDiffAbsTol = 2e-8;

struct RefRow {
  double a, v, H, F, dH_dv, dF_dv;
};

std::vector<RefRow> LoadScipyReference() {
  const std::string cmd = std::string(ZEELINE_PYTHON) + " " + ZEELINE_SOURCE_DIR + "/tests/synth/wofz_reference.py";
  int status = 0;
  std::istringstream in(test::RunCommand(cmd, &status));
  std::vector<RefRow> rows;
  RefRow r{};
  while (in >> r.a >> r.v >> r.H >> r.F >> r.dH_dv >> r.dF_dv) rows.push_back(r);
  EXPECT_EQ(status, 0) << cmd;
  return rows;
}

const std::vector<RefRow>& Reference() {
  static const std::vector<RefRow> rows = LoadScipyReference();
  return rows;
}

TEST(Voigt, ReferencePathMatchesScipyWofz) {
  const auto& rows = Reference();
  ASSERT_GT(rows.size(), 100000u) << "scipy reference table did not load (needs /usr/bin/python3 + scipy)";
  for (const auto& r : rows) {
    const VoigtValue x = VoigtReference(r.a, r.v);
    const double wabs = std::hypot(r.H, 2.0 * r.F);
    ASSERT_TRUE(test::IsClose(x.H, r.H, kReferenceRelTol)) << "a=" << r.a << " v=" << r.v;
    ASSERT_TRUE(test::IsClose(x.F, r.F, 0.0, kReferenceRelTol * wabs)) << "a=" << r.a << " v=" << r.v;
    ASSERT_TRUE(test::IsClose(x.dH_dv, r.dH_dv, 1e-9, kReferenceDerivAbsTol)) << "a=" << r.a << " v=" << r.v;
    ASSERT_TRUE(test::IsClose(x.dF_dv, r.dF_dv, 1e-9, kReferenceDerivAbsTol)) << "a=" << r.a << " v=" << r.v;
  }
}

TEST(Voigt, FastPathMatchesScipyWofz) {
  const auto& rows = Reference();
  ASSERT_GT(rows.size(), 100000u);
  double max_h = 0.0, max_f = 0.0, max_d = 0.0;
  double worst_h_a = 0.0, worst_h_v = 0.0;
  for (const auto& r : rows) {
    const VoigtValue x = VoigtFast(r.a, r.v);
    const double wabs = std::hypot(r.H, 2.0 * r.F);
    const double eh = std::fabs(x.H - r.H) / r.H;
    const double ef = std::fabs(x.F - r.F) / (0.5 * wabs);
    // w' = dH/dv + 2i dF/dv
    const double dwabs = std::hypot(r.dH_dv, 2.0 * r.dF_dv);
    const double ed = std::hypot(x.dH_dv - r.dH_dv, 2.0 * (x.dF_dv - r.dF_dv)) / dwabs;
    if (eh > max_h) {
      max_h = eh;
      worst_h_a = r.a;
      worst_h_v = r.v;
    }
    max_f = std::max(max_f, ef);
    max_d = std::max(max_d, ed);
  }
  std::cout << "[ measured ] fast Voigt max |dH|/H = " << max_h << " (a=" << worst_h_a << ", v=" << worst_h_v
            << "), max |dF|/(|w|/2) = " << max_f << ", max |dw'|/|w'| = " << max_d << "\n";
  EXPECT_LE(max_h, kFastHRelTol);
  EXPECT_LE(max_f, kFastFRelTol);
  EXPECT_LE(max_d, kFastDerivRelTol);
}

// Gaussian limit a -> 0: H(0, v) = exp(-v^2) and 2F(0, v) = (2/sqrt(pi)) D(v), D = Dawson's integral
// (Abramowitz & Stegun 7.1.3 and 7.1.16; D(1) = 0.5380795069127684, A&S table 7.5).
TEST(Voigt, ZeroDampingIsGaussianAndDawson) {
  for (double v : {0.0, 0.3, 1.0, 2.0, 3.0}) {
    EXPECT_CLOSE(VoigtReference(0.0, v).H, std::exp(-v * v), 1e-13, 1e-300);
    EXPECT_CLOSE(VoigtFast(0.0, v).H, std::exp(-v * v), kFastHRelTol, 1e-300);
    EXPECT_CLOSE(VoigtFast(1e-6, v).H, VoigtReference(1e-6, v).H, kFastHRelTol, 0.0);
  }
  EXPECT_CLOSE(VoigtReference(0.0, 1.0).F, 0.5380795069127684 / kSqrtPi, 1e-12, 0.0);
  EXPECT_CLOSE(VoigtFast(0.0, 1.0).F, 0.5380795069127684 / kSqrtPi, kFastFRelTol, 0.0);
  EXPECT_DOUBLE_EQ(VoigtReference(0.0, 0.0).H, 1.0);  // normalisation H(0, 0) = 1
}

// Lorentzian wings: w(z) ~ i / (sqrt(pi) z) (1 + 1/(2 z^2) + ...) (A&S 7.1.23), so H ~ a / (sqrt(pi) v^2)
// and F ~ 1 / (2 sqrt(pi) v) with relative corrections O(1/v^2).
TEST(Voigt, LorentzianWings) {
  for (double a : {1e-3, 0.1, 0.5}) {
    for (double v : {30.0, 45.0}) {
      const double tol = 3.0 / (v * v);
      EXPECT_CLOSE(VoigtReference(a, v).H, a / (kSqrtPi * v * v), tol, 0.0) << a << " " << v;
      EXPECT_CLOSE(VoigtFast(a, v).H, a / (kSqrtPi * v * v), tol, 0.0) << a << " " << v;
      EXPECT_CLOSE(VoigtFast(a, -v).F, -1.0 / (2.0 * kSqrtPi * v), tol, 0.0) << a << " " << v;
    }
  }
}

// Area: Int H dv = sqrt(pi) (definition of H as a normalised convolution). Trapezoid on [-L, L] plus the
// analytic Lorentzian tails 2 a / (sqrt(pi) L).
TEST(Voigt, AreaIsSqrtPi) {
  const double a = 0.2, L = 400.0, h = 0.01;
  double sum = 0.0;
  for (double v = -L; v <= L + 1e-9; v += h) sum += VoigtReference(a, v).H;
  sum -= 0.5 * (VoigtReference(a, -L).H + VoigtReference(a, L).H);
  sum *= h;
  sum += 2.0 * a / (kSqrtPi * L);
  EXPECT_CLOSE(sum, kSqrtPi, 1e-6, 0.0);
}

// Analytic derivatives against central differences, at points well inside each W4 region (the
// approximant is discontinuous across region borders).
TEST(Voigt, DerivativesMatchCentralDifferences) {
  const double pts[][2] = {{1e-3, 0.2}, {0.5, 1.0}, {2.0, -3.0}, {1e-3, 3.5}, {0.01, -4.8},
                           {0.3, 8.0},  {3.0, 6.5}, {1e-4, 20.0}, {5.0, -12.0}, {8.0, 30.0}};
  const double h = 1e-6;
  for (auto fn : {&VoigtFast, &VoigtReference}) {
    for (const auto& pt : pts) {
      const double a = pt[0], v = pt[1];
      const VoigtValue x = fn(a, v);
      const VoigtValue vp = fn(a, v + h), vm = fn(a, v - h);
      const VoigtValue ap = fn(a + h, v), am = fn(a - h, v);
      EXPECT_CLOSE(x.dH_dv, (vp.H - vm.H) / (2 * h), 1e-6, kFiniteDiffAbsTol) << a << " " << v;
      EXPECT_CLOSE(x.dF_dv, (vp.F - vm.F) / (2 * h), 1e-6, kFiniteDiffAbsTol) << a << " " << v;
      EXPECT_CLOSE(x.dH_da, (ap.H - am.H) / (2 * h), 1e-6, kFiniteDiffAbsTol) << a << " " << v;
      EXPECT_CLOSE(x.dF_da, (ap.F - am.F) / (2 * h), 1e-6, kFiniteDiffAbsTol) << a << " " << v;
    }
  }
}

TEST(Voigt, MethodNamesRoundTripAndUnknownNameThrows) {
  EXPECT_EQ(ParseVoigtMethod(VoigtMethodName(VoigtMethod::kFast)), VoigtMethod::kFast);
  EXPECT_EQ(ParseVoigtMethod(VoigtMethodName(VoigtMethod::kReference)), VoigtMethod::kReference);
  EXPECT_THROW(ParseVoigtMethod("humlicek"), OptionError);
}

}  // namespace
}  // namespace zeeline
