// The centre-of-gravity window follows a shifted line (centre_of_gravity.hpp), checked on a Gaussian
// absorption line, whose centroid is its centre (textbook), with the weak-field V = -C g B dI/dl written from the
// Gaussian's derivative. No project model is involved. A window that stays on the rest wavelength cuts the
// line shifted by 2 km/s at 1.5 of its widths on one side, and its centroid then misses by several tenths of a
// km/s. Tolerances:
//   - noiseless: 2e-3 km/s, well above the quadrature's error (a Gaussian sampled at a quarter of its width;
//     its value at the window's edges is 5e-5 of the depth) and far below the fixed window's error;
//   - noise: the pull sd is 1 within 0.06 (2 000 draws: its own sampling error is 0.016) and the mean error is
//     within 0.1 sigma.
#include <cmath>
#include <random>
#include <vector>

#include <gtest/gtest.h>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/maps/centre_of_gravity.hpp"

namespace zeeline {
namespace {

constexpr double kRest = 630.25;      // nm
constexpr double kWidth = 0.0025;     // nm, 1/e half-width of the Gaussian
constexpr double kDepth = 0.6;
constexpr double kWindow = 0.008;     // nm, window half-width: 3.2 line widths
constexpr double kGeff = 2.5;
constexpr std::size_t kSamples = 96;  // over +- 0.03 nm: 0.63 pm steps

struct Line {
  std::vector<double> wl, I, V;
  PixelSpectrum View() const { return {wl.data(), wl.size(), I.data(), nullptr, nullptr, V.data()}; }
};

Line Gaussian(double vlos_kms, double blos_gauss) {
  Line s;
  const double centre = kRest * (1.0 + vlos_kms / (constants::kSpeedOfLight_m_s * 1e-3));
  const double k = LorentzUnit_nm(kRest, 1.0) * kGeff * blos_gauss;
  for (std::size_t i = 0; i < kSamples; ++i) {
    const double l = kRest - 0.03 + 0.06 * static_cast<double>(i) / static_cast<double>(kSamples - 1);
    const double x = (l - centre) / kWidth;
    const double profile = kDepth * std::exp(-x * x);
    s.wl.push_back(l);
    s.I.push_back(1.0 - profile);
    s.V.push_back(-k * (2.0 * x / kWidth) * profile);  // -C g B dI/dl, dI/dl = 2 x profile / width
  }
  return s;
}

std::vector<std::size_t> Continuum(const Line& s) {
  return ContinuumSamples(s.wl.data(), s.wl.size(), kRest, 0.02);
}

TEST(CentreOfGravityWindow, FollowsAShiftedLine) {
  const CentreOfGravityOptions o{kRest, kGeff, kWindow};
  for (double v : {-2.0, -1.0, -0.3, 0.0, 0.5, 1.5, 2.0}) {
    const Line s = Gaussian(v, 100.0);
    const CentreOfGravityResult r = CentreOfGravityEstimate(s.View(), EstimateContinuum(s.View(), Continuum(s)), o);
    ASSERT_TRUE(r.ok) << v;
    EXPECT_NEAR(r.vlos_kms, v, 2e-3) << "v_LOS " << v << " km/s";
    EXPECT_NEAR(r.blos_gauss, 100.0, 1.0) << "v_LOS " << v << " km/s";  // weak-field V: exact separation
  }
}

TEST(CentreOfGravityWindow, ErrorsStayCalibratedForAMovingLine) {
  const CentreOfGravityOptions o{kRest, kGeff, kWindow};
  const Line clean = Gaussian(1.5, 100.0);
  std::mt19937_64 rng(17);
  std::normal_distribution<double> gauss(0.0, 1e-3);
  double sum = 0.0, sum2 = 0.0;
  const int draws = 2000;
  for (int k = 0; k < draws; ++k) {
    Line s = clean;
    for (std::size_t i = 0; i < kSamples; ++i) {
      s.I[i] += gauss(rng);
      s.V[i] += gauss(rng);
    }
    const CentreOfGravityResult r =
        CentreOfGravityEstimate(s.View(), EstimateContinuum(s.View(), Continuum(s), 1e-3), o);
    ASSERT_TRUE(r.ok);
    const double pull = (r.vlos_kms - 1.5) / r.vlos_err_kms;
    sum += pull;
    sum2 += pull * pull;
  }
  const double mean = sum / draws, sd = std::sqrt(sum2 / draws - mean * mean);
  EXPECT_NEAR(mean, 0.0, 0.1);
  EXPECT_NEAR(sd, 1.0, 0.06);
}

TEST(CentreOfGravityWindow, StaysSymmetricNearAnEndOfTheSpectrum) {
  // Shifted by 26 pm, the line's centre is 4 pm (1.6 widths) from the red end: the window narrows to stay
  // symmetric (a window cut by the end alone misses by far more than the tolerance).
  const CentreOfGravityOptions o{kRest, kGeff, 0.02};
  const Line s = Gaussian(12.4, 0.0);
  std::vector<std::size_t> blue;  // the continuum on the blue side only: the red end holds the line
  for (std::size_t i = 0; i < 20; ++i) blue.push_back(i);
  const CentreOfGravityResult r = CentreOfGravityEstimate(s.View(), EstimateContinuum(s.View(), blue), o);
  ASSERT_TRUE(r.ok);
  EXPECT_NEAR(r.vlos_kms, 12.4, 5e-3);
}

// Without a line the centroids of noise can land anywhere. The window must then stay on the rest wavelength:
// a window that followed them gave a V_LOS pull rms of 2.35 on such spectra (true v_LOS 0), the fixed window
// 0.49 (first-order propagation through sums that are themselves noise overstates the error there).
TEST(CentreOfGravityWindow, StaysWithoutALine) {
  const CentreOfGravityOptions o{kRest, kGeff, kWindow};
  std::mt19937_64 rng(5);
  std::normal_distribution<double> gauss(0.0, 1e-3);
  double pull2 = 0.0;
  int n = 0;
  for (int k = 0; k < 2000; ++k) {
    Line s = Gaussian(0.0, 0.0);
    for (std::size_t i = 0; i < kSamples; ++i) {
      s.I[i] = 1.0 + gauss(rng);
      s.V[i] = gauss(rng);
    }
    const CentreOfGravityResult r =
        CentreOfGravityEstimate(s.View(), EstimateContinuum(s.View(), Continuum(s), 1e-3), o);
    if (!r.ok) continue;
    pull2 += r.vlos_kms * r.vlos_kms / (r.vlos_err_kms * r.vlos_err_kms);
    ++n;
  }
  ASSERT_GT(n, 500);
  EXPECT_LT(std::sqrt(pull2 / n), 1.0);
}

// A window found by stepping from a nearby one is the window the binary searches find, from any start.
TEST(CentreOfGravityWindow, FromANearWindowIsTheSameWindow) {
  std::vector<double> wl;
  for (std::size_t i = 0; i < 50; ++i) wl.push_back(kRest - 0.025 + 1e-3 * static_cast<double>(i));
  CentreOfGravityOptions o;
  o.rest_wavelength_nm = kRest;
  o.g_eff = kGeff;
  o.window_halfwidth_nm = kWindow;
  CentreOfGravityWorkspace work;
  work.Prepare(wl.data(), wl.size(), o);
  for (double centre : {kRest - 0.03, kRest - 0.0161, kRest, kRest + 0.00049, kRest + 0.02, std::nan("")})
    for (double half : {0.0005, 0.003, 0.0125, 1.0}) {
      const CentreOfGravityWindow want = CentreOfGravityWindow::Around(work, centre, half);
      for (std::size_t b = 0; b <= wl.size(); b += 7)
        for (std::size_t e : {b, std::min<std::size_t>(b + 9, wl.size()), wl.size()}) {
          CentreOfGravityWindow near;
          near.begin = b;
          near.end = e;
          const CentreOfGravityWindow got = CentreOfGravityWindow::Around(work, centre, half, &near);
          EXPECT_EQ(got.begin, want.begin) << centre << " " << half << " " << b << " " << e;
          EXPECT_EQ(got.end, want.end) << centre << " " << half << " " << b << " " << e;
          EXPECT_EQ(got.first_weight_nm, want.first_weight_nm) << centre << " " << half;
          EXPECT_EQ(got.last_weight_nm, want.last_weight_nm) << centre << " " << half;
        }
    }
}

}  // namespace
}  // namespace zeeline
