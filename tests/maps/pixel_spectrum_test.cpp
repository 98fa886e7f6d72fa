// The degrees of freedom of the continuum noise estimate (pixel_spectrum.hpp), against a Monte Carlo of white
// Gaussian noise through EstimateContinuum itself: the effective dof of a variance estimate s^2 is
// 2 E[s^2]^2 / var(s^2) (Satterthwaite 1946, Biometrics Bulletin 2, 110; common practice), measured here
// from 40 000 draws. With N draws the measured var(s^2) has a relative error of about sqrt((2 + 12/dof) / N)
// (the kurtosis of a scaled chi2), 1.2 % at 4 dof: the 5 % tolerance is four of those.
// The layouts are those of real cubes: one run of continuum on one side, one run on each side of the line
// (the map's usual case), and a short run that gives no second difference beside a long one.
#include <cmath>
#include <random>
#include <vector>

#include <gtest/gtest.h>

#include "zeeline/maps/pixel_spectrum.hpp"

namespace zeeline {
namespace {

constexpr int kDraws = 40000;
constexpr double kTolerance = 0.05;

double MonteCarloDof(std::size_t n, const std::vector<std::size_t>& continuum, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> gauss(0.0, 1.0);
  std::vector<double> wl(n), I(n), V(n);
  for (std::size_t i = 0; i < n; ++i) wl[i] = 500.0 + 0.001 * static_cast<double>(i);
  double sum = 0.0, sum2 = 0.0;
  for (int k = 0; k < kDraws; ++k) {
    for (std::size_t i = 0; i < n; ++i) {
      I[i] = 1.0 + 1e-3 * gauss(rng);
      V[i] = gauss(rng);
    }
    const PixelSpectrum s{wl.data(), n, I.data(), nullptr, nullptr, V.data()};
    const double var = std::pow(EstimateContinuum(s, continuum).noise_V, 2);
    sum += var;
    sum2 += var * var;
  }
  const double mean = sum / kDraws, variance = sum2 / kDraws - mean * mean;
  return 2.0 * mean * mean / variance;
}

std::vector<std::size_t> SampleRun(std::size_t begin, std::size_t end) {
  std::vector<std::size_t> idx;
  for (std::size_t i = begin; i < end; ++i) idx.push_back(i);
  return idx;
}

TEST(NoiseDegreesOfFreedom, OneRunMatchesMonteCarlo) {
  const std::vector<std::size_t> cont = SampleRun(0, 12);
  const double mc = MonteCarloDof(40, cont, 1);
  EXPECT_NEAR(NoiseDegreesOfFreedom(cont), mc, kTolerance * mc);
  // Far from the samples' count: 10 correlated differences carry about half their number of dof.
  EXPECT_LT(mc, 0.7 * 12);
}

TEST(NoiseDegreesOfFreedom, RunOnEachSideMatchesMonteCarlo) {
  std::vector<std::size_t> cont = SampleRun(0, 6);
  for (std::size_t i : SampleRun(34, 40)) cont.push_back(i);
  const double mc = MonteCarloDof(40, cont, 2);
  EXPECT_NEAR(NoiseDegreesOfFreedom(cont), mc, kTolerance * mc);
  // The count 0.514 x 12 samples overstates it by a third (that was the old rule).
  EXPECT_GT(0.514 * 12, 1.2 * mc);
}

TEST(NoiseDegreesOfFreedom, ShortRunAddsNothingAndLongRunTends) {
  std::vector<std::size_t> cont = SampleRun(0, 2);  // no triple
  for (std::size_t i : SampleRun(10, 40)) cont.push_back(i);
  const double mc = MonteCarloDof(40, cont, 3);
  EXPECT_NEAR(NoiseDegreesOfFreedom(cont), mc, kTolerance * mc);
  // A long run: 28 differences, 0.514 each in the limit (derived in the header).
  EXPECT_NEAR(NoiseDegreesOfFreedom(SampleRun(0, 1002)) / 1000.0, 0.514, 0.002);
}

TEST(NoiseDegreesOfFreedom, NoTripleFallsBackToSampleVariance) {
  const std::vector<std::size_t> cont = {0, 2, 4, 6, 8, 10};  // every other sample: no consecutive triple
  const double mc = MonteCarloDof(12, cont, 4);
  // The standard deviation about the mean of 6 samples: chi2 with 5 dof (textbook).
  EXPECT_DOUBLE_EQ(NoiseDegreesOfFreedom(cont), 5.0);
  EXPECT_NEAR(mc, 5.0, kTolerance * 5.0);
}

}  // namespace
}  // namespace zeeline
