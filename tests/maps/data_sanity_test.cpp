// Per-pixel data sanity (maps/data_sanity.hpp): each rule on single spectra, then on whole cubes through the
// map runner -- bad pixels flagged and not inverted, their neighbours bit-identical to a clean run, and a cube
// with no usable pixel refused. Cubes are written with cfitsio directly (tests/io/io_test_util.hpp) from the
// independent thin-line model (tests/maps/thin_line_model.hpp).
#include "zeeline/maps/data_sanity.hpp"

#include <cmath>
#include <limits>
#include <random>

#include <gtest/gtest.h>

#include "io/io_test_util.hpp"
#include "maps/thin_line_model.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline {
namespace {

// IEEE 754-2008 binary32 / binary64 largest finite values (published in the standard).
constexpr double kFloat32Max = 3.4028234663852886e38;
constexpr double kFloat64Max = 1.7976931348623157e308;
constexpr double kRest = 630.25;
constexpr int kNw = 81;
const LandeOptions kTextbook{2.0, 1.0};

ZeemanPattern Pattern() { return ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"), kTextbook); }

testing::Spectra Line(double field_gauss, double noise, unsigned seed) {
  testing::ThinLine l;
  l.rest_nm = kRest;
  l.field_gauss = field_gauss;
  l.inclination_deg = 40.0;
  l.azimuth_deg = 30.0;
  auto s = testing::MakeThinLine(l, Pattern(), testing::Grid(kRest, 0.024, kNw));
  std::mt19937_64 rng(seed);
  if (noise > 0.0) testing::AddNoise(s, noise, rng);
  return s;
}

std::vector<std::size_t> Continuum(const testing::Spectra& s) {
  return ContinuumSamples(s.wl.data(), s.wl.size(), kRest, 0.012);
}

TEST(DataSanity, TypeRangeIsAThousandthOfTheLargestFiniteValue) {
  EXPECT_DOUBLE_EQ(TypeAbsLimit(-32), 1e-3 * kFloat32Max);
  EXPECT_DOUBLE_EQ(TypeAbsLimit(-64), 1e-3 * kFloat64Max);
  EXPECT_TRUE(std::isinf(TypeAbsLimit(16)));  // every BSCALE'd int16 value can be real
  EXPECT_TRUE(std::isinf(TypeAbsLimit(32)));
}

TEST(DataSanity, CleanNoisySpectrumPasses) {
  const DataSanityLimits lim = MakeSanityLimits(-32, 1.0, 0.0);
  for (unsigned seed = 1; seed <= 50; ++seed) {
    const auto s = Line(800.0, 1e-3, seed);
    EXPECT_EQ(CheckPixelSanity(s.View(), Continuum(s), lim), 0u) << seed;
  }
}

TEST(DataSanity, NonFiniteSampleInAnyStokesParameterIsFlagged) {
  const DataSanityLimits lim = MakeSanityLimits(-32, 1.0, 0.0);
  for (double bad : {std::nan(""), HUGE_VAL, -HUGE_VAL})
    for (int stokes = 0; stokes < 4; ++stokes) {
      auto s = Line(300.0, 1e-4, 3);
      std::vector<double>* v[4] = {&s.I, &s.Q, &s.U, &s.V};
      (*v[stokes])[40] = bad;
      EXPECT_EQ(CheckPixelSanity(s.View(), Continuum(s), lim), kQualityNonFiniteInput) << stokes << " " << bad;
    }
}

TEST(DataSanity, Float32FillValuesAreAbsurdAtOneOrAllWavelengths) {
  const DataSanityLimits lim = MakeSanityLimits(-32, 0.0, 0.0);  // no median level: the type range alone
  for (double bad : {3e38, -3e38, kFloat32Max})
    for (bool all : {false, true}) {
      auto s = Line(300.0, 1e-4, 4);
      if (all) s.V.assign(s.V.size(), bad);
      else s.V[10] = bad;
      EXPECT_EQ(CheckPixelSanity(s.View(), Continuum(s), lim), kQualityAbsurdInput) << bad << " all=" << all;
    }
  // 1e30 is within float32's range: only the level ceiling can catch it.
  auto s = Line(300.0, 1e-4, 4);
  s.I[5] = 1e30;
  EXPECT_EQ(CheckSampleRange(s.View(), lim), 0u);
  EXPECT_EQ(CheckSampleRange(s.View(), MakeSanityLimits(-32, 1.0, 0.0)), kQualityAbsurdInput);
}

TEST(DataSanity, LevelCeilingIsEightOrdersAboveTheMedian) {
  const DataSanityLimits lim = MakeSanityLimits(-64, 2.0, 0.0);
  EXPECT_DOUBLE_EQ(lim.level_ceiling, 2e8);
  auto s = Line(300.0, 0.0, 0);
  s.I[3] = 1.9e8;  // high, but within 8 orders: a hot pixel is not "absurd"
  EXPECT_EQ(CheckSampleRange(s.View(), lim), 0u);
  s.I[3] = 2.1e8;
  EXPECT_EQ(CheckSampleRange(s.View(), lim), kQualityAbsurdInput);
}

TEST(DataSanity, NegativeOrZeroContinuumIsFlagged) {
  const DataSanityLimits lim = MakeSanityLimits(-64, 1.0, 0.0);
  for (double scale : {-1.0, 0.0}) {
    auto s = Line(300.0, 0.0, 0);
    for (auto* v : {&s.I, &s.Q, &s.U, &s.V})
      for (double& x : *v) x *= scale;
    EXPECT_EQ(CheckPixelSanity(s.View(), Continuum(s), lim), kQualityNonPositiveI) << scale;
  }
}

TEST(DataSanity, PolarisationAboveIntensityBeyondNoiseIsFlagged) {
  // I^2 >= Q^2 + U^2 + V^2 (Stokes 1852; Chandrasekhar 1950, from memory): |V| > I is unphysical.
  const DataSanityLimits lim = MakeSanityLimits(-64, 1.0, 0.0);
  auto s = Line(300.0, 0.0, 0);
  s.V[40] = 1.01 * s.I[40];
  EXPECT_EQ(CheckPixelSanity(s.View(), Continuum(s), lim), kQualityPolExceedsI);
  s.V[40] = -s.I[40];  // fully polarised: allowed
  EXPECT_EQ(CheckPixelSanity(s.View(), Continuum(s), lim), 0u);
  // Stokes V stored as V/I with I normalised to 1e-3 of its level (a layout error): flagged.
  auto t = Line(1500.0, 0.0, 0);
  for (std::size_t k = 0; k < t.I.size(); ++k) {
    t.V[k] /= t.I[k];
    t.I[k] *= 1e-3;
  }
  EXPECT_EQ(CheckPixelSanity(t.View(), Continuum(t), lim), kQualityPolExceedsI);
}

TEST(DataSanity, CheckOnRunsHandsOnTheContinuumEstimateOfAUsablePixel) {
  // The level the check sums (every sample finite) and the noise it measures are EstimateContinuum's, bit for
  // bit, with the measured noise and with a given one; an I + V pixel (no Q, U) too.
  for (double noise_rel : {0.0, 2e-3}) {
    const DataSanityLimits lim = MakeSanityLimits(-32, 1.0, noise_rel);
    for (unsigned seed = 1; seed <= 20; ++seed) {
      const auto s = Line(600.0, 1e-3, seed);
      PixelSpectrum view = s.View();
      if (seed % 2) view.Q = view.U = nullptr;
      const ContinuumRuns runs = MakeContinuumRuns(Continuum(s));
      ContinuumEstimate c;
      ASSERT_EQ(CheckPixelSanity(view, runs, lim, c), 0u) << seed;
      const ContinuumEstimate e = EstimateContinuum(view, Continuum(s), noise_rel);
      EXPECT_EQ(c.continuum, e.continuum) << seed;
      EXPECT_EQ(c.noise_I, e.noise_I) << seed;
      EXPECT_EQ(c.noise_Q, e.noise_Q) << seed;
      EXPECT_EQ(c.noise_U, e.noise_U) << seed;
      EXPECT_EQ(c.noise_V, e.noise_V) << seed;
      EXPECT_EQ(c.samples, e.samples) << seed;
      EXPECT_EQ(c.noise_dof, e.noise_dof) << seed;
    }
  }
}

TEST(DataSanity, NoUsablePixelIsAFitsErrorNamingTheFileAndCounts) {
  const std::vector<std::int32_t> q = {static_cast<std::int32_t>(kQualityNonPositiveI),
                                       static_cast<std::int32_t>(kQualityNonFiniteInput)};
  try {
    RequireUsablePixel(q, "sky.fits");
    FAIL() << "no exception";
  } catch (const FitsError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("sky.fits"), std::string::npos) << m;
    EXPECT_NE(m.find("no usable pixel"), std::string::npos) << m;
    EXPECT_NE(m.find("1 with continuum Stokes I <= 0"), std::string::npos) << m;
  }
  // One usable pixel is enough (LOW_SIGNAL is not a data-sanity failure).
  EXPECT_NO_THROW(RequireUsablePixel({static_cast<std::int32_t>(kQualityNonPositiveI),
                                      static_cast<std::int32_t>(kQualityLowSignal)},
                                     "sky.fits"));
}

// ---- whole cubes through the map runner

constexpr int kNx = 6, kNy = 5;

double CleanValue(long x, long y, long s, long w) {
  static const std::vector<testing::Spectra> pixels = [] {
    std::vector<testing::Spectra> p;
    for (long i = 0; i < kNx * kNy; ++i) p.push_back(Line(100.0 + 20.0 * i, 1e-4, 1000u + i));
    return p;
  }();
  const auto& px = pixels[static_cast<std::size_t>(y * kNx + x)];
  const std::vector<double>* v[4] = {&px.I, &px.Q, &px.U, &px.V};
  return (*v[s])[static_cast<std::size_t>(w)];
}

test::CubeSpec Spec(std::function<double(long, long, long, long)> value) {
  test::CubeSpec c;
  c.na = kNx;
  c.nb = kNy;
  c.nw = kNw;
  c.bitpix = -32;
  c.spectral_ctype = "AWAV";
  c.spectral_cunit = "nm";
  c.spectral_crval = kRest - 0.024;
  c.spectral_cdelt = 0.048 / (kNw - 1);
  c.value = std::move(value);
  return c;
}

FieldMaps MapCube(const std::string& path) {
  FieldMapOptions o;
  o.method = MapMethod::kAuto;
  o.rest_wavelength_nm = kRest;
  o.pattern = Pattern();
  o.window_halfwidth_nm = 0.012;  // fixed: the automatic window averages the first tile's clean pixels
  o.threads = 2;
  CubeReader reader(path);
  FieldMaps maps;
  EXPECT_EQ(ComputeFieldMaps(reader, o, {}, maps), RunStatus::kComplete);
  return maps;
}

bool Bad(long x, long y) { return x >= 1 && x <= 2 && y >= 2 && y <= 3; }

// Every pixel outside the bad block equals the clean run bit for bit; the block carries `bit` and NaN maps.
void ExpectOnlyBlockFlagged(const FieldMaps& clean, const FieldMaps& m, std::uint32_t bit, const char* what) {
  for (long y = 0; y < kNy; ++y)
    for (long x = 0; x < kNx; ++x) {
      const std::size_t i = static_cast<std::size_t>(y * kNx + x);
      if (Bad(x, y)) {
        EXPECT_EQ(static_cast<std::uint32_t>(m.quality[i]), bit) << what << " " << x << "," << y;
        EXPECT_EQ(m.method[i], 0) << what;
        for (int s = 0; s < kSlotCount; ++s) EXPECT_TRUE(std::isnan(m.slots[s][i])) << what << MapSlotName(s);
      } else {
        EXPECT_EQ(m.quality[i], clean.quality[i]) << what << " " << x << "," << y;
        EXPECT_EQ(m.method[i], clean.method[i]) << what;
        for (int s = 0; s < kSlotCount; ++s) {
          const float a = clean.slots[s][i], b = m.slots[s][i];
          EXPECT_TRUE((std::isnan(a) && std::isnan(b)) || a == b) << what << " " << MapSlotName(s) << " " << x << "," << y;
        }
      }
    }
}

TEST(DataSanityCube, InfAndFillValueBlocksAreFlaggedAndNeighboursUnchanged) {
  test::TempDir dir;
  test::WriteCube(dir.File("clean.fits"), Spec(CleanValue));
  const FieldMaps clean = MapCube(dir.File("clean.fits"));
  struct Case {
    const char* name;
    double value;
    bool all_wavelengths;
    long stokes;
    std::uint32_t bit;
  } cases[] = {{"+Inf in V at one wavelength", HUGE_VAL, false, 3, kQualityNonFiniteInput},
               {"-Inf in Q at all wavelengths", -HUGE_VAL, true, 1, kQualityNonFiniteInput},
               {"+3e38 in V at one wavelength", 3e38, false, 3, kQualityAbsurdInput},
               {"-3e38 in U at all wavelengths", -3e38, true, 2, kQualityAbsurdInput},
               {"+3e38 in I at all wavelengths", 3e38, true, 0, kQualityAbsurdInput},
               {"1e20 in I at one wavelength", 1e20, false, 0, kQualityAbsurdInput}};
  for (const Case& c : cases) {
    const std::string path = dir.File("bad.fits");
    test::WriteCube(path, Spec([&c](long x, long y, long s, long w) {
                      if (Bad(x, y) && s == c.stokes && (c.all_wavelengths || w == 40)) return c.value;
                      return CleanValue(x, y, s, w);
                    }));
    ExpectOnlyBlockFlagged(clean, MapCube(path), c.bit, c.name);
  }
}

TEST(DataSanityCube, NegativeIBlockIsFlaggedAndNeighboursUnchanged) {
  test::TempDir dir;
  test::WriteCube(dir.File("clean.fits"), Spec(CleanValue));
  const FieldMaps clean = MapCube(dir.File("clean.fits"));
  test::WriteCube(dir.File("neg.fits"), Spec([](long x, long y, long s, long w) {
                    return (Bad(x, y) ? -1.0 : 1.0) * CleanValue(x, y, s, w);
                  }));
  ExpectOnlyBlockFlagged(clean, MapCube(dir.File("neg.fits")), kQualityNonPositiveI, "negative I block");
}

TEST(DataSanityCube, CubeWithNegativeIEverywhereIsRefused) {
  test::TempDir dir;
  test::WriteCube(dir.File("neg.fits"), Spec([](long x, long y, long s, long w) { return -CleanValue(x, y, s, w); }));
  FieldMapOptions o;
  o.rest_wavelength_nm = kRest;
  o.pattern = Pattern();
  CubeReader reader(dir.File("neg.fits"));
  FieldMaps maps;
  try {
    ComputeFieldMaps(reader, o, {}, maps);
    FAIL() << "a cube with Stokes I < 0 everywhere was mapped";
  } catch (const FitsError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("neg.fits"), std::string::npos) << m;
    EXPECT_NE(m.find("no usable pixel"), std::string::npos) << m;
    EXPECT_NE(m.find(std::to_string(kNx * kNy) + " with continuum Stokes I <= 0"), std::string::npos) << m;
  }
}

}  // namespace
}  // namespace zeeline
