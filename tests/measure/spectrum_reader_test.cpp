// Tests of measure/spectrum_reader: tables and FITS spectra, and their error messages.
#include "zeeline/measure/spectrum_reader.hpp"

#include <fitsio.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "measure/measure_test_util.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/measure/measurement.hpp"

namespace zeeline {
namespace {

// The message of the SpectrumError thrown by parsing `text`, or "" when nothing was thrown.
std::string ErrorOf(const std::string& text) {
  try {
    ParseSpectrumTable(text, "t.txt");
  } catch (const SpectrumError& e) {
    return e.what();
  }
  return "";
}

std::string Rows(int n, int first_line_value = 0) {
  std::string s;
  for (int i = 0; i < n; ++i)
    s += std::to_string(630.0 + 0.001 * (i + first_line_value)) + " " + std::to_string(1.0 - 0.01 * i) + "\n";
  return s;
}

TEST(SpectrumTable, HeaderNamesColumnsInAnyOrderWithWavelengthUnit) {
  std::string t = "# a sunspot umbra, one slit position\nV, I, wavelength_A, Q, U\n";
  for (int i = 0; i < 10; ++i)
    t += std::to_string(0.01 * i) + ", " + std::to_string(1.0 - 0.01 * i) + ", " + std::to_string(6300.0 + 0.1 * i) +
         ", 0.5, -0.5  # comment\n";
  const Spectrum1D s = ParseSpectrumTable(t, "t.txt");
  ASSERT_EQ(s.size(), 10u);
  EXPECT_DOUBLE_EQ(s.wavelength_nm[3], 630.03);
  EXPECT_DOUBLE_EQ(s.I[3], 0.97);
  EXPECT_DOUBLE_EQ(s.V[3], 0.03);
  EXPECT_TRUE(s.has_qu());
  EXPECT_FALSE(s.frame.has_value());
}

// A UTF-8 byte-order mark (EF BB BF, RFC 3629 sect. 6) before the header is skipped, not read as part of
// the first column name.
TEST(SpectrumTable, Utf8ByteOrderMarkBeforeTheHeaderIsSkipped) {
  std::string t = "\xEF\xBB\xBFwavelength_nm,I,V\n";
  for (int i = 0; i < 10; ++i) t += std::to_string(630.0 + 0.001 * i) + "," + std::to_string(1.0 - 0.01 * i) + ",0.001\n";
  const Spectrum1D s = ParseSpectrumTable(t, "bom.csv");
  ASSERT_EQ(s.size(), 10u);
  EXPECT_DOUBLE_EQ(s.I[2], 0.98);
  EXPECT_TRUE(s.has_v());
}

TEST(SpectrumTable, WithoutHeaderTwoColumnsAreWavelengthAndI) {
  const Spectrum1D s = ParseSpectrumTable(Rows(9), "t.txt");
  EXPECT_EQ(s.size(), 9u);
  EXPECT_FALSE(s.has_v());
  EXPECT_FALSE(s.has_qu());
}

TEST(SpectrumTable, NonNumericCellNamesLineAndColumn) {
  std::string t = "wavelength_nm I V\n";
  for (int i = 0; i < 4; ++i) t += std::to_string(630.0 + 0.001 * i) + " 1.0 0.0\n";
  const std::string e = ErrorOf(t + "630.9 0.5 abc\n");
  EXPECT_NE(e.find("t.txt line 6, column 3 (V)"), std::string::npos) << e;
  EXPECT_NE(e.find("'abc'"), std::string::npos) << e;
}

TEST(SpectrumTable, UnsortedWavelengthNamesLineAndColumn) {
  const std::string e = ErrorOf(Rows(5) + "629.5 0.9\n" + Rows(4, 10));
  EXPECT_NE(e.find("line 6, column 1 (wavelength_nm)"), std::string::npos) << e;
  EXPECT_NE(e.find("sorted"), std::string::npos) << e;
}

TEST(SpectrumTable, DuplicateWavelengthNamesBothLines) {
  const std::string e = ErrorOf(Rows(5) + "630.004 0.9\n" + Rows(4, 10));
  EXPECT_NE(e.find("line 6, column 1"), std::string::npos) << e;
  EXPECT_NE(e.find("duplicate"), std::string::npos) << e;
  EXPECT_NE(e.find("line 5"), std::string::npos) << e;
}

TEST(SpectrumTable, MissingColumnNamesTheLineAndTheColumn) {
  const std::string e = ErrorOf("wavelength_nm,I,Q,U,V\n630.0,1,0,0,0\n630.1,1,0,0\n");
  EXPECT_NE(e.find("line 3"), std::string::npos) << e;
  EXPECT_NE(e.find("column 5 (V) is missing"), std::string::npos) << e;
}

TEST(SpectrumTable, HeaderProblemsAreNamed) {
  EXPECT_NE(ErrorOf("wavelength_nm Q U V\n").find("no column named I"), std::string::npos);
  EXPECT_NE(ErrorOf("wavelength_furlong I\n").find("unknown wavelength unit 'furlong'"), std::string::npos);
  EXPECT_NE(ErrorOf("wavelength_nm I Q\n").find("Q and U must come together"), std::string::npos);
  EXPECT_NE(ErrorOf("wavelength_nm I X\n").find("column 3: unknown column name 'X'"), std::string::npos);
  EXPECT_NE(ErrorOf("630 1 2 3\n").find("4 columns without a header"), std::string::npos);
  EXPECT_NE(ErrorOf(Rows(3)).find("at least 8"), std::string::npos);
  EXPECT_NE(ErrorOf(Rows(4) + "630.5 nan\n" + Rows(4, 10)).find("line 5, column 2 (I)"), std::string::npos);
}

TEST(SpectrumFile, MissingFileIsAnError) {
  EXPECT_THROW(ReadSpectrum("/nonexistent/spectrum.txt"), SpectrumError);
}

// ---- FITS ----------------------------------------------------------------------------------------------

class TempDir {
 public:
  TempDir() {
    path_ = std::filesystem::temp_directory_path() / ("zeeline_measure_" + std::to_string(getpid()));
    std::filesystem::create_directories(path_);
  }
  ~TempDir() { std::filesystem::remove_all(path_); }
  std::string File(const std::string& name) const { return (path_ / name).string(); }

 private:
  std::filesystem::path path_;
};

// Writes a 2-D (wavelength x STOKES) FITS image with cfitsio (not the code under test).
void WriteStokesFits(const std::string& path, const Spectrum1D& s, const char* ctype1 = "AWAV",
                     const char* cunit1 = "nm") {
  fitsfile* f = nullptr;
  int status = 0;
  fits_create_file(&f, ("!" + path).c_str(), &status);
  long naxes[2] = {static_cast<long>(s.size()), 4};
  fits_create_img(f, DOUBLE_IMG, 2, naxes, &status);
  double crval = s.wavelength_nm[0], cdelt = s.wavelength_nm[1] - s.wavelength_nm[0], crpix = 1.0, one = 1.0;
  fits_update_key(f, TSTRING, "CTYPE1", const_cast<char*>(ctype1), nullptr, &status);
  if (cunit1) fits_update_key(f, TSTRING, "CUNIT1", const_cast<char*>(cunit1), nullptr, &status);
  fits_update_key(f, TDOUBLE, "CRVAL1", &crval, nullptr, &status);
  fits_update_key(f, TDOUBLE, "CDELT1", &cdelt, nullptr, &status);
  fits_update_key(f, TDOUBLE, "CRPIX1", &crpix, nullptr, &status);
  fits_update_key(f, TSTRING, "CTYPE2", const_cast<char*>("STOKES"), nullptr, &status);
  fits_update_key(f, TDOUBLE, "CRVAL2", &one, nullptr, &status);
  fits_update_key(f, TDOUBLE, "CDELT2", &one, nullptr, &status);
  fits_update_key(f, TDOUBLE, "CRPIX2", &one, nullptr, &status);
  std::vector<double> data;
  for (const auto* v : {&s.I, &s.Q, &s.U, &s.V}) data.insert(data.end(), v->begin(), v->end());
  fits_write_img(f, TDOUBLE, 1, static_cast<LONGLONG>(data.size()), data.data(), &status);
  fits_close_file(f, &status);
  ASSERT_EQ(status, 0);
}

std::string FitsErrorOf(const std::string& path) {
  try {
    ReadSpectrum(path);
  } catch (const SpectrumError& e) {
    return e.what();
  }
  return "";
}

TEST(SpectrumFits, TableAndFitsOfTheSameSpectrumGiveTheSameMeasurement) {
  TempDir dir;
  testing::LampLine t;
  t.inclination_deg = 60.0;
  t.noise = 3.0;
  const ZeemanPattern p = ComputeZeemanPattern(2, 1.0, 4, 1.0);
  Spectrum1D s = testing::MakeLampSpectrum(t, p, 0.06, 241);
  // Put the grid exactly on CRVAL1 + k CDELT1 so that both files describe the same wavelengths.
  const double step = s.wavelength_nm[1] - s.wavelength_nm[0];
  for (std::size_t k = 0; k < s.size(); ++k) s.wavelength_nm[k] = s.wavelength_nm[0] + static_cast<double>(k) * step;
  const std::string table = dir.File("lamp.txt"), fits = dir.File("lamp.fits");
  {
    std::ofstream out(table);
    out << "# wavelength_nm I Q U V\nwavelength_nm I Q U V\n";
    char buf[200];
    for (std::size_t k = 0; k < s.size(); ++k) {
      std::snprintf(buf, sizeof buf, "%.17g %.17g %.17g %.17g %.17g\n", s.wavelength_nm[k], s.I[k], s.Q[k], s.U[k], s.V[k]);
      out << buf;
    }
  }
  WriteStokesFits(fits, s);
  const Spectrum1D a = ReadSpectrum(table), b = ReadSpectrum(fits);
  ASSERT_EQ(a.size(), b.size());
  ASSERT_TRUE(b.frame.has_value());
  EXPECT_EQ(*b.frame, WavelengthFrame::kAir);
  for (std::size_t k = 0; k < a.size(); ++k) {
    EXPECT_NEAR(a.wavelength_nm[k], b.wavelength_nm[k], 1e-12 * a.wavelength_nm[k]);
    EXPECT_EQ(a.I[k], b.I[k]);
    EXPECT_EQ(a.V[k], b.V[k]);
  }
  MeasureOptions o;
  o.rest_wavelength_nm = t.rest_nm;
  o.pattern = p;
  o.instrument_fwhm_nm = t.instrument_fwhm_nm;
  o.realisations = 20;
  const Measurement ma = MeasureSpectrum(a, o), mb = MeasureSpectrum(b, o);
  EXPECT_NEAR(ma.components.field_gauss, mb.components.field_gauss, 1e-6 * ma.components.field_gauss);
  EXPECT_NEAR(ma.cog.blos_gauss.value, mb.cog.blos_gauss.value, 1e-6 * std::fabs(ma.cog.blos_gauss.value));
  EXPECT_NEAR(ma.characteristics.zero_crossing_nm.value, mb.characteristics.zero_crossing_nm.value, 1e-9);
  EXPECT_EQ(ma.split.valid, mb.split.valid);
}

TEST(SpectrumFits, MissingCunitAndWrongCtypeNameTheKeyword) {
  TempDir dir;
  Spectrum1D s;
  for (int k = 0; k < 10; ++k) {
    s.wavelength_nm.push_back(630.0 + 0.001 * k);
    s.I.push_back(1.0);
    s.Q.push_back(0.0);
    s.U.push_back(0.0);
    s.V.push_back(0.0);
  }
  WriteStokesFits(dir.File("a.fits"), s, "AWAV", nullptr);
  std::string e = FitsErrorOf(dir.File("a.fits"));
  EXPECT_NE(e.find("HDU 0"), std::string::npos) << e;
  EXPECT_NE(e.find("CUNIT1 missing"), std::string::npos) << e;
  WriteStokesFits(dir.File("b.fits"), s, "FREQ", "Hz");
  e = FitsErrorOf(dir.File("b.fits"));
  EXPECT_NE(e.find("CTYPE1 = 'FREQ'"), std::string::npos) << e;
}

TEST(SpectrumFits, AngstromUnitsAndVacuumAreRead) {
  TempDir dir;
  Spectrum1D s;
  for (int k = 0; k < 10; ++k) {
    s.wavelength_nm.push_back(6300.0 + 0.01 * k);  // written in Angstrom
    for (auto* v : {&s.I, &s.Q, &s.U, &s.V}) v->push_back(1.0);
  }
  WriteStokesFits(dir.File("c.fits"), s, "WAVE", "Angstrom");
  const Spectrum1D r = ReadSpectrum(dir.File("c.fits"));
  EXPECT_NEAR(r.wavelength_nm[5], 630.005, 1e-9);
  EXPECT_EQ(*r.frame, WavelengthFrame::kVacuum);
}

}  // namespace
}  // namespace zeeline
