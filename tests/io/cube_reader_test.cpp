// Tests of io/cube_reader: axis orders, BITPIX/BSCALE/BZERO, spectral WCS, HDU selection, tiles, and
// every bad-input case of docs/fits.md. Cubes are written here with cfitsio directly (io_test_util.hpp).
//
// Outside references:
//  * The wavelength of spectral pixel p on a linear axis is CRVAL + CDELT (p - CRPIX) (FITS WCS Paper I,
//    Greisen & Calabretta 2002, eq. 3 with PC = identity); 1 Angstrom = 0.1 nm; FREQ: lambda = c / nu
//    (Paper III, Greisen et al. 2006, table 1).
//  * Physical value = BZERO + BSCALE * stored value (FITS standard 4.0, sect. 5.3).
//  * STOKES codes 1..4 = I, Q, U, V; -1..-8 = RR, LL, RL, LR, XX, YY, XY, YX (Paper I, table 7).
#include "zeeline/io/cube_reader.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <fstream>
#include <limits>

#include "io_test_util.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

using test::CubeSpec;
using test::TempDir;
using test::WriteCube;

// Linear WCS evaluated in double by wcslib vs the formula above: a few ulp of 630 nm.
constexpr double kWavelengthTol_nm = 1e-9;

// Expect the tile to hold ExpectedValue at every (x, y, s, w) with x = first spatial axis in the file.
template <class T>
void ExpectTileMatches(const CubeSpec& spec, const CubeInfo& info, const CubeTileT<T>& tile, bool spectral_reversed) {
  // Which generated spatial role is the reader's x?
  int first_spatial = -1;
  for (int i = 0; i < 4; ++i) {
    if (spec.order[i] == test::kA || spec.order[i] == test::kB) {
      first_spatial = spec.order[i];
      break;
    }
  }
  const bool x_is_a = first_spatial == test::kA;
  const long ns = static_cast<long>(spec.stokes.size());
  for (long yy = 0; yy < tile.y_count; ++yy) {
    for (long x = 0; x < tile.nx; ++x) {
      const long y = tile.y_begin + yy;
      const long a = x_is_a ? x : y, b = x_is_a ? y : x;
      const long p = yy * tile.nx + x;
      for (long s = 0; s < ns; ++s) {
        for (long w = 0; w < spec.nw; ++w) {
          const long wf = spectral_reversed ? spec.nw - 1 - w : w;
          const double expected = test::ExpectedValue(spec, a, b, s, wf);
          ASSERT_EQ(static_cast<double>(tile.Spectrum(p, static_cast<int>(s))[w]), expected)
              << "x=" << x << " y=" << y << " s=" << s << " w=" << w;
        }
      }
    }
  }
  (void)info;
}

// GatherBlock (the map runner's plane-by-plane gather, SSE2 on x86-64) gives Gather's values: blocks of 8
// from pixel 0, and blocks of 5 from pixel 3 (starts inside a row, short last block).
void ExpectBlockGatherMatches(const RawCubeTile& raw) {
  const long rec = raw.n_stokes * raw.n_wavelength;
  std::vector<double> one(static_cast<std::size_t>(rec));
  for (const auto& [first, size] : {std::pair<long, long>{0, 8}, std::pair<long, long>{3, 5}}) {
    std::vector<double> block(static_cast<std::size_t>(size * rec));
    for (long p = first; p < raw.n_pixels(); p += size) {
      const long count = std::min(size, raw.n_pixels() - p);
      raw.GatherBlock(p, count, block.data());
      for (long j = 0; j < count; ++j) {
        raw.Gather(p + j, one.data());
        for (long k = 0; k < rec; ++k)
          ASSERT_EQ(block[static_cast<std::size_t>(j * rec + k)], one[static_cast<std::size_t>(k)])
              << "GatherBlock(" << p << ", " << count << ") pixel " << p + j << " sample " << k;
      }
    }
  }
}

// The same check for ReadRowsRaw + RawCubeTile::Gather (the map runner's path): rows [y_begin, y_begin + y_count).
void ExpectRawRowsMatch(const CubeSpec& spec, CubeReader& reader, long y_begin, long y_count, bool spectral_reversed) {
  RawCubeTile raw;
  reader.ReadRowsRaw(y_begin, y_count, raw);
  CubeTile t;
  t.y_begin = raw.y_begin;
  t.y_count = raw.y_count;
  t.nx = raw.nx;
  t.n_stokes = raw.n_stokes;
  t.n_wavelength = raw.n_wavelength;
  ASSERT_EQ(t.y_begin, y_begin);
  ASSERT_EQ(t.y_count, y_count);
  const long rec = t.n_stokes * t.n_wavelength;
  t.data.resize(static_cast<std::size_t>(raw.n_pixels() * rec));
  for (long p = 0; p < raw.n_pixels(); ++p)
    EXPECT_EQ(raw.Gather(p, t.data.data() + p * rec), 0u);  // all samples finite
  ExpectTileMatches(spec, reader.info(), t, spectral_reversed);
  ExpectBlockGatherMatches(raw);
}

std::string OrderName(const std::array<test::Role, 4>& o) {
  std::string s;
  for (auto r : o) s += "abws"[r];
  return s;
}

TEST(CubeReader, ReadsAll24AxisOrdersIntoPixelStokesWavelengthLayout) {
  TempDir dir;
  std::array<test::Role, 4> order = {test::kA, test::kB, test::kW, test::kS};
  std::sort(order.begin(), order.end());
  int count = 0;
  do {
    CubeSpec spec;
    spec.order = order;
    const std::string path = dir.File("cube_" + OrderName(order) + ".fits");
    WriteCube(path, spec);
    CubeReadOptions opt;
    opt.max_tile_mib = 1e-6;  // one row per tile: exercises the tiling too
    CubeReader reader(path, opt);
    const CubeInfo& info = reader.info();
    SCOPED_TRACE(OrderName(order));
    // Axis roles as written.
    for (int i = 0; i < 4; ++i) {
      const AxisRole role = info.axes[i].role;
      if (order[i] == test::kW) EXPECT_EQ(role, AxisRole::kSpectral);
      if (order[i] == test::kS) EXPECT_EQ(role, AxisRole::kStokes);
    }
    const bool x_is_a = std::find(order.begin(), order.end(), test::kA) < std::find(order.begin(), order.end(), test::kB);
    EXPECT_EQ(info.nx, x_is_a ? spec.na : spec.nb);
    EXPECT_EQ(info.ny, x_is_a ? spec.nb : spec.na);
    ASSERT_EQ(info.n_wavelength(), spec.nw);
    ASSERT_EQ(info.n_stokes(), 4);
    EXPECT_EQ(reader.rows_per_tile(), 1);
    CubeTileF tile;
    long rows = 0;
    while (reader.NextTile(tile)) {
      EXPECT_EQ(tile.y_count, 1);
      ExpectTileMatches(spec, info, tile, false);
      rows += tile.y_count;
    }
    EXPECT_EQ(rows, info.ny);
    ++count;
  } while (std::next_permutation(order.begin(), order.end()));
  EXPECT_EQ(count, 24);
}

// The raw read takes whole contiguous runs of the file with fits_read_img when they are long (>= 4096
// samples) and fits_read_subset otherwise: both paths, every axis order, whole and partial row blocks.
TEST(CubeReader, RawRowsGatherToTheSameLayoutInAll24AxisOrders) {
  TempDir dir;
  std::array<test::Role, 4> order = {test::kA, test::kB, test::kW, test::kS};
  std::sort(order.begin(), order.end());
  do {
    CubeSpec spec;
    spec.order = order;
    spec.na = 9;
    spec.nb = 7;
    spec.nw = 70;  // 17640 samples: values stay exact in float32
    const std::string path = dir.File("raw_" + OrderName(order) + ".fits");
    WriteCube(path, spec);
    CubeReader reader(path);
    SCOPED_TRACE(OrderName(order));
    const long ny = reader.info().ny;
    ExpectRawRowsMatch(spec, reader, 0, ny, false);
    ExpectRawRowsMatch(spec, reader, 1, 2, false);
    ExpectRawRowsMatch(spec, reader, ny - 1, 1, false);
  } while (std::next_permutation(order.begin(), order.end()));
}

struct BitpixCase {
  int bitpix;
  double bscale, bzero;
};
void PrintTo(const BitpixCase& c, std::ostream* os) {
  *os << "BITPIX=" << c.bitpix << " BSCALE=" << c.bscale << " BZERO=" << c.bzero;
}

class CubeReaderBitpix : public ::testing::TestWithParam<BitpixCase> {};

TEST_P(CubeReaderBitpix, AppliesBscaleBzeroAndReturnsPhysicalValues) {
  TempDir dir;
  CubeSpec spec;
  spec.order = {test::kW, test::kA, test::kS, test::kB};
  spec.bitpix = GetParam().bitpix;
  spec.bscale = GetParam().bscale;
  spec.bzero = GetParam().bzero;
  const std::string path = dir.File("cube.fits");
  WriteCube(path, spec);
  CubeReader reader(path);
  EXPECT_EQ(reader.info().bitpix, spec.bitpix);
  CubeTile tile;
  reader.ReadRows(0, reader.info().ny, tile);
  ExpectTileMatches(spec, reader.info(), tile, false);
  CubeTileF ftile;
  reader.ReadRows(1, 2, ftile);
  ExpectTileMatches(spec, reader.info(), ftile, false);
  ExpectRawRowsMatch(spec, reader, 1, 2, false);
}

INSTANTIATE_TEST_SUITE_P(AllBitpix, CubeReaderBitpix,
                         ::testing::Values(BitpixCase{8, 1.0, 0.0}, BitpixCase{8, 0.5, -10.0},
                                           BitpixCase{16, 1.0, 0.0}, BitpixCase{16, 2.0, 100.0},
                                           BitpixCase{16, 1.0, 32768.0},  // unsigned 16-bit convention
                                           BitpixCase{32, 1.0, 0.0}, BitpixCase{32, 0.125, -1000.0},
                                           BitpixCase{-32, 1.0, 0.0}, BitpixCase{-64, 1.0, 0.0},
                                           BitpixCase{-32, 0.25, 3.0}),
                         [](const ::testing::TestParamInfo<BitpixCase>& p) {
                           const BitpixCase& c = p.param;
                           std::string name = "Bitpix" + std::string(c.bitpix < 0 ? "Float" : "Int") +
                                              std::to_string(std::abs(c.bitpix));
                           if (c.bscale != 1.0 || c.bzero != 0.0) name += "Scaled" + std::to_string(p.index);
                           return name;
                         });

TEST(CubeReader, AirWavelengthAxisInAngstromGivesNanometresFromPaperIFormula) {
  TempDir dir;
  CubeSpec spec;
  spec.spectral_crpix = 3.0;
  const std::string path = dir.File("c.fits");
  WriteCube(path, spec);
  const CubeInfo info = ReadCubeInfo(path);
  EXPECT_EQ(info.file_frame, WavelengthFrame::kAir);
  EXPECT_EQ(info.frame, WavelengthFrame::kAir);
  EXPECT_EQ(info.spectral_ctype, "AWAV");
  for (long p = 1; p <= spec.nw; ++p) {
    const double expected_nm = 0.1 * (spec.spectral_crval + spec.spectral_cdelt * (static_cast<double>(p) - 3.0));
    EXPECT_NEAR(info.wavelength_nm[p - 1], expected_nm, kWavelengthTol_nm) << p;
  }
}

TEST(CubeReader, FrequencyAxisIsReversedToIncreasingWavelength) {
  TempDir dir;
  CubeSpec spec;
  spec.spectral_ctype = "FREQ";
  spec.spectral_cunit = "Hz";
  spec.spectral_crval = 4.75e14;
  spec.spectral_cdelt = 1.0e10;
  const std::string path = dir.File("c.fits");
  WriteCube(path, spec);
  CubeReader reader(path);
  const CubeInfo& info = reader.info();
  EXPECT_EQ(info.file_frame, WavelengthFrame::kVacuum);
  EXPECT_TRUE(info.spectral_reversed);
  for (long w = 0; w < spec.nw; ++w) {
    const long p = spec.nw - w;  // increasing wavelength = decreasing frequency
    const double nu = spec.spectral_crval + spec.spectral_cdelt * static_cast<double>(p - 1);
    EXPECT_NEAR(info.wavelength_nm[w], constants::kSpeedOfLight_m_s / nu * 1e9, kWavelengthTol_nm);
  }
  CubeTile tile;
  reader.ReadRows(0, info.ny, tile);
  ExpectTileMatches(spec, info, tile, true);
  ExpectRawRowsMatch(spec, reader, 0, info.ny, true);
}

TEST(CubeReader, ConvertsGridToVacuumOnRequest) {
  TempDir dir;
  CubeSpec spec;  // AWAV
  const std::string path = dir.File("c.fits");
  WriteCube(path, spec);
  CubeReadOptions opt;
  opt.frame = WavelengthFrame::kVacuum;
  const CubeInfo info = ReadCubeInfo(path, opt);
  EXPECT_EQ(info.file_frame, WavelengthFrame::kAir);
  EXPECT_EQ(info.frame, WavelengthFrame::kVacuum);
  // n(630 nm) - 1 = 2.77e-4 (Morton 2000 eq. 8): vacuum is longer by ~0.175 nm.
  EXPECT_NEAR(info.wavelength_nm[0] - 630.2, 0.1745, 0.001);
}

TEST(CubeReader, SubsetOfStokesAndVSignFlip) {
  TempDir dir;
  CubeSpec spec;
  spec.stokes = {1, 4};  // I and V only: CRVAL 1, CDELT 3
  const std::string path = dir.File("iv.fits");
  WriteCube(path, spec);
  CubeReadOptions opt;
  opt.v_sign = -1;
  CubeReader reader(path, opt);
  const CubeInfo& info = reader.info();
  ASSERT_EQ(info.n_stokes(), 2);
  EXPECT_EQ(info.stokes[0], StokesParameter::kI);
  EXPECT_EQ(info.stokes[1], StokesParameter::kV);
  EXPECT_EQ(info.StokesIndex(StokesParameter::kQ), -1);
  CubeTile tile;
  reader.ReadRows(0, 1, tile);
  EXPECT_EQ(tile.Spectrum(1, 0)[2], test::ExpectedValue(spec, 1, 0, 0, 2));
  EXPECT_EQ(tile.Spectrum(1, 1)[2], -test::ExpectedValue(spec, 1, 0, 1, 2));
  RawCubeTile raw;
  reader.ReadRowsRaw(0, 1, raw);
  std::vector<double> spectra(static_cast<std::size_t>(2 * spec.nw));
  raw.Gather(1, spectra.data());
  EXPECT_EQ(spectra[2], test::ExpectedValue(spec, 1, 0, 0, 2));
  EXPECT_EQ(spectra[static_cast<std::size_t>(spec.nw) + 2], -test::ExpectedValue(spec, 1, 0, 1, 2));
  reader.ReadRowsRaw(0, info.ny, raw);
  ExpectBlockGatherMatches(raw);  // V flipped, two Stokes planes
}

TEST(CubeReader, ExtensionByNumberAndByExtnameAndFirstImageByDefault) {
  TempDir dir;
  CubeSpec spec;
  spec.extname = "STOKESDATA";
  const std::string path = dir.File("ext.fits");
  WriteCube(path, spec);
  for (const std::string p : {path, path + "[1]", path + "[STOKESDATA]"}) {
    CubeReader reader(p);
    EXPECT_EQ(reader.info().hdu, 1) << p;  // the file.fits[n] index, as in the name
    EXPECT_EQ(reader.info().extname, "STOKESDATA");
    CubeTile tile;
    reader.ReadRows(0, 1, tile);
    ExpectTileMatches(spec, reader.info(), tile, false);
  }
}

TEST(CubeReader, SpatialWcsHeaderDescribesTheTwoSpatialAxes) {
  TempDir dir;
  CubeSpec spec;
  spec.order = {test::kS, test::kA, test::kW, test::kB};
  const std::string path = dir.File("c.fits");
  WriteCube(path, spec);
  const CubeInfo info = ReadCubeInfo(path);
  const std::string& h = info.spatial_wcs_header;
  ASSERT_EQ(h.size() % 80, 0u);
  EXPECT_NE(h.find("CTYPE1  = 'HPLN-TAN'"), std::string::npos) << h;
  EXPECT_NE(h.find("CTYPE2  = 'HPLT-TAN'"), std::string::npos) << h;
  EXPECT_EQ(h.find("STOKES"), std::string::npos);
  EXPECT_EQ(h.find("AWAV"), std::string::npos);
}

TEST(CubeReader, StatisticsCountNanAndInfPerPixelWithoutSpreading) {
  TempDir dir;
  CubeSpec spec;
  spec.value = [](long a, long b, long s, long w) {
    if (a == 1 && b == 2 && s == 3 && w == 4) return std::numeric_limits<double>::quiet_NaN();
    if (a == 2 && b == 0 && s == 0 && w == 0) return std::numeric_limits<double>::infinity();
    return static_cast<double>(a + b + s + w);
  };
  const std::string path = dir.File("nan.fits");
  WriteCube(path, spec);
  CubeReadOptions opt;
  opt.scan_statistics = true;
  CubeReader reader(path, opt);
  const CubeStatistics& st = *reader.info().statistics;
  EXPECT_EQ(st.nan_samples, 1);
  EXPECT_EQ(st.inf_samples, 1);
  EXPECT_EQ(st.pixels_with_nonfinite, 2);
  EXPECT_EQ(st.finite_samples, 3 * 4 * 5 * 4 - 2);
  EXPECT_EQ(st.min, 0.0);
  EXPECT_EQ(st.max, 2.0 + 3.0 + 3.0 + 4.0);
  CubeTile tile;
  reader.ReadRows(0, reader.info().ny, tile);
  for (long y = 0; y < 4; ++y) {
    for (long x = 0; x < 3; ++x) {
      const bool bad = (x == 1 && y == 2) || (x == 2 && y == 0);
      EXPECT_EQ(tile.nonfinite[static_cast<std::size_t>(y * 3 + x)], bad ? 1u : 0u) << x << "," << y;
    }
  }
  EXPECT_TRUE(std::isnan(tile.Spectrum(2 * 3 + 1, 3)[4]));
  EXPECT_EQ(tile.Spectrum(2 * 3 + 1, 3)[3], 1.0 + 2.0 + 3.0 + 3.0);  // neighbour untouched
}

TEST(CubeReader, OptionsValidateNamesTheField) {
  CubeReadOptions o;
  o.v_sign = 2;
  EXPECT_NE(o.Validate().find("v_sign"), std::string::npos);
  o.v_sign = 1;
  o.max_tile_mib = -1;
  EXPECT_NE(o.Validate().find("max_tile_mib"), std::string::npos);
  EXPECT_THROW(CubeReader("x.fits", o), OptionError);
}

// ------------------------------------------------------------------------------- bad input

// Expects a FitsError whose message contains every fragment.
void ExpectFitsError(const std::string& path, const std::vector<std::string>& fragments, CubeReadOptions opt = {}) {
  try {
    CubeReader r(path, opt);
    FAIL() << "no error for " << path;
  } catch (const FitsError& e) {
    const std::string msg = e.what();
    for (const auto& f : fragments) EXPECT_NE(msg.find(f), std::string::npos) << "'" << f << "' not in: " << msg;
  }
}

TEST(CubeReaderBadInput, MissingFileIsNamed) {
  ExpectFitsError("/nonexistent/dir/cube.fits", {"/nonexistent/dir/cube.fits", "no such file"});
}

TEST(CubeReaderBadInput, NotFitsIsReported) {
  TempDir dir;
  const std::string path = dir.File("notes.fits");
  std::ofstream(path) << "this is a text file, not FITS\n";
  ExpectFitsError(path, {path, "not a FITS file"});
}

TEST(CubeReaderBadInput, TruncatedDataIsReportedBeforeAllocation) {
  TempDir dir;
  CubeSpec spec;
  const std::string path = dir.File("trunc.fits");
  WriteCube(path, spec);
  std::filesystem::resize_file(path, 2880 + 100);  // header + 100 bytes of the 960-byte data
  ExpectFitsError(path, {path, "HDU 0", "NAXIS1..NAXIS4", "truncated"});
}

TEST(CubeReaderBadInput, TruncatedHeaderIsReported) {
  TempDir dir;
  CubeSpec spec;
  const std::string path = dir.File("trunc_header.fits");
  WriteCube(path, spec);
  std::filesystem::resize_file(path, 1000);
  ExpectFitsError(path, {path, "cannot open"});
}

TEST(CubeReaderBadInput, NaxisInconsistentWithFileSize) {
  TempDir dir;
  CubeSpec spec;
  const std::string path = dir.File("big.fits");
  WriteCube(path, spec);
  // Claim a huge NAXIS3 by editing the header card in place (cfitsio would try to extend the file).
  std::fstream io(path, std::ios::in | std::ios::out | std::ios::binary);
  std::string header(2880, ' ');
  io.read(header.data(), 2880);
  const auto pos = header.find("NAXIS3  =");
  ASSERT_NE(pos, std::string::npos);
  char card[81];
  std::snprintf(card, sizeof card, "%-8s= %20ld", "NAXIS3", 2000000000L);
  io.seekp(static_cast<std::streamoff>(pos));
  io.write(card, 30);
  io.close();
  ExpectFitsError(path, {path, "NAXIS1..NAXIS4", "inconsistent with the file size"});
}

TEST(CubeReaderBadInput, NoSpectralAxisIsNamed) {
  TempDir dir;
  CubeSpec spec;
  spec.write_spectral_ctype = false;
  spec.spectral_cunit = "";
  const std::string path = dir.File("nospec.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "no spectral axis", "WAVE, AWAV, FREQ or WAVN"});
}

TEST(CubeReaderBadInput, NoStokesAxisIsNamed) {
  TempDir dir;
  CubeSpec spec;
  spec.write_stokes_ctype = false;
  const std::string path = dir.File("nostokes.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "no STOKES axis"});
}

TEST(CubeReaderBadInput, CircularFeedCodesAreRejectedByName) {
  TempDir dir;
  CubeSpec spec;
  spec.stokes = {-1, -2};  // RR, LL
  const std::string path = dir.File("rrll.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "CTYPE4 = 'STOKES'", "-1 (RR)", "not supported"});
}

TEST(CubeReaderBadInput, StokesCodeAboveFourIsRejected) {
  TempDir dir;
  CubeSpec spec;
  spec.stokes = {3, 4, 5};
  const std::string path = dir.File("s5.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "STOKES value 5", "outside 1..4"});
}

TEST(CubeReaderBadInput, ZeroCdeltIsNamed) {
  TempDir dir;
  CubeSpec spec;
  spec.spectral_cdelt = 0.0;
  const std::string path = dir.File("cdelt0.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "CDELT3 = 0"});
}

TEST(CubeReaderBadInput, NonPositiveWavelengthIsReportedByPixel) {
  // A linear axis is always monotonic (the CDELT = 0 case is tested above); an axis that runs through
  // zero gives non-positive wavelengths, reported with the pixel number.
  TempDir dir;
  CubeSpec spec;
  spec.spectral_crval = 0.02;
  spec.spectral_cdelt = -0.01;
  const std::string path = dir.File("neg.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "CTYPE3 = 'AWAV'", "spectral pixel 3", "non-positive"});
}

TEST(CubeReaderBadInput, SpectralAxisCoupledByPcMatrixIsRejected) {
  TempDir dir;
  CubeSpec spec;
  spec.extra_cards = {"PC3_1   =                 0.1"};
  const std::string path = dir.File("pc.fits");
  WriteCube(path, spec);
  ExpectFitsError(path, {path, "PC3_1", "couples the spectral axis"});
}

TEST(CubeReaderBadInput, WrongNumberOfAxes) {
  TempDir dir;
  const std::string path = dir.File("img.fits");
  fitsfile* f = nullptr;
  int status = 0;
  fits_create_file(&f, path.c_str(), &status);
  long naxes[2] = {4, 4};
  fits_create_img(f, FLOAT_IMG, 2, naxes, &status);
  std::vector<float> d(16, 1.0f);
  fits_write_img(f, TFLOAT, 1, 16, d.data(), &status);
  fits_close_file(f, &status);
  ASSERT_EQ(status, 0);
  ExpectFitsError(path, {path, "NAXIS = 2", "expected 4 axes"});
}

TEST(CubeReaderBadInput, AllNanCubeIsRejectedWhenScanned) {
  TempDir dir;
  CubeSpec spec;
  spec.value = [](long, long, long, long) { return std::numeric_limits<double>::quiet_NaN(); };
  const std::string path = dir.File("allnan.fits");
  WriteCube(path, spec);
  CubeReadOptions opt;
  opt.scan_statistics = true;
  ExpectFitsError(path, {path, "HDU 0", "all 240 data samples are NaN or Inf"}, opt);
}

TEST(CubeReaderBadInput, BlankIntegerPixelsBecomeNan) {
  TempDir dir;
  CubeSpec spec;
  spec.bitpix = 16;
  spec.extra_cards = {"BLANK   =                    7"};  // raw value 7 = (a=1, b=2, s=0, w=0)
  const std::string path = dir.File("blank.fits");
  WriteCube(path, spec);
  CubeReader reader(path);
  CubeTile tile;
  reader.ReadRows(0, reader.info().ny, tile);
  EXPECT_TRUE(std::isnan(tile.Spectrum(2 * 3 + 1, 0)[0]));
  EXPECT_EQ(tile.nonfinite[2 * 3 + 1], 1u);
  RawCubeTile raw;
  reader.ReadRowsRaw(0, reader.info().ny, raw);
  std::vector<double> spectra(static_cast<std::size_t>(4 * spec.nw));
  EXPECT_EQ(raw.Gather(2 * 3 + 1, spectra.data()), 1u);
  EXPECT_TRUE(std::isnan(spectra[0]));
  EXPECT_EQ(raw.Gather(0, spectra.data()), 0u);
}


// ---- The direct read (CubeReadOptions::direct_read): pread of a plain float32 data unit, bytes swapped while
// gathering. It must give what cfitsio gives, bit for bit (the FITS standard 4.0 sect. 5.3 float32 is IEEE-754
// big-endian: a byte swap, nothing else), and astropy's values.

// Every sample of every pixel of `raw`, gathered one by one and in blocks of 8 from pixel 0.
std::vector<double> GatherAll(const RawCubeTile& raw) {
  const long rec = raw.n_stokes * raw.n_wavelength;
  std::vector<double> out(static_cast<std::size_t>(raw.n_pixels() * rec));
  for (long p = 0; p < raw.n_pixels(); ++p) raw.GatherSamples(p, out.data() + p * rec);
  std::vector<double> block(static_cast<std::size_t>(8 * rec));
  for (long p = 0; p < raw.n_pixels(); p += 8) {
    const long count = std::min(8L, raw.n_pixels() - p);
    raw.GatherBlock(p, count, block.data());
    EXPECT_EQ(std::memcmp(block.data(), out.data() + p * rec, static_cast<std::size_t>(count * rec) * sizeof(double)), 0)
        << "GatherBlock(" << p << ", " << count << ") differs from GatherSamples";
  }
  return out;
}

// Samples a and b have the same bits (NaN payloads, -0 and subnormals included).
::testing::AssertionResult SameBits(const std::vector<double>& a, const std::vector<double>& b) {
  if (a.size() != b.size()) return ::testing::AssertionFailure() << a.size() << " vs " << b.size() << " samples";
  for (std::size_t k = 0; k < a.size(); ++k)
    if (std::memcmp(&a[k], &b[k], sizeof(double)) != 0)
      return ::testing::AssertionFailure() << "sample " << k << ": " << a[k] << " vs " << b[k];
  return ::testing::AssertionSuccess();
}

// The cube of `spec` with NaN, +-Inf, -0, subnormal and extreme float32 samples written over a few places
// (cfitsio TFLOAT to a float32 image: stored as given).
void WriteCubeWithSpecials(const std::string& path, const CubeSpec& spec) {
  WriteCube(path, spec);
  fitsfile* f = nullptr;
  int status = 0;
  fits_open_file(&f, path.c_str(), READWRITE, &status);
  test::CheckStatus(status, "reopen " + path);
  float specials[] = {std::numeric_limits<float>::quiet_NaN(), std::numeric_limits<float>::infinity(),
                      -std::numeric_limits<float>::infinity(), -0.0f, 1.0e-42f,
                      std::numeric_limits<float>::max(), -std::numeric_limits<float>::denorm_min()};
  const LONGLONG n = static_cast<LONGLONG>(spec.na) * spec.nb * spec.nw * static_cast<LONGLONG>(spec.stokes.size());
  for (LONGLONG at = 1, k = 0; at <= n; at += 997, ++k)
    fits_write_img(f, TFLOAT, at, 1, &specials[k % 7], &status);
  fits_close_file(f, &status);
  test::CheckStatus(status, "specials");
}

TEST(CubeReaderDirect, GivesCfitsioValuesBitForBitInAll24AxisOrders) {
  TempDir dir;
  std::array<test::Role, 4> order = {test::kA, test::kB, test::kW, test::kS};
  std::sort(order.begin(), order.end());
  int orders = 0, direct_tiles = 0;
  do {
    SCOPED_TRACE(OrderName(order));
    // Wavelengths stored increasing with V as stored, then decreasing with V negated.
    for (const auto& [cdelt, v_sign] : {std::pair<double, int>{0.01, 1}, std::pair<double, int>{-0.01, -1}}) {
      {
        CubeSpec spec;
        spec.order = order;
        spec.na = 40;
        spec.nb = 6;
        spec.nw = 24;
        spec.spectral_cdelt = cdelt;
        spec.value = [](long a, long b, long s, long w) { return (a - 17.25) * 1.5 + b * 1000.0 - s * 77.0 + w * 0.125; };
        const std::string path = dir.File("direct_" + OrderName(order) + ".fits");
        WriteCubeWithSpecials(path, spec);
        CubeReadOptions direct, plain;
        direct.v_sign = plain.v_sign = v_sign;
        plain.direct_read = false;
        CubeReader a(path, direct), b(path, plain);
        EXPECT_TRUE(a.reads_data_directly());
        EXPECT_FALSE(b.reads_data_directly());
        EXPECT_EQ(a.info().spectral_reversed, cdelt < 0.0);
        const long ny = a.info().ny;
        for (const auto& [y0, count] : {std::pair<long, long>{0, ny}, std::pair<long, long>{1, 2}, std::pair<long, long>{ny - 1, 1}}) {
          RawCubeTile ta, tb;
          a.ReadRowsRaw(y0, count, ta);
          b.ReadRowsRaw(y0, count, tb);
          EXPECT_FALSE(tb.file_byte_order);
          direct_tiles += ta.file_byte_order;
          EXPECT_TRUE(SameBits(GatherAll(ta), GatherAll(tb))) << "rows " << y0 << " + " << count;
          CubeTileF fa, fb;  // the pixel-major reorder of ReadRows, float and double
          a.ReadRows(y0, count, fa);
          b.ReadRows(y0, count, fb);
          EXPECT_EQ(std::memcmp(fa.data.data(), fb.data.data(), fa.data.size() * sizeof(float)), 0);
          EXPECT_EQ(fa.nonfinite, fb.nonfinite);
          CubeTile da, db;
          a.ReadRows(y0, count, da);
          b.ReadRows(y0, count, db);
          EXPECT_TRUE(SameBits(da.data, db.data));
        }
      }
    }
    ++orders;
  } while (std::next_permutation(order.begin(), order.end()));
  EXPECT_EQ(orders, 24);
  // Runs of >= 4096 samples are read directly (y not among the fastest axes); the others by cfitsio.
  EXPECT_GE(direct_tiles, 24);
}

TEST(CubeReaderDirect, MatchesAstropyValuesOfAstropyWrittenCubes) {
  TempDir dir;
  std::string output;
  const int rc = test::RunCommand(std::string(ZEELINE_PYTHON) + " " + ZEELINE_SOURCE_DIR +
                                      "/tests/io/direct_read_reference.py " + test::ShellQuote(dir.path()),
                                  &output);
  ASSERT_EQ(rc, 0) << output;
  for (const std::string name : {"lxsy", "xylsr"}) {
    SCOPED_TRACE(name);
    std::ifstream in(dir.File(name + ".f64"), std::ios::binary);
    std::vector<double> expected;
    double v;
    while (in.read(reinterpret_cast<char*>(&v), sizeof v)) expected.push_back(v);
    CubeReader reader(dir.File(name + ".fits"));
    ASSERT_TRUE(reader.reads_data_directly());
    RawCubeTile raw;
    reader.ReadRowsRaw(0, reader.info().ny, raw);
    EXPECT_TRUE(raw.file_byte_order);
    EXPECT_EQ(reader.info().spectral_reversed, name == "xylsr");
    EXPECT_TRUE(SameBits(GatherAll(raw), expected));
  }
}

// A 40 x 6 pixel, 30-sample float32 cube in the given axis order: runs long enough for the direct read.
CubeSpec DirectReadSpec(std::array<test::Role, 4> order) {
  CubeSpec spec;
  spec.order = order;
  spec.na = 40;
  spec.nb = 6;
  spec.nw = 30;
  return spec;
}

// What the direct read does not take stays with cfitsio (reads_data_directly() false) and reads correctly:
// scaled floats, integers, doubles, a gzipped file, an image section. (Tile-compressed images are refused by
// fits_is_compressed_image; neither cfitsio 4 nor astropy 5.2 here writes a compressed 4-D image to test it.)
TEST(CubeReaderDirect, EverythingElseStaysWithCfitsio) {
  TempDir dir;
  const CubeSpec spec = DirectReadSpec({test::kW, test::kA, test::kS, test::kB});
  auto check = [&](const CubeSpec& s, const std::string& path, bool direct) {
    SCOPED_TRACE(path);
    CubeReader reader(path);
    EXPECT_EQ(reader.reads_data_directly(), direct);
    ExpectRawRowsMatch(s, reader, 0, reader.info().ny, false);
    ExpectRawRowsMatch(s, reader, 2, 3, false);
  };
  const std::string plain = dir.File("plain.fits");
  WriteCube(plain, spec);
  check(spec, plain, true);
  CubeSpec scaled = spec;
  scaled.bscale = 0.25;
  scaled.bzero = 3.0;
  WriteCube(dir.File("scaled.fits"), scaled);
  check(scaled, dir.File("scaled.fits"), false);
  CubeSpec ints = spec;
  ints.bitpix = 16;
  WriteCube(dir.File("int16.fits"), ints);
  check(ints, dir.File("int16.fits"), false);
  CubeSpec doubles = spec;
  doubles.bitpix = -64;
  WriteCube(dir.File("float64.fits"), doubles);
  check(doubles, dir.File("float64.fits"), false);
  WriteCube(dir.File("gzipped.fits.gz"), spec);  // cfitsio compresses a .gz name on close
  {
    std::ifstream gz(dir.File("gzipped.fits.gz"), std::ios::binary);
    unsigned char magic[2] = {0, 0};
    gz.read(reinterpret_cast<char*>(magic), 2);
    ASSERT_TRUE(magic[0] == 0x1f && magic[1] == 0x8b) << "not a gzip file (RFC 1952 magic bytes)";
  }
  check(spec, dir.File("gzipped.fits.gz"), false);
  {
    CubeReader section(plain + "[*,*,*,2:5]");  // an image section: cfitsio's copy in memory
    EXPECT_FALSE(section.reads_data_directly());
    EXPECT_EQ(section.info().ny, 4);
  }
  CubeReadOptions off;
  off.direct_read = false;
  EXPECT_FALSE(CubeReader(plain, off).reads_data_directly());
}

TEST(CubeReaderDirect, FileCutShortAfterOpeningIsAnErrorNamingFileAndRows) {
  TempDir dir;
  const CubeSpec spec = DirectReadSpec({test::kA, test::kW, test::kS, test::kB});
  const std::string path = dir.File("cut.fits");
  WriteCube(path, spec);
  CubeReader reader(path);
  ASSERT_TRUE(reader.reads_data_directly());
  ASSERT_EQ(::truncate(path.c_str(), 2880 * 4), 0);
  RawCubeTile raw;
  try {
    reader.ReadRowsRaw(0, reader.info().ny, raw);
    FAIL() << "no error";
  } catch (const FitsError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find(path), std::string::npos) << m;
    EXPECT_NE(m.find("HDU 0"), std::string::npos) << m;
    EXPECT_NE(m.find("cannot read rows 1..6 of the data unit"), std::string::npos) << m;
    EXPECT_NE(m.find("truncated"), std::string::npos) << m;
  }
}
}  // namespace
}  // namespace zeeline
