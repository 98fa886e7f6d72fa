// io_test_util.hpp -- helpers for the io tests: a temporary directory, and a cfitsio writer of small
// synthetic Stokes cubes in any axis order and BITPIX (written directly with cfitsio, independent of
// the zeeline writers under test).
#pragma once

#include <fitsio.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

namespace zeeline::test {

/// A fresh directory under $TMPDIR (or /tmp), removed with its contents at scope exit.
class TempDir {
 public:
  TempDir() {
    const char* base = std::getenv("TMPDIR");
    std::string templ = std::string(base && *base ? base : "/tmp") + "/zeeline_io_XXXXXX";
    std::vector<char> buf(templ.begin(), templ.end());
    buf.push_back('\0');
    if (!mkdtemp(buf.data())) throw std::runtime_error("mkdtemp failed");
    path_ = buf.data();
  }
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(path_, ec);
  }
  const std::string& path() const { return path_; }
  std::string File(const std::string& name) const { return path_ + "/" + name; }

 private:
  std::string path_;
};

/// Roles of the four generated axes.
enum Role { kA = 0, kB = 1, kW = 2, kS = 3 };  // spatial a, spatial b, wavelength, Stokes

struct CubeSpec {
  // Which role each FITS axis carries (order[0] -> NAXIS1).
  std::array<Role, 4> order = {kA, kB, kW, kS};
  long na = 3, nb = 4, nw = 5;
  std::vector<int> stokes = {1, 2, 3, 4};  // STOKES codes in pixel order (CRVAL + CDELT*(p-1))
  int bitpix = -32;
  double bscale = 1.0, bzero = 0.0;  // written as BSCALE/BZERO when not (1, 0)
  std::string spectral_ctype = "AWAV";
  std::string spectral_cunit = "Angstrom";
  double spectral_crval = 6302.0, spectral_cdelt = 0.01, spectral_crpix = 1.0;
  bool write_stokes_ctype = true;
  bool write_spectral_ctype = true;
  double stokes_cdelt = 1.0;  // used when stokes codes are not given explicitly
  // Physical value at (a, b, stokes pixel s, spectral pixel w); default encodes every index uniquely.
  std::function<double(long a, long b, long s, long w)> value;
  std::vector<std::string> extra_cards;  // appended verbatim
  std::string extname;                   // non-empty: write an empty primary and the cube as an IMAGE extension
};

/// Raw (stored) integer that encodes the indices uniquely: 0 .. na*nb*nw*ns - 1 (< 256 for 3x4x5x4).
inline double RawCode(const CubeSpec& c, long a, long b, long s, long w) {
  return static_cast<double>(((s * c.nw + w) * c.nb + b) * c.na + a);
}

/// Physical value of the default pattern: bzero + bscale * raw (exact in float for small cubes).
inline double ExpectedValue(const CubeSpec& c, long a, long b, long s, long w) {
  if (c.value) return c.value(a, b, s, w);
  return c.bzero + c.bscale * RawCode(c, a, b, s, w);
}

inline void CheckStatus(int status, const std::string& what) {
  if (status) {
    char text[FLEN_STATUS];
    fits_get_errstatus(status, text);
    throw std::runtime_error(what + ": cfitsio " + text);
  }
}

/// Writes `spec` to `path` (overwriting) with cfitsio.
inline void WriteCube(const std::string& path, const CubeSpec& c) {
  std::remove(path.c_str());
  fitsfile* f = nullptr;
  int status = 0;
  fits_create_file(&f, path.c_str(), &status);
  CheckStatus(status, "create " + path);
  const long ns = static_cast<long>(c.stokes.size());
  const long sizes[4] = {c.na, c.nb, c.nw, ns};
  long naxes[4];
  for (int i = 0; i < 4; ++i) naxes[i] = sizes[c.order[i]];
  if (!c.extname.empty()) {
    fits_create_img(f, BYTE_IMG, 0, nullptr, &status);
    CheckStatus(status, "primary");
  }
  fits_create_img(f, c.bitpix, 4, naxes, &status);
  CheckStatus(status, "create image");
  if (!c.extname.empty()) fits_write_key(f, TSTRING, "EXTNAME", const_cast<char*>(c.extname.c_str()), nullptr, &status);
  if (c.bscale != 1.0 || c.bzero != 0.0) {
    fits_write_key_dbl(f, "BSCALE", c.bscale, -15, nullptr, &status);
    fits_write_key_dbl(f, "BZERO", c.bzero, -15, nullptr, &status);
    fits_set_bscale(f, c.bscale, c.bzero, &status);
  }
  for (int i = 0; i < 4; ++i) {
    const std::string n = std::to_string(i + 1);
    auto key_s = [&](const std::string& k, const std::string& v) {
      fits_write_key(f, TSTRING, (k + n).c_str(), const_cast<char*>(v.c_str()), nullptr, &status);
    };
    auto key_d = [&](const std::string& k, double v) { fits_write_key_dbl(f, (k + n).c_str(), v, -15, nullptr, &status); };
    switch (c.order[i]) {
      case kA:
        key_s("CTYPE", "HPLN-TAN");
        key_s("CUNIT", "arcsec");
        key_d("CRPIX", 2.0);
        key_d("CRVAL", 120.0);
        key_d("CDELT", 0.5);
        break;
      case kB:
        key_s("CTYPE", "HPLT-TAN");
        key_s("CUNIT", "arcsec");
        key_d("CRPIX", 1.5);
        key_d("CRVAL", -340.0);
        key_d("CDELT", 0.25);
        break;
      case kW:
        if (c.write_spectral_ctype) key_s("CTYPE", c.spectral_ctype);
        if (!c.spectral_cunit.empty()) key_s("CUNIT", c.spectral_cunit);
        key_d("CRPIX", c.spectral_crpix);
        key_d("CRVAL", c.spectral_crval);
        key_d("CDELT", c.spectral_cdelt);
        break;
      case kS:
        if (c.write_stokes_ctype) key_s("CTYPE", "STOKES");
        key_d("CRPIX", 1.0);
        key_d("CRVAL", c.stokes[0]);
        key_d("CDELT", ns > 1 ? c.stokes[1] - c.stokes[0] : c.stokes_cdelt);
        break;
    }
  }
  for (const auto& card : c.extra_cards) fits_write_record(f, card.c_str(), &status);
  CheckStatus(status, "keywords");
  // Data in FITS order, physical values (cfitsio applies BSCALE/BZERO on write).
  const long n = naxes[0] * naxes[1] * naxes[2] * naxes[3];
  std::vector<double> data(static_cast<std::size_t>(n));
  long idx[4];
  for (long i = 0; i < n; ++i) {
    long r = i;
    for (int k = 0; k < 4; ++k) {
      idx[k] = r % naxes[k];
      r /= naxes[k];
    }
    long role_index[4] = {0, 0, 0, 0};
    for (int k = 0; k < 4; ++k) role_index[c.order[k]] = idx[k];
    data[static_cast<std::size_t>(i)] = ExpectedValue(c, role_index[kA], role_index[kB], role_index[kS], role_index[kW]);
  }
  fits_write_img(f, TDOUBLE, 1, n, data.data(), &status);
  CheckStatus(status, "data");
  fits_close_file(f, &status);
  CheckStatus(status, "close");
}

/// Runs a shell command, returns its exit status and captures stdout+stderr.
inline int RunCommand(const std::string& cmd, std::string* output) {
  std::string full = cmd + " 2>&1";
  FILE* p = popen(full.c_str(), "r");
  if (!p) return -1;
  char buf[4096];
  std::string out;
  while (std::fgets(buf, sizeof buf, p)) out += buf;
  const int st = pclose(p);
  if (output) *output = out;
  return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

inline std::string ShellQuote(const std::string& s) {
  std::string out = "'";
  for (char c : s) {
    if (c == '\'') out += "'\\''";
    else out += c;
  }
  return out + "'";
}

}  // namespace zeeline::test
