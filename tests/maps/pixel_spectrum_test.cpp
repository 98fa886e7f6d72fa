// The degrees of freedom of the continuum noise estimate (pixel_spectrum.hpp), against a Monte Carlo of white
// Gaussian noise through EstimateContinuum itself: the effective dof of a variance estimate s^2 is
// 2 E[s^2]^2 / var(s^2) (Satterthwaite 1946, Biometrics Bulletin 2, 110; common practice), measured here
// from 40 000 draws. With N draws the measured var(s^2) has a relative error of about sqrt((2 + 12/dof) / N)
// (the kurtosis of a scaled chi2), 1.2 % at 4 dof: the 5 % tolerance is four of those.
// The layouts are those of real cubes: one run of continuum on one side, one run on each side of the line
// (the map's usual case), and a short run that gives no second difference beside a long one.
//
// Continuum level and noise (pixel_spectrum.hpp) against the formulas written out here one sample at a time:
// the level is the mean of I over the continuum samples, the noise sigma^2 = <(f[i-1] - 2 f[i] + f[i+1])^2> / 6
// over the triples of consecutive samples (white noise: var(f[i-1] - 2 f[i] + f[i+1]) = (1 + 4 + 1) sigma^2,
// textbook), the standard deviation (n - 1) when there are fewer than 3 such triples; and the runs of a sample
// list (ContinuumRuns) spelled out by hand.
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

// The same terms summed in the same order give the same double; a few ulp allow another evaluation order of
// the final division and square root.
constexpr double kUlpRelTol = 1e-15;
// sigma from n white-noise triples scatters by ~ 1/sqrt(2 x 0.514 n) (pixel_spectrum.hpp): 1.4 % at n = 5000.
constexpr double kStatRelTol = 0.06;

struct Spectrum {
  std::vector<double> wl, I, Q, U, V;
  PixelSpectrum View() const { return {wl.data(), wl.size(), I.data(), Q.data(), U.data(), V.data()}; }
};

Spectrum Noisy(std::size_t n, double sigma, unsigned seed) {
  Spectrum s;
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> g(0.0, sigma);
  for (std::size_t i = 0; i < n; ++i) {
    s.wl.push_back(630.0 + 1e-3 * static_cast<double>(i));
    s.I.push_back(1.0 + 1e-4 * static_cast<double>(i) + g(rng));  // a linear trend the differences remove
    s.Q.push_back(g(rng));
    s.U.push_back(0.5 * g(rng));
    s.V.push_back(2.0 * g(rng));
  }
  return s;
}

// The noise of f over the list, one triple at a time (the header's formula), skipping non-finite differences.
double SecondDifferenceSigma(const std::vector<double>& f, const std::vector<std::size_t>& idx) {
  double sum = 0.0;
  std::size_t k = 0;
  for (std::size_t j = 1; j + 1 < idx.size(); ++j) {
    if (idx[j - 1] + 1 != idx[j] || idx[j] + 1 != idx[j + 1]) continue;
    const double d = f[idx[j - 1]] - 2.0 * f[idx[j]] + f[idx[j + 1]];
    if (!std::isfinite(d)) continue;
    sum += d * d;
    ++k;
  }
  return std::sqrt(sum / (6.0 * static_cast<double>(k)));
}

void ExpectRelClose(double got, double want, double rel, const char* what) {
  EXPECT_NEAR(got, want, rel * std::fabs(want)) << what;
}

TEST(ContinuumRuns, AreTheRunsOfConsecutiveIndicesInListOrder) {
  const ContinuumRuns a = MakeContinuumRuns({3, 4, 5, 9, 10});
  ASSERT_EQ(a.runs.size(), 2u);
  EXPECT_EQ(a.runs[0].begin, 3u);
  EXPECT_EQ(a.runs[0].end, 6u);
  EXPECT_EQ(a.runs[1].begin, 9u);
  EXPECT_EQ(a.runs[1].end, 11u);
  EXPECT_EQ(a.samples, 5u);
  // An unordered list (the map's fallback layout alternates the two ends) is runs of one sample each.
  const ContinuumRuns b = MakeContinuumRuns({0, 59, 1, 58});
  ASSERT_EQ(b.runs.size(), 4u);
  EXPECT_EQ(b.runs[1].begin, 59u);
  EXPECT_EQ(b.runs[1].end, 60u);
  // A repeated index starts a new run.
  const ContinuumRuns c = MakeContinuumRuns({5, 6, 6, 7});
  ASSERT_EQ(c.runs.size(), 2u);
  EXPECT_EQ(c.runs[1].begin, 6u);
  EXPECT_EQ(c.runs[1].end, 8u);
  EXPECT_TRUE(MakeContinuumRuns({}).runs.empty());
}

TEST(ContinuumEstimate, LevelAndNoiseFollowTheFormulasOverRunsWithGaps) {
  const Spectrum s = Noisy(60, 1e-3, 7);
  // Two blocks at the ends, a lone sample and a pair: the lone sample and the pair give no triple.
  std::vector<std::size_t> idx;
  for (std::size_t i = 0; i < 12; ++i) idx.push_back(i);
  idx.push_back(20);
  idx.push_back(30);
  idx.push_back(31);
  for (std::size_t i = 48; i < 60; ++i) idx.push_back(i);
  const ContinuumEstimate c = EstimateContinuum(s.View(), idx);
  double level = 0.0;
  for (std::size_t i : idx) level += s.I[i];
  level /= static_cast<double>(idx.size());
  ExpectRelClose(c.continuum, level, kUlpRelTol, "level");
  ExpectRelClose(c.noise_I, SecondDifferenceSigma(s.I, idx), kUlpRelTol, "noise_I");
  ExpectRelClose(c.noise_Q, SecondDifferenceSigma(s.Q, idx), kUlpRelTol, "noise_Q");
  ExpectRelClose(c.noise_U, SecondDifferenceSigma(s.U, idx), kUlpRelTol, "noise_U");
  ExpectRelClose(c.noise_V, SecondDifferenceSigma(s.V, idx), kUlpRelTol, "noise_V");
  EXPECT_EQ(c.samples, idx.size());
  // The prepared runs give the same estimate bit for bit.
  const ContinuumEstimate r = EstimateContinuum(s.View(), MakeContinuumRuns(idx));
  EXPECT_EQ(r.continuum, c.continuum);
  EXPECT_EQ(r.noise_I, c.noise_I);
  EXPECT_EQ(r.noise_V, c.noise_V);
}

TEST(ContinuumEstimate, NonFiniteSampleDropsOnlyItsOwnTriplesAndLevelTerm) {
  Spectrum s = Noisy(40, 1e-3, 11);
  std::vector<std::size_t> idx;
  for (std::size_t i = 0; i < 40; ++i) idx.push_back(i);
  s.Q[17] = std::nan("");
  s.I[30] = HUGE_VAL;
  const ContinuumEstimate c = EstimateContinuum(s.View(), idx);
  ExpectRelClose(c.noise_Q, SecondDifferenceSigma(s.Q, idx), kUlpRelTol, "noise_Q");
  ExpectRelClose(c.noise_I, SecondDifferenceSigma(s.I, idx), kUlpRelTol, "noise_I");
  ExpectRelClose(c.noise_U, SecondDifferenceSigma(s.U, idx), kUlpRelTol, "noise_U");
  double level = 0.0;
  for (std::size_t i : idx)
    if (i != 30) level += s.I[i];
  ExpectRelClose(c.continuum, level / 39.0, kUlpRelTol, "level without the infinite sample");
  EXPECT_TRUE(std::isfinite(c.noise_I));
}

TEST(ContinuumEstimate, FewerThanThreeTriplesFallsBackToTheStandardDeviation) {
  const Spectrum s = Noisy(30, 1e-3, 3);
  const std::vector<std::size_t> idx = {0, 29, 1, 28, 2, 27};  // no two list neighbours are consecutive
  const ContinuumEstimate c = EstimateContinuum(s.View(), idx);
  double m = 0.0;
  for (std::size_t i : idx) m += s.V[i];
  m /= static_cast<double>(idx.size());
  double v = 0.0;
  for (std::size_t i : idx) v += (s.V[i] - m) * (s.V[i] - m);
  ExpectRelClose(c.noise_V, std::sqrt(v / static_cast<double>(idx.size() - 1)), kUlpRelTol, "noise_V");
}

TEST(ContinuumEstimate, RecoversTheWhiteNoiseLevelOfManySamples) {
  const Spectrum s = Noisy(5000, 2e-3, 5);
  std::vector<std::size_t> idx;
  for (std::size_t i = 0; i < 5000; ++i) idx.push_back(i);
  const ContinuumEstimate c = EstimateContinuum(s.View(), idx);
  ExpectRelClose(c.noise_I, 2e-3, kStatRelTol, "noise_I");
  ExpectRelClose(c.noise_Q, 2e-3, kStatRelTol, "noise_Q");
  ExpectRelClose(c.noise_U, 1e-3, kStatRelTol, "noise_U");
  ExpectRelClose(c.noise_V, 4e-3, kStatRelTol, "noise_V");
}

TEST(ContinuumEstimate, GivenNoiseReplacesTheMeasuredOne) {
  const Spectrum s = Noisy(40, 1e-3, 9);
  std::vector<std::size_t> idx = {0, 1, 2, 3, 4, 35, 36, 37, 38, 39};
  const ContinuumEstimate c = EstimateContinuum(s.View(), idx, 2e-3);
  EXPECT_EQ(c.noise_I, 2e-3 * std::fabs(c.continuum));
  EXPECT_EQ(c.noise_V, 2e-3 * std::fabs(c.continuum));
  EXPECT_TRUE(std::isinf(c.noise_dof));
}

TEST(WindowRange, FromAnyNearStartIsTheBinarySearchesAnswer) {
  std::vector<double> wl;
  for (int i = 0; i < 40; ++i) wl.push_back(630.0 + 1e-3 * i);
  const std::size_t n = wl.size();
  for (double centre : {629.98, 630.0, 630.0104, 630.02, 630.0395, 630.06, std::nan("")})
    for (double half : {0.0, 0.0005, 0.001, 0.0052, 0.5}) {
      const SampleRange want = WindowRange(wl.data(), n, centre, half);
      for (std::size_t b = 0; b <= n; b += 3)
        for (std::size_t e : {std::size_t{0}, b, std::min(b + 7, n), n}) {
          const SampleRange got = WindowRangeFrom(wl.data(), n, centre, half, SampleRange{b, e});
          EXPECT_EQ(got.begin, want.begin) << centre << " " << half << " " << b << " " << e;
          EXPECT_EQ(got.end, want.end) << centre << " " << half << " " << b << " " << e;
        }
    }
}

}  // namespace
}  // namespace zeeline
