// Azimuth disambiguation: the FFT potential field and the acute-angle choice on a field built in closed
// form from buried magnetic monopoles, B(r) = sum_i q_i (r - r_i) / |r - r_i|^3 (the field of a point
// source, potential everywhere outside the sources; Jackson, Classical Electrodynamics, ch. 5, from
// memory). It shares no code with the FFT solution.
#include "zeeline/maps/disambiguation.hpp"

#include <cmath>
#include <random>
#include <vector>

#include <gtest/gtest.h>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr long kN = 64;                  // map size (pixels)
constexpr double kSuccessFraction = 0.95;  // the brief: >= 95 % of pixels with B_TRANS above noise
constexpr double kNoise_gauss = 5.0;     // B_TRANS error given to the disambiguator
constexpr double kRadToDeg = 180.0 / constants::kPi;

struct Source {
  double x, y, depth, q;
};

struct TrueField {
  std::vector<double> bx, by, bz;
};

// Field at z = 0 of monopoles at (x, y, -depth) (pixel units).
TrueField Monopoles(const std::vector<Source>& sources) {
  TrueField f;
  f.bx.assign(kN * kN, 0.0);
  f.by.assign(kN * kN, 0.0);
  f.bz.assign(kN * kN, 0.0);
  for (long y = 0; y < kN; ++y)
    for (long x = 0; x < kN; ++x) {
      const std::size_t i = static_cast<std::size_t>(y * kN + x);
      for (const Source& s : sources) {
        const double dx = x - s.x, dy = y - s.y, dz = s.depth;
        const double r3 = std::pow(dx * dx + dy * dy + dz * dz, 1.5);
        f.bx[i] += s.q * dx / r3;
        f.by[i] += s.q * dy / r3;
        f.bz[i] += s.q * dz / r3;
      }
    }
  return f;
}

// A bipole (balanced flux) tilted across the map; q chosen for kilogauss peaks.
const std::vector<Source> kBipole = {{24.0, 28.0, 6.0, 6.0e4}, {41.0, 37.0, 6.0, -6.0e4}};

TEST(PotentialField, MatchesTheClosedFormFieldOfBuriedMonopoles) {
  const TrueField t = Monopoles(kBipole);
  std::vector<double> bx, by;
  PotentialTransverseField(kN, kN, t.bz, bx, by);
  // Central region (away from the edges, where the truncated flux outside the map matters most).
  double num = 0.0, den = 0.0;
  long agree = 0, count = 0;
  for (long y = 12; y < kN - 12; ++y)
    for (long x = 12; x < kN - 12; ++x) {
      const std::size_t i = static_cast<std::size_t>(y * kN + x);
      num += (bx[i] - t.bx[i]) * (bx[i] - t.bx[i]) + (by[i] - t.by[i]) * (by[i] - t.by[i]);
      den += t.bx[i] * t.bx[i] + t.by[i] * t.by[i];
      agree += bx[i] * t.bx[i] + by[i] * t.by[i] > 0.0;
      ++count;
    }
  // Relative rms difference: the sampled source is smooth (depth 6 px), the flux is balanced; the
  // remaining difference comes from the periodic images and pixel sampling. 15 % is generous.
  EXPECT_LT(std::sqrt(num / den), 0.15);
  EXPECT_EQ(agree, count);
  // Sign at the midpoint between the poles: the horizontal field points from the positive pole toward the
  // negative one (+x, +y here).
  const std::size_t mid = static_cast<std::size_t>(32 * kN + 32);
  EXPECT_GT(bx[mid], 0.0);
  EXPECT_GT(by[mid], 0.0);
}

TEST(Disambiguation, AcuteAngleRecoversTheAzimuthOfAPotentialBipole) {
  const TrueField t = Monopoles(kBipole);
  std::mt19937_64 rng(5);
  std::normal_distribution<double> noise(0.0, kNoise_gauss);
  std::vector<float> blos(kN * kN), bt(kN * kN), bt_err(kN * kN, static_cast<float>(kNoise_gauss)), azi(kN * kN);
  std::vector<double> truth(kN * kN);
  for (std::size_t i = 0; i < blos.size(); ++i) {
    blos[i] = static_cast<float>(t.bz[i] + noise(rng));
    bt[i] = static_cast<float>(std::hypot(t.bx[i], t.by[i]));
    double a = std::atan2(t.by[i], t.bx[i]) * kRadToDeg;
    if (a < 0.0) a += 360.0;
    truth[i] = a;
    azi[i] = static_cast<float>(std::fmod(a, 180.0));  // the ambiguous input, [0, 180)
  }
  std::vector<std::int16_t> flags;
  DisambiguateAzimuth(kN, kN, blos, bt, bt_err, azi, flags);
  long right = 0, strong = 0;
  for (std::size_t i = 0; i < azi.size(); ++i) {
    EXPECT_GE(azi[i], 0.0f);
    EXPECT_LT(azi[i], 360.0f);
    if (!(bt[i] > 3.0 * kNoise_gauss)) continue;
    ++strong;
    EXPECT_EQ(flags[i], kDisambigAcute);
    double d = std::fabs(azi[i] - truth[i]);
    d = std::min(d, 360.0 - d);
    right += d < 1.0;
  }
  ASSERT_GT(strong, kN * kN / 4);
  const double fraction = static_cast<double>(right) / static_cast<double>(strong);
  std::printf("  disambiguation success: %.4f of %ld pixels with B_TRANS > 3 sigma\n", fraction, strong);
  EXPECT_GE(fraction, kSuccessFraction);
}

TEST(Disambiguation, SmoothingPassRepairsIsolatedWrongPixels) {
  // Invariant: in a uniform transverse field (all 10 deg), two isolated pixels turned by 180 deg point
  // against all their neighbours and must be flipped back; NaN pixels stay untouched.
  std::vector<float> bt(kN * kN, 500.0f), azi(kN * kN, 10.0f);
  std::vector<std::int16_t> flags(kN * kN, kDisambigAcute);
  azi[10 * kN + 10] = 190.0f;
  azi[40 * kN + 33] = 190.0f;
  azi[0] = std::nanf("");
  flags[0] = kDisambigNone;
  EXPECT_EQ(SmoothAzimuth(kN, kN, bt, azi, flags, 3), 2);
  for (std::size_t i = 1; i < azi.size(); ++i) EXPECT_FLOAT_EQ(azi[i], 10.0f) << i;
  EXPECT_EQ(flags[10 * kN + 10], kDisambigSmoothed);
  EXPECT_TRUE(std::isnan(azi[0]));
}

TEST(Disambiguation, BadInputsAreRefused) {
  std::vector<float> m(16, 1.0f), az(16, 0.0f);
  std::vector<std::int16_t> flags;
  EXPECT_THROW(DisambiguateAzimuth(4, 5, m, m, m, az, flags), OptionError);
  DisambiguationOptions o;
  o.smoothing_passes = 50;
  EXPECT_NE(o.Validate().find("smoothing passes"), std::string::npos);
  EXPECT_THROW(DisambiguateAzimuth(4, 4, m, m, m, az, flags, o), OptionError);
  o = {};
  o.min_btrans_sigma = -1.0;
  EXPECT_NE(o.Validate().find("min B_TRANS sigma"), std::string::npos);
  std::vector<double> bx, by;
  EXPECT_THROW(PotentialTransverseField(1, 4, std::vector<double>(4, 0.0), bx, by), OptionError);
}

}  // namespace
}  // namespace zeeline
