// Tests of io/field_map_writer: layout read back by cfitsio (ReadImageHdus / CubeReader) and by astropy
// (tests/io/astropy_compare.py), FITS conformance by fitsverify (HEASARC, Debian package), overwrite
// refusal and atomic writes.
#include "zeeline/io/field_map_writer.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <limits>

#include "io_test_util.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/quality_flags.hpp"

namespace zeeline {
namespace {

using test::CubeSpec;
using test::TempDir;

// fitsverify -q prints "verification OK" only with 0 warnings and 0 errors (fitsverify usage text).
void ExpectFitsverifyClean(const std::string& path) {
  std::string out;
  const int rc = test::RunCommand("/usr/bin/fitsverify -q " + test::ShellQuote(path), &out);
  EXPECT_EQ(rc, 0) << out;
  EXPECT_NE(out.find("verification OK"), std::string::npos) << out;
  EXPECT_EQ(out.find("warning"), std::string::npos) << out;
  if (rc != 0) {  // show the full report
    test::RunCommand("/usr/bin/fitsverify " + test::ShellQuote(path), &out);
    ADD_FAILURE() << out;
  }
}

std::vector<ImageHdu> SampleMaps(long nx, long ny) {
  std::vector<ImageHdu> maps;
  auto ramp = [&](double scale, double offset) {
    std::vector<double> v(static_cast<std::size_t>(nx * ny));
    for (long i = 0; i < nx * ny; ++i) v[static_cast<std::size_t>(i)] = offset + scale * static_cast<double>(i);
    return v;
  };
  maps.push_back(MakeMap(map_names::kField, nx, ny, ramp(12.5, 100.0)));
  maps.push_back(MakeMap("B_TOTAL_SIGMA", nx, ny, ramp(0.5, 3.0)));
  maps.push_back(MakeMap(map_names::kInclination, nx, ny, ramp(1.0, 10.0)));
  maps.push_back(MakeMap(map_names::kAzimuth, nx, ny, ramp(2.0, 0.0)));
  auto blos = ramp(-25.0, 40.0);
  blos[1] = std::numeric_limits<double>::quiet_NaN();  // undefined pixel survives as NaN
  maps.push_back(MakeMap(map_names::kBlos, nx, ny, blos));
  maps.push_back(MakeMap(map_names::kVlos, nx, ny, ramp(0.125, -0.5)));
  std::vector<double> q(static_cast<std::size_t>(nx * ny), 0.0);
  q[1] = kQualityNonFiniteInput | kQualityLowSignal;
  maps.push_back(MakeMap(map_names::kQuality, nx, ny, q));
  return maps;
}

FitsWriteOptions SampleOptions() {
  FitsWriteOptions o;
  o.provenance.method = "wfa";
  o.provenance.line = "Fe I 630.2494 nm (air), g_eff = 2.5";
  o.provenance.input = "/data/scenario/with a rather long directory name/that needs/more than sixty-eight/characters/cube.fits";
  o.provenance.command_line = "zeeline maps cube.fits --method wfa --line 630.2494nm -o maps.fits --overwrite";
  o.provenance.history = {"scenario: synthetic bipolar region, test only"};
  o.provenance.keywords = {{"ZLGEFF", 2.5, "effective Lande factor"}, {"ZLNPIX", 12LL, "pixels"}};
  return o;
}

TEST(FieldMapWriter, StandardUnitsFollowTheConventions) {
  EXPECT_EQ(StandardMapUnit("B_TOTAL"), "G");
  EXPECT_EQ(StandardMapUnit("B_LOS_SIGMA"), "G");
  EXPECT_EQ(StandardMapUnit("B_AZIM"), "deg");
  EXPECT_EQ(StandardMapUnit("V_LOS"), "km/s");
  EXPECT_EQ(StandardMapUnit("QUALITY"), "");
}

TEST(FieldMapWriter, RoundTripKeepsNamesUnitsValuesAndSpatialWcs) {
  TempDir dir;
  CubeSpec spec;
  spec.order = {test::kW, test::kB, test::kS, test::kA};  // spatial axes are FITS axes 2 and 4
  const std::string cube = dir.File("cube.fits");
  test::WriteCube(cube, spec);
  const CubeInfo info = ReadCubeInfo(cube);
  const std::string maps_path = dir.File("maps.fits");
  const auto maps = SampleMaps(info.nx, info.ny);
  WriteFieldMaps(maps_path, maps, info.spatial_wcs_header, SampleOptions());

  const auto back = ReadImageHdus(maps_path);
  ASSERT_EQ(back.size(), maps.size());
  for (std::size_t i = 0; i < maps.size(); ++i) {
    EXPECT_EQ(back[i].extname, maps[i].extname);
    EXPECT_EQ(back[i].bunit, maps[i].bunit);
    EXPECT_EQ(back[i].naxes, maps[i].naxes);
    EXPECT_EQ(back[i].wcs_header, info.spatial_wcs_header) << maps[i].extname;
    for (std::size_t k = 0; k < maps[i].values.size(); ++k) {
      if (std::isnan(maps[i].values[k])) {
        EXPECT_TRUE(std::isnan(back[i].values[k]));
      } else {
        EXPECT_EQ(back[i].values[k], maps[i].values[k]) << maps[i].extname << " " << k;  // exact in float32
      }
    }
  }
  EXPECT_EQ(back.back().type, FitsPixelType::kInt32);
  EXPECT_EQ(static_cast<std::uint32_t>(back.back().values[1]), kQualityNonFiniteInput | kQualityLowSignal);
  ExpectFitsverifyClean(maps_path);
}

TEST(FieldMapWriter, StokesCubeRoundTripsThroughTheReaderAndPassesFitsverify) {
  TempDir dir;
  const long nx = 4, ny = 3;
  StokesCubeData data;
  data.nx = nx;
  data.ny = ny;
  data.stokes = {StokesParameter::kI, StokesParameter::kV};
  std::vector<double> grid;
  for (int k = 0; k < 6; ++k) grid.push_back(630.10 + 0.002 * k);
  const long nw = static_cast<long>(grid.size());
  data.values.resize(static_cast<std::size_t>(nx * ny * 2 * nw));
  for (std::size_t i = 0; i < data.values.size(); ++i) data.values[i] = static_cast<float>(i) * 0.5f - 3.0f;
  const std::string wcs = MakeHelioprojectiveWcs(nx, ny, 0.16, 100.0, -200.0);
  std::vector<ImageHdu> truth = {MakeMap("B_TOTAL", nx, ny, std::vector<double>(nx * ny, 1500.0))};
  const std::string path = dir.File("synth.fits");
  WriteStokesCube(path, data, grid, WavelengthFrame::kAir, wcs, truth, SampleOptions());
  ExpectFitsverifyClean(path);

  CubeReader reader(path);
  const CubeInfo& info = reader.info();
  EXPECT_EQ(info.nx, nx);
  EXPECT_EQ(info.ny, ny);
  EXPECT_EQ(info.file_frame, WavelengthFrame::kAir);
  EXPECT_EQ(info.spatial_wcs_header, wcs);
  ASSERT_EQ(info.n_wavelength(), nw);
  for (long k = 0; k < nw; ++k) EXPECT_NEAR(info.wavelength_nm[k], grid[k], 1e-12);
  ASSERT_EQ(info.stokes, data.stokes);
  CubeTileF tile;
  reader.ReadRows(0, ny, tile);
  EXPECT_EQ(tile.data, data.values);  // identical layout [pixel][stokes][wavelength]

  const auto extras = ReadImageHdus(path);
  ASSERT_EQ(extras.size(), 1u);
  EXPECT_EQ(extras[0].extname, "B_TOTAL");
  EXPECT_EQ(extras[0].wcs_header, wcs);
}

TEST(FieldMapWriter, AstropyReadsTheSameNamesUnitsAndWorldCoordinates) {
  TempDir dir;
  CubeSpec spec;
  spec.order = {test::kS, test::kB, test::kW, test::kA};
  spec.na = 7;
  spec.nb = 5;
  spec.bitpix = -64;
  const std::string cube = dir.File("cube.fits");
  test::WriteCube(cube, spec);
  CubeReader reader(cube);
  const CubeInfo& info = reader.info();
  const auto maps = SampleMaps(info.nx, info.ny);
  const std::string maps_path = dir.File("maps.fits");
  WriteFieldMaps(maps_path, maps, info.spatial_wcs_header, SampleOptions());

  // Re-write the cube through the Stokes-cube writer.
  StokesCubeData data;
  data.nx = info.nx;
  data.ny = info.ny;
  data.stokes = info.stokes;
  CubeTileF tile;
  reader.ReadRows(0, info.ny, tile);
  data.values = tile.data;
  const std::string stokes_path = dir.File("stokes.fits");
  WriteStokesCube(stokes_path, data, info.wavelength_nm, info.frame, info.spatial_wcs_header,
                  {MakeMap("B_LOS", info.nx, info.ny, std::vector<double>(info.nx * info.ny, 5.0))}, {});

  std::string names;
  for (const auto& m : maps) names += (names.empty() ? "" : ",") + m.extname + ":" + m.bunit;
  std::string out;
  const int rc = test::RunCommand(std::string(ZEELINE_PYTHON) + " " + ZEELINE_SOURCE_DIR + "/tests/io/astropy_compare.py " +
                                      test::ShellQuote(cube) + " " + test::ShellQuote(maps_path) + " " +
                                      test::ShellQuote(stokes_path) + " " + test::ShellQuote(names),
                                  &out);
  EXPECT_EQ(rc, 0) << out;
}

TEST(FieldMapWriter, RefusesToOverwriteUnlessAskedAndLeavesNoTemporaryFiles) {
  TempDir dir;
  const std::string path = dir.File("maps.fits");
  const auto maps = SampleMaps(3, 2);
  WriteFieldMaps(path, maps, "", {});
  const auto size_before = std::filesystem::file_size(path);
  try {
    WriteFieldMaps(path, {MakeMap("B_TOTAL", 1, 1, {1.0})}, "", {});
    FAIL() << "overwrote silently";
  } catch (const FitsError& e) {
    EXPECT_NE(std::string(e.what()).find(path), std::string::npos);
    EXPECT_NE(std::string(e.what()).find("already exists"), std::string::npos);
  }
  EXPECT_EQ(std::filesystem::file_size(path), size_before);
  FitsWriteOptions o;
  o.overwrite = true;
  WriteFieldMaps(path, {MakeMap("B_TOTAL", 1, 1, {1.0})}, "", o);
  EXPECT_EQ(ReadImageHdus(path).size(), 1u);
  int files = 0;
  for (const auto& e : std::filesystem::directory_iterator(dir.path())) {
    (void)e;
    ++files;
  }
  EXPECT_EQ(files, 1);  // no leftover temporary file
}

// A float32 payload (ImageHdu::values_f32, how `map` writes large maps without a double copy) reads back
// the same samples, NaN included, as float32 data; it is refused with a double payload or an integer type.
TEST(FieldMapWriter, Float32PayloadRoundTripsAndIsRefusedWhereItCannotApply) {
  TempDir dir;
  const std::string path = dir.File("maps.fits");
  ImageHdu h = MakeMap("B_LOS", 3, 2, {});
  h.values_f32 = {1.5f, -2.25f, std::numeric_limits<float>::quiet_NaN(), 3.0e-7f, 1234.5f, -0.0f};
  WriteFieldMaps(path, {h}, "", {});
  const auto back = ReadImageHdus(path);
  ASSERT_EQ(back.size(), 1u);
  EXPECT_EQ(back[0].type, FitsPixelType::kFloat32);
  ASSERT_EQ(back[0].values.size(), h.values_f32.size());
  for (std::size_t k = 0; k < h.values_f32.size(); ++k) {
    if (std::isnan(h.values_f32[k])) EXPECT_TRUE(std::isnan(back[0].values[k]));
    else EXPECT_EQ(back[0].values[k], static_cast<double>(h.values_f32[k])) << k;
  }
  ExpectFitsverifyClean(path);
  const std::string bad = dir.File("bad.fits");
  ImageHdu both = h;
  both.values.assign(6, 0.0);
  EXPECT_THROW(WriteFieldMaps(bad, {both}, "", {}), FitsError);
  ImageHdu integer = h;
  integer.type = FitsPixelType::kInt16;
  EXPECT_THROW(WriteFieldMaps(bad, {integer}, "", {}), FitsError);
  ImageHdu short_payload = h;
  short_payload.values_f32.pop_back();
  EXPECT_THROW(WriteFieldMaps(bad, {short_payload}, "", {}), FitsError);
  EXPECT_FALSE(std::filesystem::exists(bad));
}

TEST(FieldMapWriter, BadMapsAreRejectedBeforeAnyFileIsCreated) {
  TempDir dir;
  const std::string path = dir.File("maps.fits");
  ImageHdu wrong = MakeMap("B_TOTAL", 3, 3, std::vector<double>(8, 0.0));
  EXPECT_THROW(WriteFieldMaps(path, {wrong}, "", {}), FitsError);
  ImageHdu lower = MakeMap("field", 1, 1, {0.0});
  EXPECT_THROW(WriteFieldMaps(path, {lower}, "", {}), FitsError);
  EXPECT_THROW(WriteFieldMaps(path, {MakeMap("B_LOS", 1, 1, {0.0}), MakeMap("B_LOS", 1, 1, {0.0})}, "", {}), FitsError);
  ImageHdu q = MakeMap("QUALITY", 1, 1, {0.5});  // not an integer: fails while writing
  EXPECT_THROW(WriteFieldMaps(path, {q}, "", {}), FitsError);
  EXPECT_FALSE(std::filesystem::exists(path));
  EXPECT_TRUE(std::filesystem::is_empty(dir.path()));  // the failed write left no temporary file
  StokesCubeData d;
  d.nx = d.ny = 1;
  d.stokes = {StokesParameter::kI, StokesParameter::kQ, StokesParameter::kV};  // not arithmetic
  d.values.assign(3 * 2, 0.0f);
  EXPECT_THROW(WriteStokesCube(path, d, {630.0, 630.01}, WavelengthFrame::kAir, "", {}, {}), FitsError);
  d.stokes = {StokesParameter::kI, StokesParameter::kQ};
  d.values.assign(2 * 3, 0.0f);
  EXPECT_THROW(WriteStokesCube(path, d, {630.0, 630.01, 630.03}, WavelengthFrame::kAir, "", {}, {}), FitsError);
  EXPECT_FALSE(std::filesystem::exists(path));
}

// ---- FieldMapFileStream: the map file written row block by row block (zeeline map) ----------------------

std::string FileBytesWithoutDate(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::string bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  for (std::size_t at = 0; at + 80 <= bytes.size(); at += 80)  // header cards are 80 bytes on 80-byte bounds
    if (bytes.compare(at, 9, "DATE    =") == 0) bytes.replace(at, 80, 80, ' ');
  return bytes;
}

// Layout (no values) + the rows of each image, written in a scrambled row order.
struct StreamSample {
  long nx = 5, ny = 7;
  std::vector<ImageHdu> layout;
  std::vector<std::vector<float>> floats;  // per float image
  std::vector<std::int16_t> method;
  std::vector<std::int32_t> quality;
  StreamSample() {
    const std::size_t np = static_cast<std::size_t>(nx * ny);
    for (const char* name : {"B_TOTAL", "B_LOS", "CHI2"}) {
      layout.push_back(MakeMap(name, nx, ny, {}));
      floats.emplace_back(np);
      for (std::size_t i = 0; i < np; ++i) floats.back()[i] = 0.25f * static_cast<float>(i) - 3.0f * floats.size();
    }
    floats[1][3] = std::numeric_limits<float>::quiet_NaN();
    ImageHdu m = MakeMap("METHOD", nx, ny, {});
    m.type = FitsPixelType::kInt16;
    m.keywords.push_back({"METH1", std::string("wfa"), "weak-field approximation"});
    layout.push_back(m);
    ImageHdu q = MakeMap("QUALITY", nx, ny, {});
    q.type = FitsPixelType::kInt32;
    layout.push_back(q);
    for (std::size_t i = 0; i < np; ++i) {
      method.push_back(static_cast<std::int16_t>(i % 5));
      quality.push_back(static_cast<std::int32_t>(i * 4097u));
    }
  }
  // The same maps whole, as WriteFieldMaps takes them (CHI2 left out: kept = false below).
  std::vector<ImageHdu> Whole() const {
    std::vector<ImageHdu> out;
    for (std::size_t k = 0; k < 2; ++k) {
      out.push_back(layout[k]);
      out.back().values.assign(floats[k].begin(), floats[k].end());
    }
    out.push_back(layout[3]);
    out.back().values.assign(method.begin(), method.end());
    out.push_back(layout[4]);
    out.back().values.assign(quality.begin(), quality.end());
    return out;
  }
  void WriteRows(FieldMapFileStream& s, long first, long rows) const {
    const std::size_t at = static_cast<std::size_t>(first * nx);
    for (std::size_t k = 0; k < 3; ++k) s.WriteRows(k, first, rows, floats[k].data() + at);
    s.WriteRows(3, first, rows, method.data() + at);
    s.WriteRows(4, first, rows, quality.data() + at);
  }
};

// The reference is WriteFieldMaps, whose files the tests above read back with cfitsio and astropy and pass
// through fitsverify: the streamed file is the same file, byte for byte (DATE aside), and passes fitsverify.
TEST(FieldMapFileStream, RowsWrittenInAnyOrderGiveTheFileWriteFieldMapsWrites) {
  TempDir dir;
  const StreamSample s;
  const std::string ref = dir.File("ref.fits"), path = dir.File("maps.fits");
  const std::string wcs = MakeHelioprojectiveWcs(s.nx, s.ny, 0.5, 10.0, -20.0);
  WriteFieldMaps(ref, s.Whole(), wcs, SampleOptions());
  {
    FieldMapFileStream stream(path, s.layout, wcs, SampleOptions());
    s.WriteRows(stream, 4, 3);
    s.WriteRows(stream, 0, 1);
    EXPECT_FALSE(std::filesystem::exists(path));  // nothing under the name before Commit
    s.WriteRows(stream, 1, 3);
    std::vector<float> back(static_cast<std::size_t>(2 * s.nx));
    stream.ReadRows(1, 4, 2, back.data());
    EXPECT_EQ(back[0], s.floats[1][static_cast<std::size_t>(4 * s.nx)]);
    stream.Commit({true, true, false, true, true});
  }
  EXPECT_EQ(FileBytesWithoutDate(path), FileBytesWithoutDate(ref));
  ExpectFitsverifyClean(path);
  int files = 0;
  for (const auto& e : std::filesystem::directory_iterator(dir.path())) files += e.is_regular_file();
  EXPECT_EQ(files, 2);  // no temporary file left
}

// Without Commit a temporary working file disappears; a chosen one (--resume) stays, and reopened it
// continues: the rows written before are read back, the missing ones added, and the primary header gets the
// provenance of the run that commits.
TEST(FieldMapFileStream, AWorkingFileIsRemovedOrKeptAndAKeptOneContinues) {
  TempDir dir;
  const StreamSample s;
  const std::string path = dir.File("maps.fits"), partial = dir.File("maps.fits.partial");
  {
    FieldMapFileStream stream(path, s.layout, "", SampleOptions());
    s.WriteRows(stream, 0, 2);
  }
  EXPECT_TRUE(std::filesystem::is_empty(dir.path()));
  {
    FitsWriteOptions first = SampleOptions();
    first.provenance.command_line = "first run";
    FieldMapFileStream stream(path, s.layout, "", first, partial);
    s.WriteRows(stream, 0, 4);
    stream.Flush();
  }
  ASSERT_TRUE(std::filesystem::exists(partial));
  EXPECT_FALSE(std::filesystem::exists(path));
  FitsWriteOptions second = SampleOptions();
  second.provenance.command_line = "second run";
  {
    FieldMapFileStream stream(path, s.layout, "", second, partial, true);
    std::vector<float> back(static_cast<std::size_t>(4 * s.nx));
    stream.ReadRows(0, 0, 4, back.data());
    for (std::size_t i = 0; i < back.size(); ++i) EXPECT_EQ(back[i], s.floats[0][i]) << i;
    s.WriteRows(stream, 4, 3);
    stream.Commit({true, true, false, true, true});
  }
  EXPECT_FALSE(std::filesystem::exists(partial));
  const std::string ref = dir.File("ref.fits");
  WriteFieldMaps(ref, s.Whole(), "", second);
  EXPECT_EQ(FileBytesWithoutDate(path), FileBytesWithoutDate(ref));
  ExpectFitsverifyClean(path);
  // A partial file that does not hold this layout is refused, naming it.
  {
    FieldMapFileStream stream(path + "2", s.layout, "", second, partial);
  }
  std::vector<ImageHdu> other = s.layout;
  other.pop_back();
  try {
    FieldMapFileStream stream(path + "2", other, "", second, partial, true);
    FAIL() << "a partial file with other HDUs was reopened";
  } catch (const FitsError& e) {
    EXPECT_NE(std::string(e.what()).find("HDUs"), std::string::npos) << e.what();
  }
  // An existing output is not replaced without overwrite.
  EXPECT_THROW(FieldMapFileStream(path, s.layout, "", second), FitsError);
}

}  // namespace
}  // namespace zeeline
