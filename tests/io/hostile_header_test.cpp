// Header cards that break the FITS Standard 4.0 (sect. 4.1.2.1: header text is ASCII 0x20-0x7E; sect. 4.2.1:
// a string value is closed by a quote). An unterminated string made wcslib 7.12's header parser overrun a buffer
// and abort the program (found by tests/fuzz/fuzz_fits_header; reproducer in
// tests/fuzz/regressions/fuzz_fits_header/). The cube and spectrum readers now refuse such headers by card.
// Also here: other header values the fuzzer found that the readers mishandled.
#include <fitsio.h>
#include <gtest/gtest.h>

#include <fstream>
#include <iterator>
#include <string>

#include "io_test_util.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline {
namespace {

// Replaces the 80-character card that starts with `key` by `card` (blank-padded to 80).
void PatchCard(const std::string& path, const std::string& key, std::string card) {
  std::ifstream in(path, std::ios::binary);
  std::string bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  in.close();
  std::size_t at = std::string::npos;
  for (std::size_t i = 0; i + 80 <= 2880 * 4 && i + 80 <= bytes.size(); i += 80)
    if (bytes.compare(i, key.size(), key) == 0) {
      at = i;
      break;
    }
  ASSERT_NE(at, std::string::npos) << key;
  card.resize(80, ' ');
  bytes.replace(at, 80, card);
  std::ofstream(path, std::ios::binary | std::ios::trunc) << bytes;
}

// A valid cube (test::CubeSpec) written into `dir`, to be patched.
std::string WrittenCube(const test::TempDir& dir, const test::CubeSpec& spec = {}) {
  const std::string path = dir.File("cube.fits");
  test::WriteCube(path, spec);
  return path;
}

std::string CubeError(const std::string& path) {
  try {
    CubeReader r(path);
  } catch (const FitsError& e) {
    return e.what();
  }
  return "";
}

TEST(HostileHeader, UnterminatedStringValueIsRefusedByName) {
  test::TempDir dir;
  const std::string path = WrittenCube(dir);
  PatchCard(path, "CUNIT1  =", "CUNIT1  = '" + std::string(69, ' '));  // the reproducer's shape
  const std::string m = CubeError(path);
  EXPECT_NE(m.find("cube.fits"), std::string::npos) << m;
  EXPECT_NE(m.find("CUNIT1"), std::string::npos) << m;
  EXPECT_NE(m.find("closing quote"), std::string::npos) << m;
}

TEST(HostileHeader, QuoteInsideAStringIsNotItsEnd) {
  test::TempDir dir;
  const std::string path = WrittenCube(dir);
  PatchCard(path, "CTYPE1  =", "CTYPE1  = 'HPLN-TAN'");
  PatchCard(path, "CUNIT1  =", "CUNIT1  = 'arcsec' / the observer''s unit");
  EXPECT_EQ(CubeError(path), "");
  PatchCard(path, "CUNIT1  =", "CUNIT1  = 'arc''sec");  // '' inside, then no closing quote
  EXPECT_NE(CubeError(path).find("closing quote"), std::string::npos);
}

TEST(HostileHeader, ControlByteIsRefusedWithItsColumn) {
  test::TempDir dir;
  const std::string path = WrittenCube(dir);
  PatchCard(path, "CRVAL1  =", std::string("CRVAL1  =                ") + '\x01' + "20.0");
  const std::string m = CubeError(path);
  EXPECT_NE(m.find("CRVAL1"), std::string::npos) << m;
  EXPECT_NE(m.find("0x01 at column 26"), std::string::npos) << m;
}

TEST(HostileHeader, CommentaryCardsMayHoldAnyByte) {
  test::TempDir dir;
  const std::string path = dir.File("cube.fits");
  test::CubeSpec spec;
  spec.extra_cards = {"COMMENT written by a test"};
  test::WriteCube(path, spec);
  PatchCard(path, "COMMENT", std::string("COMMENT 20") + '\xb0' + "C");  // Latin-1 degree sign
  EXPECT_EQ(CubeError(path), "");
}

TEST(HostileHeader, HugeStokesCodeIsRefusedWithoutOverflow) {
  // Found by fuzz_fits_header under UBSan: a STOKES value of 4.757e14 was cast to int before its range check.
  test::TempDir dir;
  const std::string path = WrittenCube(dir);
  PatchCard(path, "CRVAL4  =", "CRVAL4  =          4.757010E+14");
  const std::string m = CubeError(path);
  EXPECT_NE(m.find("CRVAL4"), std::string::npos) << m;
  EXPECT_NE(m.find("outside 1..4"), std::string::npos) << m;
}

TEST(HostileHeader, RepeatedKeywordWithAnotherValueIsRefused) {
  // Found by fuzz_fits_header: a second NAXIS = 6302 was read by wcslib (cfitsio took the first), which then
  // set up 6302 axes and spent seconds in wcssub.
  test::TempDir dir;
  const std::string path = dir.File("cube.fits");
  test::CubeSpec spec;
  spec.extra_cards = {"DATE-OBS= '2026-06-01'", "DATE-OBS= '2026-06-01'", "OBSERVER= 'A'"};
  test::WriteCube(path, spec);
  EXPECT_EQ(CubeError(path), "");  // an identical repeat is harmless
  PatchCard(path, "OBSERVER=", "NAXIS   =                 6302");
  const std::string m = CubeError(path);
  EXPECT_NE(m.find("NAXIS"), std::string::npos) << m;
  EXPECT_NE(m.find("repeated with another value"), std::string::npos) << m;
}

TEST(HostileHeader, AxisNumbersAbove99AreIgnored) {
  test::TempDir dir;
  const std::string path = dir.File("cube.fits");
  test::CubeSpec spec;
  spec.extra_cards = {"CRPIX999=                  1.0"};  // wcspih alone would make 999 axes
  test::WriteCube(path, spec);
  EXPECT_EQ(CubeError(path), "");
}

TEST(HostileHeader, SpectrumReaderRefusesAnUnterminatedString) {
  test::TempDir dir;
  const std::string path = dir.File("spectrum.fits");
  {
    fitsfile* f = nullptr;
    int status = 0;
    long n = 16;
    fits_create_file(&f, path.c_str(), &status);
    fits_create_img(f, DOUBLE_IMG, 1, &n, &status);
    char ctype[] = "AWAV", cunit[] = "nm";
    fits_write_key(f, TSTRING, "CTYPE1", ctype, nullptr, &status);
    fits_write_key(f, TSTRING, "CUNIT1", cunit, nullptr, &status);
    fits_write_key_dbl(f, "CRPIX1", 1.0, -15, nullptr, &status);
    fits_write_key_dbl(f, "CRVAL1", 630.0, -15, nullptr, &status);
    fits_write_key_dbl(f, "CDELT1", 0.01, -15, nullptr, &status);
    std::vector<double> v(16, 1.0);
    fits_write_img(f, TDOUBLE, 1, n, v.data(), &status);
    fits_close_file(f, &status);
    ASSERT_EQ(status, 0);
  }
  EXPECT_NO_THROW(ReadSpectrumFits(path));
  PatchCard(path, "CUNIT1  =", "CUNIT1  = 'nm" + std::string(67, ' '));
  try {
    ReadSpectrumFits(path);
    FAIL() << "an unterminated string was accepted";
  } catch (const SpectrumError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("CUNIT1"), std::string::npos) << m;
    EXPECT_NE(m.find("closing quote"), std::string::npos) << m;
  }
}

TEST(HostileHeader, SpectrumWcsWithFewerAxesThanNaxisIsRefused) {
  // Found by fuzz_fits_header under ASan: a 2-axis spectrum whose NAXIS card wcslib cannot read (cfitsio can)
  // got a 1-axis WCS, and the reader looked at CTYPE2 past the end of wcslib's array.
  test::TempDir dir;
  const std::string path = dir.File("spectrum2.fits");
  {
    fitsfile* f = nullptr;
    int status = 0;
    long n[2] = {16, 4};
    fits_create_file(&f, path.c_str(), &status);
    fits_create_img(f, DOUBLE_IMG, 2, n, &status);
    char ctype[] = "AWAV", cunit[] = "nm";
    fits_write_key(f, TSTRING, "CTYPE1", ctype, nullptr, &status);
    fits_write_key(f, TSTRING, "CUNIT1", cunit, nullptr, &status);
    fits_write_key_dbl(f, "CRPIX1", 1.0, -15, nullptr, &status);
    fits_write_key_dbl(f, "CRVAL1", 630.0, -15, nullptr, &status);
    fits_write_key_dbl(f, "CDELT1", 0.01, -15, nullptr, &status);
    std::vector<double> v(64, 1.0);
    fits_write_img(f, TDOUBLE, 1, 64, v.data(), &status);
    fits_close_file(f, &status);
    ASSERT_EQ(status, 0);
  }
  PatchCard(path, "NAXIS   =", "NAXIS   /=                    2");  // the reproducer's card
  try {
    ReadSpectrumFits(path);
    FAIL() << "a 1-axis WCS was accepted for a 2-axis spectrum";
  } catch (const SpectrumError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("spectrum2.fits"), std::string::npos) << m;
    EXPECT_NE(m.find("NAXIS = 2"), std::string::npos) << m;
  }
}

}  // namespace
}  // namespace zeeline
