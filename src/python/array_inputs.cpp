#include "python/array_inputs.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include <fitsio.h>

#include "zeeline/core/errors.hpp"

namespace py = pybind11;

namespace zeeline::python {
namespace {

using Doubles = py::array_t<double, py::array::c_style | py::array::forcecast>;

std::string Num(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.10g", v);
  return buf;
}

std::string ShapeText(const py::array& a) {
  std::string s = "(";
  for (py::ssize_t d = 0; d < a.ndim(); ++d) s += (d ? ", " : "") + std::to_string(a.shape(d));
  return s + (a.ndim() == 1 ? ",)" : ")");
}

// A 1-D float64 copy of `value`; `name` names it in messages.
std::vector<double> Column(const py::handle& value, const char* name) {
  const Doubles a = Doubles::ensure(value);
  if (!a) {
    PyErr_Clear();
    throw py::value_error(std::string(name) + ": expected an array of numbers");
  }
  if (a.ndim() != 1) throw py::value_error(std::string(name) + ": expected a 1-D array, got shape " + ShapeText(a));
  std::vector<double> out(a.data(), a.data() + a.shape(0));
  for (std::size_t i = 0; i < out.size(); ++i)
    if (!std::isfinite(out[i]))
      throw py::value_error(std::string(name) + "[" + std::to_string(i) + "] = " + Num(out[i]) +
                            ": expected finite numbers (a spectrum with NaN/Inf samples is refused, as in a table)");
  return out;
}

// The uniform step of a strictly increasing grid (rule of a linear CDELT3: every sample within 1e-6 step).
double UniformStep(const std::vector<double>& w) {
  if (w.size() < 2) throw py::value_error("wavelength_nm: expected at least 2 wavelengths");
  const double step = (w.back() - w.front()) / static_cast<double>(w.size() - 1);
  if (!(step > 0.0) || !(w.front() > 0.0))
    throw py::value_error("wavelength_nm: expected positive, strictly increasing wavelengths in nm");
  for (std::size_t k = 0; k < w.size(); ++k) {
    const double expected = w.front() + step * static_cast<double>(k);
    if (!(std::fabs(w[k] - expected) <= 1e-6 * step))
      throw py::value_error("wavelength_nm[" + std::to_string(k) + "] = " + Num(w[k]) + " nm, expected " +
                            Num(expected) + " nm: a cube's wavelength grid must be uniform (to 1e-6 of the step)");
  }
  return step;
}

void CheckFits(int status, const std::string& path, const std::string& what) {
  if (status == 0) return;
  char text[FLEN_STATUS] = {0};
  fits_get_errstatus(status, text);
  throw FitsError(path + ": " + what + " (cfitsio: " + text + ")");
}

}  // namespace

Spectrum1D SpectrumFromArrays(const py::handle& wavelength_nm, const py::handle& I, const py::handle& Q,
                              const py::handle& U, const py::handle& V, int v_sign) {
  SpectrumReadOptions read;
  read.v_sign = v_sign;
  if (const std::string bad = read.Validate(); !bad.empty()) throw OptionError(bad);
  Spectrum1D s;
  s.source = "(numpy arrays)";
  s.wavelength_nm = Column(wavelength_nm, "wavelength_nm");
  s.I = Column(I, "I");
  if (Q.is_none() != U.is_none()) throw py::value_error("Q and U must be given together");
  if (!Q.is_none()) {
    s.Q = Column(Q, "Q");
    s.U = Column(U, "U");
  }
  if (!V.is_none()) s.V = Column(V, "V");
  const std::size_t n = s.wavelength_nm.size();
  const std::pair<const char*, const std::vector<double>*> columns[] = {{"I", &s.I}, {"Q", &s.Q}, {"U", &s.U}, {"V", &s.V}};
  for (const auto& [name, c] : columns)
    if (!c->empty() || name[0] == 'I')
      if (c->size() != n)
        throw py::value_error(std::string(name) + ": " + std::to_string(c->size()) + " samples, wavelength_nm has " +
                              std::to_string(n));
  if (n < kMinSpectrumSamples)
    throw py::value_error("wavelength_nm: " + std::to_string(n) + " samples; expected at least " +
                          std::to_string(kMinSpectrumSamples));
  for (std::size_t i = 0; i < n; ++i) {
    if (!(s.wavelength_nm[i] > 0.0))
      throw py::value_error("wavelength_nm[" + std::to_string(i) + "] = " + Num(s.wavelength_nm[i]) +
                            ": wavelengths must be positive (nm)");
    if (i > 0 && !(s.wavelength_nm[i] > s.wavelength_nm[i - 1]))
      throw py::value_error("wavelength_nm[" + std::to_string(i) + "] = " + Num(s.wavelength_nm[i]) +
                            " is not greater than wavelength_nm[" + std::to_string(i - 1) + "] = " +
                            Num(s.wavelength_nm[i - 1]) + "; wavelengths must increase strictly");
  }
  if (v_sign == -1)
    for (double& v : s.V) v = -v;
  return s;
}

TemporaryCubeFile::TemporaryCubeFile(const py::handle& cube, const py::handle& wavelength_nm,
                                     const std::string& stokes, WavelengthFrame frame) {
  const py::array any = py::array::ensure(cube);
  if (!any) {
    PyErr_Clear();
    throw py::value_error("cube: expected a FITS file name or a numpy array (Stokes, wavelength, y, x)");
  }
  if (any.ndim() != 4)
    throw py::value_error("cube: expected a 4-D array (Stokes, wavelength, y, x), got shape " + ShapeText(any));
  if (wavelength_nm.is_none()) throw py::value_error("cube is an array: give wavelength_nm (its wavelength grid)");
  const Doubles wl_array = Doubles::ensure(wavelength_nm);
  if (!wl_array || wl_array.ndim() != 1) {
    PyErr_Clear();
    throw py::value_error("wavelength_nm: expected a 1-D array of wavelengths in nm");
  }
  const std::vector<double> wl(wl_array.data(), wl_array.data() + wl_array.shape(0));
  if (static_cast<py::ssize_t>(stokes.size()) != any.shape(0))
    throw py::value_error("cube: axis 0 has " + std::to_string(any.shape(0)) + " planes but stokes='" + stokes +
                          "' names " + std::to_string(stokes.size()));
  if (static_cast<py::ssize_t>(wl.size()) != any.shape(1))
    throw py::value_error("cube: axis 1 has " + std::to_string(any.shape(1)) + " wavelengths but wavelength_nm has " +
                          std::to_string(wl.size()));
  if (any.shape(2) < 1 || any.shape(3) < 1) throw py::value_error("cube: empty spatial axes, shape " + ShapeText(any));
  const double step = UniformStep(wl);
  std::vector<int> codes;
  for (char c : stokes) {
    const std::string known = "IQUV";
    const auto k = known.find(c);
    if (k == std::string::npos)
      throw py::value_error(std::string("stokes='") + stokes + "': expected letters I, Q, U, V, e.g. 'IQUV' or 'IV'");
    codes.push_back(static_cast<int>(k) + 1);
  }
  const int code_step = codes.size() > 1 ? codes[1] - codes[0] : 1;
  for (std::size_t k = 0; k < codes.size(); ++k)
    if (code_step <= 0 || codes[k] != codes[0] + code_step * static_cast<int>(k))
      throw py::value_error(std::string("stokes='") + stokes +
                            "': the planes must be in the order I, Q, U, V with equal steps (IQUV, IV, QUV, V, ...)");

  // The values as a C-ordered array (x fastest = NAXIS1): float32 kept as is, the rest as float64.
  const bool single = any.dtype().kind() == 'f' && any.dtype().itemsize() == 4;  // any byte order
  py::array data;
  if (single) {
    data = py::array_t<float, py::array::c_style>::ensure(cube);
  } else {
    data = Doubles::ensure(cube);
    if (!data) {
      PyErr_Clear();
      throw py::value_error("cube: expected an array of real numbers, got dtype " + py::str(any.dtype()).cast<std::string>());
    }
  }

  const char* dir = std::getenv("TMPDIR");
  std::string pattern = std::string(dir && *dir ? dir : "/tmp") + "/zeeline-cube-XXXXXX.fits";
  std::vector<char> name(pattern.begin(), pattern.end());
  name.push_back('\0');
  const int fd = mkstemps(name.data(), 5);
  if (fd < 0) throw FitsError(pattern + ": cannot create a temporary file for the array cube");
  close(fd);
  path_ = name.data();
  try {
    fitsfile* f = nullptr;
    int status = 0;
    fits_create_file(&f, ("!" + path_).c_str(), &status);
    CheckFits(status, path_, "cannot create the temporary cube");
    long naxes[4] = {static_cast<long>(any.shape(3)), static_cast<long>(any.shape(2)), static_cast<long>(wl.size()),
                     static_cast<long>(codes.size())};
    fits_create_img(f, single ? FLOAT_IMG : DOUBLE_IMG, 4, naxes, &status);
    const bool air = frame == WavelengthFrame::kAir;
    char wave[] = "WAVE", awav[] = "AWAV", nm[] = "nm", stokes_type[] = "STOKES";
    // 17 significant digits: the header gives back exactly these doubles.
    const double crpix = 1.0, crval3 = wl.front(), cdelt3 = step, crval4 = codes.front(), cdelt4 = code_step;
    fits_write_key(f, TSTRING, "CTYPE3", air ? awav : wave, air ? "air wavelength" : "vacuum wavelength", &status);
    fits_write_key(f, TSTRING, "CUNIT3", nm, "wavelength unit", &status);
    fits_write_key_dbl(f, "CRPIX3", crpix, -17, "reference pixel", &status);
    fits_write_key_dbl(f, "CRVAL3", crval3, -17, "wavelength at the reference pixel", &status);
    fits_write_key_dbl(f, "CDELT3", cdelt3, -17, "wavelength step", &status);
    fits_write_key(f, TSTRING, "CTYPE4", stokes_type, "1..4 = I, Q, U, V (FITS WCS Paper I)", &status);
    fits_write_key_dbl(f, "CRPIX4", crpix, -17, "reference pixel", &status);
    fits_write_key_dbl(f, "CRVAL4", crval4, -17, "Stokes code at the reference pixel", &status);
    fits_write_key_dbl(f, "CDELT4", cdelt4, -17, "Stokes code step", &status);
    fits_write_img(f, single ? TFLOAT : TDOUBLE, 1, static_cast<LONGLONG>(data.size()),
                   const_cast<void*>(data.data()), &status);
    int close_status = 0;
    fits_close_file(f, &close_status);
    if (status == 0) status = close_status;
    CheckFits(status, path_, "cannot write the temporary cube");
  } catch (...) {
    std::remove(path_.c_str());
    throw;
  }
}

TemporaryCubeFile::~TemporaryCubeFile() {
  if (!path_.empty()) std::remove(path_.c_str());
}

}  // namespace zeeline::python
