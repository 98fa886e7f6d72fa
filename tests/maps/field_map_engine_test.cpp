// FieldMapEngine, the pieces ComputeFieldMaps is made of (the MPI driver, src/mpi/, hands out row blocks
// through it): blocks of rows computed in any order into maps of their own give, once placed, exactly the
// maps of one ComputeFieldMaps run — the property the distributed map relies on (tests/mpi checks the whole
// program under mpirun). Cubes are written with cfitsio (tests/io/io_test_util.hpp) from the independent
// thin-line model (tests/maps/thin_line_model.hpp).
#include "zeeline/maps/field_maps.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <random>

#include <gtest/gtest.h>

#include "io/io_test_util.hpp"
#include "maps/thin_line_model.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kRest = 630.25;  // nm, air
constexpr int kNx = 5, kNy = 7, kNw = 61;

// A float64 x, y, lambda, Stokes cube of pixels[y * nx + x] on the grid kRest -+ 0.03 nm (nw samples).
void WritePixelCube(const std::string& path, const std::vector<testing::Spectra>& pixels, long nx, long ny, long nw) {
  test::CubeSpec c;
  c.na = nx;
  c.nb = ny;
  c.nw = nw;
  c.bitpix = -64;
  c.spectral_cunit = "nm";
  c.spectral_crval = kRest - 0.03;
  c.spectral_cdelt = 0.06 / static_cast<double>(nw - 1);
  c.value = [&pixels, nx](long a, long b, long s, long w) {
    const auto& px = pixels[static_cast<std::size_t>(b * nx + a)];
    const std::vector<double>* v[4] = {&px.I, &px.Q, &px.U, &px.V};
    return (*v[s])[static_cast<std::size_t>(w)];
  };
  test::WriteCube(path, c);
}

// Fields from 30 G (weak) to 2400 G (resolved), so auto uses more than one method; a NaN pixel at (2, 3).
void WriteCube(const std::string& path) {
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"), LandeOptions{2.0, 1.0});
  std::vector<testing::Spectra> pixels;
  std::mt19937_64 rng(17);
  for (long y = 0; y < kNy; ++y)
    for (long x = 0; x < kNx; ++x) {
      testing::ThinLine l;
      l.rest_nm = kRest;
      l.field_gauss = 30.0 + 70.0 * static_cast<double>((y * kNx + x) * (y * kNx + x)) / 10.0;
      l.inclination_deg = 20.0 + 20.0 * static_cast<double>(y);
      l.azimuth_deg = 10.0 + 30.0 * static_cast<double>(x);
      auto s = testing::MakeThinLine(l, p, testing::Grid(kRest, 0.03, kNw));
      testing::AddNoise(s, 1e-4, rng);
      pixels.push_back(std::move(s));
    }
  auto& nan_pixel = pixels[static_cast<std::size_t>(3 * kNx + 2)];
  nan_pixel.I[7] = nan_pixel.Q[7] = nan_pixel.U[7] = nan_pixel.V[7] = std::nan("");
  WritePixelCube(path, pixels, kNx, kNy, kNw);
}

FieldMapOptions Options(MapMethod m) {
  FieldMapOptions o;
  o.method = m;
  o.rest_wavelength_nm = kRest;
  o.pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"), LandeOptions{2.0, 1.0});
  o.noise_rel = 1e-4;
  o.threads = 2;
  o.disambiguate = m != MapMethod::kCentreOfGravity;
  return o;
}

bool SameBits(const std::vector<float>& a, const std::vector<float>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(float)) == 0;
}

TEST(FieldMapEngine, RowBlocksInAnyOrderGiveTheMapsOfOneRun) {
  test::TempDir dir;
  const std::string path = dir.File("cube.fits");
  WriteCube(path);
  CubeReadOptions read;
  read.max_tile_mib = 1e-6;  // one row per tile in the one-process run: its layout comes from row 1
  for (MapMethod m : {MapMethod::kWeakField, MapMethod::kMilneEddington, MapMethod::kAuto}) {
    const FieldMapOptions o = Options(m);
    FieldMaps one;
    {
      CubeReader reader(path, read);
      ASSERT_EQ(ComputeFieldMaps(reader, o, {}, one), RunStatus::kComplete);
    }
    // Blocks of 3, 1 and 3 rows, computed last block first, each into maps of its own, then placed.
    CubeReader reader(path, read);
    FieldMapEngine engine(reader.info(), o);
    engine.ChooseLayout(reader);
    FieldMaps whole;
    engine.InitMaps(kNy, whole);
    const long blocks[][2] = {{4, 3}, {3, 1}, {0, 3}};
    for (const auto& b : blocks) {
      CubeTile tile;
      reader.ReadRows(b[0], b[1], tile);
      FieldMaps part;
      engine.InitMaps(b[1], part);
      engine.Compute(tile, part, b[0]);
      const std::size_t at = static_cast<std::size_t>(b[0] * kNx);
      for (int s = 0; s < kSlotCount; ++s)
        std::copy(part.slots[s].begin(), part.slots[s].end(), whole.slots[s].begin() + static_cast<long>(at));
      std::copy(part.method.begin(), part.method.end(), whole.method.begin() + static_cast<long>(at));
      std::copy(part.quality.begin(), part.quality.end(), whole.quality.begin() + static_cast<long>(at));
    }
    engine.Finish(whole);
    for (int s = 0; s < kSlotCount; ++s) EXPECT_TRUE(SameBits(whole.slots[s], one.slots[s])) << MapSlotName(s);
    EXPECT_EQ(whole.method, one.method);
    EXPECT_EQ(whole.quality, one.quality);
    EXPECT_EQ(whole.disambiguation, one.disambiguation);
    EXPECT_FALSE(one.disambiguation.empty());
    if (m == MapMethod::kAuto) {
      EXPECT_GT(one.method_counts[static_cast<int>(MapMethod::kWeakField)], 0);
      EXPECT_GT(one.method_counts[static_cast<int>(MapMethod::kMilneEddington)], 0);
    }
  }
}

TEST(FieldMapEngine, RefusesRowsOutsideItsMapsAndWorkWithoutALayout) {
  test::TempDir dir;
  const std::string path = dir.File("cube.fits");
  WriteCube(path);
  CubeReader reader(path);
  const FieldMapOptions o = Options(MapMethod::kWeakField);
  FieldMapEngine engine(reader.info(), o);
  CubeTile tile;
  reader.ReadRows(2, 2, tile);
  FieldMaps part;
  engine.InitMaps(2, part);
  EXPECT_THROW(engine.Compute(tile, part, 2), OptionError);  // no layout chosen yet
  engine.ChooseLayout(reader);
  EXPECT_THROW(engine.Compute(tile, part, 3), OptionError);  // rows 2..3 start before the maps' row 3
  EXPECT_THROW(engine.Compute(tile, part, 1), OptionError);  // rows 2..3 end after the maps' rows 1..2
  EXPECT_NO_THROW(engine.Compute(tile, part, 2));
}


// The layout (fit window from the mean I profile, continuum samples, the median level of the sanity ceiling)
// must not depend on the map's thread count. 96 x 60 pixels with a NaN pixel and a pixel of absurd level that
// stay out of the mean profile; the median level is checked against its definition (data_sanity.hpp: the
// median of |I| over the samples of the pixels inside the type range, the upper middle element when their
// number is even).
TEST(FieldMapEngine, LayoutDoesNotDependOnTheThreadCount) {
  test::TempDir dir;
  const std::string path = dir.File("wide.fits");
  constexpr long nx = 96, ny = 60, nw = 41;
  const ZeemanPattern p = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"), LandeOptions{2.0, 1.0});
  std::vector<testing::Spectra> pixels;
  std::mt19937_64 rng(23);
  for (long k = 0; k < nx * ny; ++k) {
    testing::ThinLine l;
    l.rest_nm = kRest;
    l.field_gauss = 50.0 + static_cast<double>(k % 97) * 10.0;
    l.inclination_deg = 30.0;
    l.azimuth_deg = 40.0;
    auto sp = testing::MakeThinLine(l, p, testing::Grid(kRest, 0.03, nw));
    testing::AddNoise(sp, 1e-3, rng);
    for (double& v : sp.I) v *= 1.0 + 0.3 * static_cast<double>(k % 13) / 13.0;  // levels that differ
    pixels.push_back(std::move(sp));
  }
  for (double& v : pixels[200].I) v = 1e30;  // far above the level ceiling (median x 10^kAbsurdOrders)
  pixels[4100].I[5] = std::nan("");
  WritePixelCube(path, pixels, nx, ny, nw);
  // The median level by its definition: |I| of every finite sample of the pixels without NaN/Inf (the absurd
  // pixel is inside the float64 type range, so it counts here; it is left out of the mean profile only).
  std::vector<double> levels;
  for (long k = 0; k < nx * ny; ++k) {
    if (k == 4100) continue;
    for (double v : pixels[static_cast<std::size_t>(k)].I) levels.push_back(std::fabs(v));
  }
  std::nth_element(levels.begin(), levels.begin() + static_cast<long>(levels.size() / 2), levels.end());
  const double median = levels[levels.size() / 2];

  CubeReadOptions read;
  read.max_tile_mib = 64.0;  // the whole cube is the first tile
  std::vector<SpectralLayout> layouts;
  for (int threads : {1, 2, 3}) {
    FieldMapOptions o = Options(MapMethod::kWeakField);
    o.threads = threads;
    CubeReader reader(path, read);
    ASSERT_EQ(reader.rows_per_tile(), ny);
    FieldMapEngine engine(reader.info(), o);
    engine.ChooseLayout(reader);
    layouts.push_back(engine.layout());
    EXPECT_EQ(engine.layout().median_level, median) << threads << " threads";
  }
  for (std::size_t i = 1; i < layouts.size(); ++i) {
    EXPECT_EQ(std::memcmp(&layouts[i].window_halfwidth_nm, &layouts[0].window_halfwidth_nm, sizeof(double)), 0)
        << layouts[i].window_halfwidth_nm << " vs " << layouts[0].window_halfwidth_nm;
    EXPECT_EQ(layouts[i].continuum, layouts[0].continuum);
    EXPECT_EQ(layouts[i].median_level, layouts[0].median_level);
  }
  EXPECT_GT(layouts[0].window_halfwidth_nm, 0.0);
  EXPECT_FALSE(layouts[0].continuum.empty());
}
}  // namespace
}  // namespace zeeline
