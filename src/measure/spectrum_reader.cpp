#include "zeeline/measure/spectrum_reader.hpp"

#include <fitsio.h>
#include <wcslib/wcs.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "core/utf8_bom.hpp"
#include "io/fits_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {

PixelSpectrum Spectrum1D::View() const {
  PixelSpectrum s;
  s.wavelength_nm = wavelength_nm.data();
  s.n = wavelength_nm.size();
  s.I = I.data();
  s.Q = has_qu() ? Q.data() : nullptr;
  s.U = has_qu() ? U.data() : nullptr;
  s.V = has_v() ? V.data() : nullptr;
  return s;
}

std::string SpectrumReadOptions::Validate() const {
  if (v_sign != 1 && v_sign != -1) return "v_sign = " + std::to_string(v_sign) + ": expected +1 or -1";
  return {};
}

namespace {

std::string Trim(const std::string& s) {
  std::size_t a = 0, b = s.size();
  while (a < b && std::isspace(static_cast<unsigned char>(s[a]))) ++a;
  while (b > a && std::isspace(static_cast<unsigned char>(s[b - 1]))) --b;
  return s.substr(a, b - a);
}

std::string Lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

std::vector<std::string> SplitCells(const std::string& line) {
  std::vector<std::string> cells;
  if (line.find(',') != std::string::npos) {
    std::string cell;
    std::istringstream in(line);
    while (std::getline(in, cell, ',')) cells.push_back(Trim(cell));
    if (!line.empty() && line.back() == ',') cells.push_back("");
  } else {
    std::istringstream in(line);
    std::string cell;
    while (in >> cell) cells.push_back(cell);
  }
  return cells;
}

bool ParseNumber(const std::string& cell, double& value) {
  if (cell.empty()) return false;
  char* end = nullptr;
  value = std::strtod(cell.c_str(), &end);
  return end == cell.c_str() + cell.size() && std::isfinite(value);
}

// Column roles in a table.
enum Role { kWavelength, kI, kQ, kU, kV };
const char* RoleName(int r) {
  static const char* names[] = {"wavelength", "I", "Q", "U", "V"};
  return names[r];
}

// nm per unit of a wavelength column name suffix, 0 when unknown.
double WavelengthUnitScale(const std::string& unit) {
  const std::string u = Lower(unit);
  if (u.empty() || u == "nm") return 1.0;
  if (u == "a" || u == "aa" || u == "angstrom") return 0.1;
  if (u == "pm") return 1e-3;
  if (u == "um" || u == "micron") return 1e3;
  if (u == "m") return 1e9;
  return 0.0;
}

}  // namespace

Spectrum1D ParseSpectrumTable(const std::string& text, const std::string& origin) {
  Spectrum1D s;
  s.source = origin;
  std::vector<int> roles;           // per column
  std::vector<std::string> labels;  // per column, for messages
  double scale_nm = 1.0;
  bool have_layout = false;
  std::istringstream in(WithoutUtf8Bom(text));
  std::string raw;
  int line_no = 0, prev_line = 0;
  auto where = [&](int line, std::size_t col) {
    return origin + " line " + std::to_string(line) + ", column " + std::to_string(col + 1) + " (" + labels[col] + ")";
  };
  while (std::getline(in, raw)) {
    ++line_no;
    const std::size_t hash = raw.find('#');
    const std::string line = Trim(hash == std::string::npos ? raw : raw.substr(0, hash));
    if (line.empty()) continue;
    const std::vector<std::string> cells = SplitCells(line);
    double first = 0.0;
    if (!have_layout) {
      have_layout = true;
      if (!ParseNumber(cells[0], first)) {
        // Header line.
        bool seen[5] = {false, false, false, false, false};
        for (std::size_t c = 0; c < cells.size(); ++c) {
          const std::string name = cells[c];
          const std::string low = Lower(name);
          int role = -1;
          if (low == "wavelength" || low.rfind("wavelength_", 0) == 0) {
            role = kWavelength;
            const std::string unit = low == "wavelength" ? "" : name.substr(11);
            scale_nm = WavelengthUnitScale(unit);
            if (scale_nm == 0.0)
              throw SpectrumError(origin + " line " + std::to_string(line_no) + ", column " + std::to_string(c + 1) +
                                  ": unknown wavelength unit '" + unit + "' in '" + name +
                                  "'; expected wavelength_nm, wavelength_A, wavelength_pm, wavelength_um or wavelength_m");
          } else if (low == "i") {
            role = kI;
          } else if (low == "q") {
            role = kQ;
          } else if (low == "u") {
            role = kU;
          } else if (low == "v") {
            role = kV;
          } else {
            throw SpectrumError(origin + " line " + std::to_string(line_no) + ", column " + std::to_string(c + 1) +
                                ": unknown column name '" + name + "'; expected wavelength_<unit>, I, Q, U or V");
          }
          if (seen[role])
            throw SpectrumError(origin + " line " + std::to_string(line_no) + ", column " + std::to_string(c + 1) +
                                ": column " + RoleName(role) + " named twice");
          seen[role] = true;
          roles.push_back(role);
          labels.push_back(name);
        }
        const char* missing = !seen[kWavelength] ? "wavelength_<unit>" : !seen[kI] ? "I" : nullptr;
        if (missing)
          throw SpectrumError(origin + " line " + std::to_string(line_no) + " (header): no column named " + missing +
                              "; the header must name wavelength_<unit> and I (Q, U, V optional)");
        if (seen[kQ] != seen[kU])
          throw SpectrumError(origin + " line " + std::to_string(line_no) +
                              " (header): Q and U must come together (found only " + (seen[kQ] ? "Q" : "U") + ")");
        continue;
      }
      // No header: the layout follows from the number of cells.
      if (cells.size() == 2) {
        roles = {kWavelength, kI};
      } else if (cells.size() == 3) {
        roles = {kWavelength, kI, kV};
      } else if (cells.size() == 5) {
        roles = {kWavelength, kI, kQ, kU, kV};
      } else {
        throw SpectrumError(origin + " line " + std::to_string(line_no) + ": " + std::to_string(cells.size()) +
                            " columns without a header line; expected 2 (wavelength_nm, I), 3 (wavelength_nm, I, V) "
                            "or 5 (wavelength_nm, I, Q, U, V), or a header naming the columns");
      }
      for (int r : roles) labels.push_back(r == kWavelength ? "wavelength_nm" : RoleName(r));
    }
    if (cells.size() != roles.size()) {
      std::string names;
      for (std::size_t c = 0; c < labels.size(); ++c) names += (c ? ", " : "") + labels[c];
      throw SpectrumError(origin + " line " + std::to_string(line_no) + ": " + std::to_string(cells.size()) +
                          " columns, expected " + std::to_string(roles.size()) + " (" + names + ")" +
                          (cells.size() < roles.size() ? "; column " + std::to_string(cells.size() + 1) + " (" +
                                                             labels[cells.size()] + ") is missing"
                                                       : ""));
    }
    double values[5] = {0, 0, 0, 0, 0};
    for (std::size_t c = 0; c < cells.size(); ++c) {
      double v = 0.0;
      if (!ParseNumber(cells[c], v))
        throw SpectrumError(where(line_no, c) + ": expected a finite number, found '" + cells[c] + "'");
      values[roles[c]] = v;
    }
    const double wl = values[kWavelength] * scale_nm;
    if (!(wl > 0.0))
      throw SpectrumError(where(line_no, 0) + ": wavelength must be positive, found '" + cells[0] + "'");
    for (std::size_t c = 0; c < roles.size(); ++c) {
      if (roles[c] != kWavelength || s.wavelength_nm.empty()) continue;
      const double prev = s.wavelength_nm.back();
      if (wl == prev)
        throw SpectrumError(where(line_no, c) + ": duplicate wavelength " + cells[c] + " (also on line " +
                            std::to_string(prev_line) + "); wavelengths must increase strictly");
      if (wl < prev)
        throw SpectrumError(where(line_no, c) + ": wavelength " + cells[c] + " is smaller than on line " +
                            std::to_string(prev_line) + "; the table must be sorted by increasing wavelength");
    }
    s.wavelength_nm.push_back(wl);
    s.I.push_back(values[kI]);
    bool has_q = false, has_v = false;
    for (int r : roles) {
      has_q |= r == kQ;
      has_v |= r == kV;
    }
    if (has_q) {
      s.Q.push_back(values[kQ]);
      s.U.push_back(values[kU]);
    }
    if (has_v) s.V.push_back(values[kV]);
    prev_line = line_no;
  }
  if (s.size() < kMinSpectrumSamples)
    throw SpectrumError(origin + ": " + std::to_string(s.size()) + " samples; expected at least " +
                        std::to_string(kMinSpectrumSamples) + " rows of numbers");
  return s;
}

namespace {

// ---- FITS ----------------------------------------------------------------------------------------------

std::string CfitsioText(int status) {
  char text[FLEN_STATUS] = {0};
  fits_get_errstatus(status, text);
  return text;
}

struct FitsFile {
  fitsfile* f = nullptr;
  ~FitsFile() {
    int st = 0;
    if (f) fits_close_file(f, &st);
  }
};

struct HduData {
  int hdu = 0;  // 1-based
  std::string extname;
  std::vector<double> wavelength_nm;
  std::vector<std::vector<double>> rows;  // one per Stokes plane
  std::vector<int> stokes_codes;          // per row (1..4), or {0} for a 1-D HDU
  WavelengthFrame frame = WavelengthFrame::kVacuum;
};

std::string HduName(const std::string& path, int hdu, const std::string& extname) {
  // hdu is cfitsio's 1-based number; messages use the file.fits[n] index (0 = primary, docs/fits.md).
  return path + " HDU " + std::to_string(hdu - 1) + (extname.empty() ? "" : " (EXTNAME '" + extname + "')");
}

// Reads the current HDU (an image of 1 or 2 axes) with its spectral WCS on axis 1.
HduData ReadImageHdu(fitsfile* f, const std::string& path, int hdu, const std::string& extname) {
  const std::string name = HduName(path, hdu, extname);
  int status = 0, naxis = 0;
  long naxes[2] = {0, 0};
  fits_get_img_dim(f, &naxis, &status);
  if (naxis < 1 || naxis > 2)
    throw SpectrumError(name + ": NAXIS = " + std::to_string(naxis) +
                        "; expected 1 (a spectrum) or 2 (NAXIS1 = wavelength, NAXIS2 = STOKES)");
  fits_get_img_size(f, 2, naxes, &status);
  if (status) throw SpectrumError(name + ": cannot read NAXISn: " + CfitsioText(status));
  if (naxis == 1) naxes[1] = 1;

  char* header = nullptr;
  int nkeys = 0;
  if (fits_hdr2str(f, 1, nullptr, 0, &header, &nkeys, &status))
    throw SpectrumError(name + ": cannot read the header: " + CfitsioText(status));
  std::string hdr;
  std::string card_problem;
  const bool cards_ok = io_detail::WcsSafeCards(header, hdr, card_problem);  // wcslib-safe cards only
  fits_free_memory(header, &status);
  status = 0;
  if (!cards_ok) throw SpectrumError(name + ": " + card_problem);

  int nreject = 0, nwcs = 0;
  wcsprm* wcs = nullptr;
  if (wcspih(hdr.data(), static_cast<int>(hdr.size() / 80), WCSHDR_all, 0, &nreject, &nwcs, &wcs) != 0 || nwcs == 0) {
    if (wcs) wcsvfree(&nwcs, &wcs);
    throw SpectrumError(name + ": no WCS keywords; expected CTYPE1 = 'WAVE' or 'AWAV' with CRVAL1, CDELT1, CRPIX1, CUNIT1");
  }
  struct Free {
    int* n;
    wcsprm** w;
    ~Free() { wcsvfree(n, w); }
  } free_wcs{&nwcs, &wcs};
  wcsprm& w = wcs[0];
  // wcslib sizes ctype/cunit/pc by its own axis count (WCSAXES, or the highest axis number in the keywords),
  // which may be below NAXIS: reading axis 2 of a 1-axis WCS overran the array (found by fuzz_fits_header).
  if (w.naxis < naxis)
    throw SpectrumError(name + ": the WCS describes " + std::to_string(w.naxis) + " axis(es) but NAXIS = " +
                        std::to_string(naxis) + " (check WCSAXES and CTYPE" + std::to_string(naxis) + ")");
  auto trim = [](const char* c) { return Trim(std::string(c)); };
  const std::string ctype1 = trim(w.ctype[0]);
  const std::string code = ctype1.substr(0, 4);
  if (code != "WAVE" && code != "AWAV")
    throw SpectrumError(name + ": CTYPE1 = '" + ctype1 + "'; expected 'WAVE' (vacuum) or 'AWAV' (air) wavelengths");
  if (trim(w.cunit[0]).empty())
    throw SpectrumError(name + ": CUNIT1 missing; expected the wavelength unit ('m', 'nm' or 'Angstrom')");
  if (naxis == 2 && trim(w.ctype[1]) != "STOKES")
    throw SpectrumError(name + ": CTYPE2 = '" + trim(w.ctype[1]) + "'; expected 'STOKES' (NAXIS2 = Stokes parameters)");
  for (int i = 0; i < w.naxis; ++i)
    for (int j = 0; j < w.naxis; ++j)
      if (i != j && w.pc[i * w.naxis + j] != 0.0)
        throw SpectrumError(name + ": PC" + std::to_string(i + 1) + "_" + std::to_string(j + 1) +
                            " couples the wavelength and Stokes axes; not supported");
  unitfix(0, &w);
  const int st = wcsset(&w);
  if (st != 0)
    throw SpectrumError(name + ": invalid WCS (CTYPE1 = '" + ctype1 + "', CUNIT1): " + std::string(wcs_errmsg[st]));

  HduData d;
  d.hdu = hdu;
  d.extname = extname;
  d.frame = code == "AWAV" ? WavelengthFrame::kAir : WavelengthFrame::kVacuum;
  const long n = naxes[0];
  const int nax = w.naxis;
  auto world = [&](int axis, long count, std::vector<double>& out) {
    std::vector<double> pix(static_cast<std::size_t>(count * nax), 1.0), img(pix.size()), wor(pix.size());
    std::vector<double> phi(count), theta(count);
    std::vector<int> stat(count);
    for (long k = 0; k < count; ++k) pix[k * nax + axis] = static_cast<double>(k + 1);
    const int s2 = wcsp2s(&w, static_cast<int>(count), nax, pix.data(), img.data(), phi.data(), theta.data(),
                          wor.data(), stat.data());
    if (s2 != 0) throw SpectrumError(name + ": cannot evaluate the WCS along axis " + std::to_string(axis + 1));
    out.resize(count);
    for (long k = 0; k < count; ++k) out[k] = wor[k * nax + axis];
  };
  std::vector<double> wl;
  world(0, n, wl);
  for (double& x : wl) x *= 1e9;  // wcsset gives SI (m) for WAVE/AWAV
  for (long k = 0; k < n; ++k)
    if (!(wl[k] > 0.0) || !std::isfinite(wl[k]))
      throw SpectrumError(name + ": CRVAL1/CDELT1/CRPIX1: pixel " + std::to_string(k + 1) +
                          " gives a non-positive wavelength");
  const bool reversed = n > 1 && wl[1] < wl[0];
  for (long k = 1; k < n; ++k)
    if ((wl[k] - wl[k - 1]) * (reversed ? -1.0 : 1.0) <= 0.0)
      throw SpectrumError(name + ": CDELT1 = 0 or non-monotonic wavelengths at pixel " + std::to_string(k + 1));
  if (naxis == 2) {
    std::vector<double> sw;
    world(1, naxes[1], sw);
    for (double c : sw) {
      const int ic = c > 0.5 && c < 4.5 ? static_cast<int>(std::lround(c)) : 0;  // NaN and huge codes: 0
      if (ic < 1 || ic > 4 || std::fabs(c - ic) > 1e-6)
        throw SpectrumError(name + ": CTYPE2 = 'STOKES' gives code " + std::to_string(c) +
                            "; expected 1..4 (I, Q, U, V)");
      d.stokes_codes.push_back(ic);
    }
  } else {
    d.stokes_codes.push_back(0);
  }
  std::vector<double> buf(static_cast<std::size_t>(n * naxes[1]));
  int anynul = 0;
  double nulval = std::nan("");
  if (fits_read_img(f, TDOUBLE, 1, static_cast<LONGLONG>(buf.size()), &nulval, buf.data(), &anynul, &status))
    throw SpectrumError(name + ": cannot read the data: " + CfitsioText(status));
  for (long r = 0; r < naxes[1]; ++r) {
    std::vector<double> row(buf.begin() + r * n, buf.begin() + (r + 1) * n);
    for (long k = 0; k < n; ++k)
      if (!std::isfinite(row[k]))
        throw SpectrumError(name + ": non-finite value at pixel (" + std::to_string(k + 1) +
                            (naxis == 2 ? ", " + std::to_string(r + 1) : std::string()) + ")");
    if (reversed) std::reverse(row.begin(), row.end());
    d.rows.push_back(std::move(row));
  }
  if (reversed) std::reverse(wl.begin(), wl.end());
  d.wavelength_nm = std::move(wl);
  return d;
}

}  // namespace

Spectrum1D ReadSpectrumFits(const std::string& path) {
  FitsFile file;
  int status = 0;
  if (fits_open_file(&file.f, path.c_str(), READONLY, &status))
    throw SpectrumError(path + ": cannot open as FITS: " + CfitsioText(status));
  int nhdu = 0;
  fits_get_num_hdus(file.f, &nhdu, &status);
  Spectrum1D s;
  s.source = path;
  std::vector<double>* slot[5] = {nullptr, &s.I, &s.Q, &s.U, &s.V};
  int found_in[5] = {0, 0, 0, 0, 0};
  for (int h = 1; h <= nhdu; ++h) {
    int type = 0;
    if (fits_movabs_hdu(file.f, h, &type, &status))
      throw SpectrumError(path + " HDU " + std::to_string(h - 1) + ": cannot move to it: " + CfitsioText(status));
    if (type != IMAGE_HDU) continue;
    int naxis = 0;
    fits_get_img_dim(file.f, &naxis, &status);
    char ext[FLEN_VALUE] = {0};
    int st2 = 0;
    std::string extname;
    if (fits_read_key(file.f, TSTRING, "EXTNAME", ext, nullptr, &st2) == 0) extname = Trim(ext);
    if (naxis == 0) continue;
    int code = 0;
    const std::string up = Lower(extname);
    if (naxis == 1) {
      if (up == "i") code = 1;
      else if (up == "q") code = 2;
      else if (up == "u") code = 3;
      else if (up == "v") code = 4;
      else if (h == 1 && extname.empty()) code = 1;
      else continue;  // an unrelated extension
    } else if (h != 1 && extname.empty()) {
      continue;
    }
    HduData d = ReadImageHdu(file.f, path, h, extname);
    if (s.wavelength_nm.empty()) {
      s.wavelength_nm = d.wavelength_nm;
      s.frame = d.frame;
    } else {
      bool same = d.wavelength_nm.size() == s.wavelength_nm.size() && d.frame == *s.frame;
      for (std::size_t k = 0; same && k < d.wavelength_nm.size(); ++k)
        same = std::fabs(d.wavelength_nm[k] - s.wavelength_nm[k]) <= 1e-9 * s.wavelength_nm[k];
      if (!same)
        throw SpectrumError(HduName(path, h, extname) + ": wavelength grid (NAXIS1/CTYPE1/CRVAL1/CDELT1/CRPIX1) differs "
                            "from HDU " + std::to_string(found_in[1] ? found_in[1] - 1 : 0) + "; expected the same grid in every HDU");
    }
    for (std::size_t r = 0; r < d.rows.size(); ++r) {
      const int c = d.stokes_codes[r] == 0 ? code : d.stokes_codes[r];
      if (found_in[c])
        throw SpectrumError(HduName(path, h, extname) + ": Stokes " + "?IQUV"[c] + " found again (already in HDU " +
                            std::to_string(found_in[c] - 1) + ")");
      found_in[c] = h;
      *slot[c] = std::move(d.rows[r]);
    }
  }
  if (status) throw SpectrumError(path + ": " + CfitsioText(status));
  if (!found_in[1])
    throw SpectrumError(path + ": no Stokes I: expected a 1-D primary image, an image extension with EXTNAME = 'I', "
                        "or a 2-D image with CTYPE2 = 'STOKES'");
  if ((found_in[2] != 0) != (found_in[3] != 0))
    throw SpectrumError(path + ": Stokes " + (found_in[2] ? "Q" : "U") + " (HDU " +
                        std::to_string((found_in[2] ? found_in[2] : found_in[3]) - 1) + ") without " +
                        (found_in[2] ? "U" : "Q") + "; Q and U must come together");
  if (s.size() < kMinSpectrumSamples)
    throw SpectrumError(path + " HDU " + std::to_string(found_in[1] - 1) + ": NAXIS1 = " + std::to_string(s.size()) +
                        "; expected at least " + std::to_string(kMinSpectrumSamples) + " wavelengths");
  return s;
}

Spectrum1D ReadSpectrum(const std::string& path, const SpectrumReadOptions& options) {
  const std::string bad = options.Validate();
  if (!bad.empty()) throw OptionError(bad);
  std::string base = path;
  const std::size_t bracket = base.find('[');
  if (bracket != std::string::npos) base = base.substr(0, bracket);
  std::ifstream in(base, std::ios::binary);
  if (!in) throw SpectrumError(path + ": cannot open (no such file or not readable)");
  char magic[9] = {0};
  in.read(magic, 9);
  Spectrum1D s;
  if (in.gcount() == 9 && std::string(magic, 9) == "SIMPLE  =") {
    s = ReadSpectrumFits(path);
  } else {
    in.clear();
    in.seekg(0);
    std::ostringstream text;
    text << in.rdbuf();
    s = ParseSpectrumTable(text.str(), path);
  }
  if (options.v_sign == -1)
    for (double& v : s.V) v = -v;
  return s;
}

}  // namespace zeeline
