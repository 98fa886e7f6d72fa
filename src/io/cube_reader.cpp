#include "zeeline/io/cube_reader.hpp"

#include <fitsio.h>
#include <wcslib/wcs.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>
#include <wcslib/wcsutil.h>

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <type_traits>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include "io/fits_util.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/threads.hpp"
#include "zeeline/io/air_vacuum.hpp"

namespace zeeline {

using io_detail::CfitsioMessage;
using io_detail::Num;
using io_detail::Trim;

std::string ToString(StokesParameter s) {
  switch (s) {
    case StokesParameter::kI: return "I";
    case StokesParameter::kQ: return "Q";
    case StokesParameter::kU: return "U";
    case StokesParameter::kV: return "V";
  }
  return "?";
}

std::string ToString(AxisRole role) {
  switch (role) {
    case AxisRole::kSpatialX: return "x";
    case AxisRole::kSpatialY: return "y";
    case AxisRole::kSpectral: return "spectral";
    case AxisRole::kStokes: return "stokes";
  }
  return "?";
}

std::string CubeReadOptions::Validate() const {
  if (v_sign != 1 && v_sign != -1) return "v_sign = " + std::to_string(v_sign) + ": expected +1 or -1";
  if (!(max_tile_mib > 0.0 && max_tile_mib <= 1.0e6))
    return "max_tile_mib = " + Num(max_tile_mib) + ": expected 0 < value <= 1e6";
  if (threads < 0 || threads > 1024) return "threads = " + std::to_string(threads) + ": expected 0 (all) to 1024";
  return "";
}

int CubeInfo::StokesIndex(StokesParameter s) const {
  for (std::size_t i = 0; i < stokes.size(); ++i)
    if (stokes[i] == s) return static_cast<int>(i);
  return -1;
}

namespace {

// Feed-correlation codes of FITS WCS Paper I table 7 (not supported, named in the error).
const char* FeedCode(int v) {
  switch (v) {
    case -1: return "RR";
    case -2: return "LL";
    case -3: return "RL";
    case -4: return "LR";
    case -5: return "XX";
    case -6: return "YY";
    case -7: return "XY";
    case -8: return "YX";
    default: return nullptr;
  }
}

std::string Upper4(const char* ctype) {
  std::string s = Trim(ctype);
  return s.substr(0, 4);
}

}  // namespace

struct CubeReader::Impl {
  fitsfile* f = nullptr;
  CubeInfo info;
  CubeReadOptions options;
  long next_row = 0;
  RawCubeTile scratch;             // the cfitsio buffer of ReadRows
  std::vector<long> pixel_offset;  // per tile pixel: offset of its (x, y) in the cfitsio buffer
  int data_fd = -1;                // the direct read's descriptor (-1: cfitsio reads the whole data unit)
  LONGLONG data_start = 0;         // byte offset of the data unit in the file

  ~Impl() {
    if (data_fd >= 0) ::close(data_fd);
    if (f) {
      int status = 0;
      fits_close_file(f, &status);
    }
  }

  std::string Where() const {
    std::string w = "'" + info.path + "' HDU " + std::to_string(info.hdu);
    if (!info.extname.empty()) w += " (EXTNAME '" + info.extname + "')";
    return w;
  }
  [[noreturn]] void Fail(const std::string& what) const { throw FitsError(Where() + ": " + what); }

  void Open(const std::string& path);
  void CheckSize(const std::array<long long, 4>& naxes);
  void ParseWcs(const std::array<long long, 4>& naxes);
  void PrepareDirectRead(const std::string& root);
  void ReadDirect(LONGLONG first, LONGLONG count, float* into, long y_begin, long y_count) const;

  template <class T>
  void Read(long y_begin, long y_count, CubeTileT<T>& tile);
  void ReadRaw(long y_begin, long y_count, bool force_float, RawCubeTile& tile);
};

void CubeReader::Impl::Open(const std::string& path) {
  info.path = path;
  // A missing file gets a plain message (cfitsio's is generic).
  std::string r;
  {
    char root[FLEN_FILENAME] = {0};
    int st = 0;
    fits_parse_rootname(const_cast<char*>(path.c_str()), root, &st);
    struct stat sb {};
    r = st == 0 ? Trim(root) : std::string();
    if (st == 0 && !r.empty() && r.find("://") == std::string::npos) {
      if (::stat(r.c_str(), &sb) != 0) throw FitsError("'" + path + "': no such file");
      if (S_ISDIR(sb.st_mode)) throw FitsError("'" + path + "': is a directory, not a FITS file");
      if (S_ISREG(sb.st_mode) && sb.st_size == 0) throw FitsError("'" + path + "': the file is empty (0 bytes)");
    }
  }
  int status = 0;
  if (fits_open_image(&f, path.c_str(), READONLY, &status)) {
    f = nullptr;
    throw FitsError("'" + path +
                    "': cannot open as a FITS image (not a FITS file, a truncated or damaged header, or no "
                    "image HDU): " +
                    CfitsioMessage(status));
  }
  int hdu = 1;
  fits_get_hdu_num(f, &hdu);  // cfitsio counts from 1
  info.hdu = hdu - 1;         // messages and `info` use the file.fits[n] index (docs/fits.md)
  char extname[FLEN_VALUE] = {0};
  status = 0;
  if (fits_read_key(f, TSTRING, "EXTNAME", extname, nullptr, &status) == 0) info.extname = Trim(extname);
  status = 0;
  fits_clear_errmsg();

  int bitpix = 0, naxis = 0;
  if (fits_get_img_type(f, &bitpix, &status) || fits_get_img_dim(f, &naxis, &status))
    Fail("cannot read BITPIX/NAXIS: " + CfitsioMessage(status));
  info.bitpix = bitpix;
  if (naxis == 0) Fail("NAXIS = 0: the HDU holds no image data");
  if (naxis != 4)
    Fail("NAXIS = " + std::to_string(naxis) +
         ": expected 4 axes (two spatial, one spectral, one STOKES)");
  std::array<long long, 4> naxes{};
  if (fits_get_img_sizell(f, 4, naxes.data(), &status)) Fail("cannot read NAXISn: " + CfitsioMessage(status));
  for (int i = 0; i < 4; ++i) {
    if (naxes[i] <= 0) Fail("NAXIS" + std::to_string(i + 1) + " = " + std::to_string(naxes[i]) + ": empty axis");
  }
  CheckSize(naxes);
  ParseWcs(naxes);
  if (options.direct_read && !r.empty()) PrepareDirectRead(r);
}

// The direct read (CubeReadOptions::direct_read) takes only what needs no conversion but the byte order: a
// float32 image (BITPIX -32, FITS standard 4.0 sect. 5.3: IEEE-754 big-endian) with BSCALE 1 and BZERO 0, not
// tile-compressed, that cfitsio reads from the disk file itself (its "file://" driver: not a gzipped file
// uncompressed into memory, not an image section or filtered copy), whose size on disk is the size cfitsio
// found. Anything else stays with cfitsio; so does every header and WCS read.
void CubeReader::Impl::PrepareDirectRead(const std::string& root) {
#if defined(__BYTE_ORDER__) && defined(__ORDER_LITTLE_ENDIAN__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
  if (info.bitpix != -32) return;
  int status = 0;
  if (fits_is_compressed_image(f, &status) || status) return;
  char urltype[FLEN_FILENAME] = {0};
  if (fits_url_type(f, urltype, &status) || std::strcmp(urltype, "file://") != 0) return;
  double bscale = 1.0, bzero = 0.0;
  int st = 0;
  if (fits_read_key(f, TDOUBLE, "BSCALE", &bscale, nullptr, &st) != 0) bscale = 1.0;
  st = 0;
  if (fits_read_key(f, TDOUBLE, "BZERO", &bzero, nullptr, &st) != 0) bzero = 0.0;
  fits_clear_errmsg();
  if (bscale != 1.0 || bzero != 0.0) return;
  LONGLONG headstart = 0, datastart = 0, dataend = 0;
  if (fits_get_hduaddrll(f, &headstart, &datastart, &dataend, &status)) return;
  const int fd = ::open(root.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return;
  struct stat sb {};
  if (::fstat(fd, &sb) != 0 || !S_ISREG(sb.st_mode) || static_cast<LONGLONG>(sb.st_size) != f->Fptr->logfilesize) {
    ::close(fd);
    return;
  }
  data_fd = fd;
  data_start = datastart;
#else
  (void)root;  // the gather's byte swap assumes a little-endian host: elsewhere cfitsio reads everything
#endif
}

// Samples first .. first + count - 1 of the data unit (0-based, FITS order) as the file stores them.
void CubeReader::Impl::ReadDirect(LONGLONG first, LONGLONG count, float* into, long y_begin, long y_count) const {
  char* to = reinterpret_cast<char*>(into);
  std::size_t left = static_cast<std::size_t>(count) * sizeof(float);
  off_t at = static_cast<off_t>(data_start + first * static_cast<LONGLONG>(sizeof(float)));
  while (left > 0) {
    const ssize_t got = ::pread(data_fd, to, left, at);
    if (got < 0 && errno == EINTR) continue;
    if (got <= 0) {
      const std::string why = got < 0 ? std::string(std::strerror(errno))
                                      : "the file ends at byte " + std::to_string(static_cast<long long>(at)) +
                                            ", before the data unit does (truncated or replaced while being read?)";
      Fail("cannot read rows " + std::to_string(y_begin + 1) + ".." + std::to_string(y_begin + y_count) +
           " of the data unit: " + why);
    }
    to += got;
    left -= static_cast<std::size_t>(got);
    at += got;
  }
}

void CubeReader::Impl::CheckSize(const std::array<long long, 4>& naxes) {
  int status = 0;
  // Tile-compressed images live in a binary table and are decompressed tile by tile by cfitsio; their
  // NAXISn describe the uncompressed image, so the raw size comparison does not apply.
  if (fits_is_compressed_image(f, &status)) return;
  status = 0;
  LONGLONG headstart = 0, datastart = 0, dataend = 0;
  if (fits_get_hduaddrll(f, &headstart, &datastart, &dataend, &status))
    Fail("cannot locate the data unit: " + CfitsioMessage(status));
  // Product with overflow check: every factor is > 0.
  const long double bytes_ld = static_cast<long double>(naxes[0]) * static_cast<long double>(naxes[1]) *
                               static_cast<long double>(naxes[2]) * static_cast<long double>(naxes[3]) *
                               static_cast<long double>(std::abs(info.bitpix) / 8);
  const LONGLONG file_size = f->Fptr->logfilesize;
  const std::string dims = std::to_string(naxes[0]) + " x " + std::to_string(naxes[1]) + " x " +
                           std::to_string(naxes[2]) + " x " + std::to_string(naxes[3]);
  if (bytes_ld > static_cast<long double>(file_size - datastart)) {
    Fail("NAXIS1..NAXIS4 = " + dims + " with BITPIX = " + std::to_string(info.bitpix) + " need " +
         Num(static_cast<double>(bytes_ld)) + " bytes of data but the file ends " +
         std::to_string(file_size - datastart) +
         " bytes after the header: truncated file, or NAXISn inconsistent with the file size");
  }
  if (naxes[0] * naxes[1] * naxes[2] > std::numeric_limits<long>::max() / naxes[3])
    Fail("NAXIS1..NAXIS4 = " + dims + ": too many pixels");
}

void CubeReader::Impl::ParseWcs(const std::array<long long, 4>& naxes) {
  io_detail::EnableWcsErrors();
  int status = 0;
  char* header = nullptr;
  int nkeys = 0;
  if (fits_hdr2str(f, 1, nullptr, 0, &header, &nkeys, &status))
    Fail("cannot read the header: " + CfitsioMessage(status));
  std::string hdr(header);
  fits_free_memory(header, &status);

  io_detail::WcsHolder wcs;
  std::string error;
  if (!io_detail::ParseHeaderWcs(hdr, nkeys, wcs, error)) {
    if (!error.empty()) Fail(error);
    Fail("no WCS keywords: no spectral axis (CTYPEn = WAVE, AWAV, FREQ or WAVN) and no STOKES axis "
         "(CTYPEn = 'STOKES')");
  }
  wcsprm& w = wcs.w;
  if (w.naxis != 4) Fail("WCSAXES = " + std::to_string(w.naxis) + ": expected 4");

  // Zero increments make the linear transformation singular; name the keyword.
  for (int i = 0; i < 4; ++i) {
    if (!(w.altlin & 2) && w.cdelt[i] == 0.0)
      Fail("CDELT" + std::to_string(i + 1) + " = 0: zero coordinate increment on axis " + std::to_string(i + 1));
  }
  std::string ctypes;
  for (int i = 0; i < 4; ++i) {
    ctypes += (i ? ", " : "") + std::string("CTYPE") + std::to_string(i + 1) + " = '" + Trim(w.ctype[i]) + "'";
  }

  // Axis roles from CTYPE.
  int spectral = -1, stokes = -1;
  for (int i = 0; i < 4; ++i) {
    const std::string t = Trim(w.ctype[i]);
    const std::string code = Upper4(w.ctype[i]);
    if (t == "STOKES") {
      if (stokes >= 0) Fail("two STOKES axes (CTYPE" + std::to_string(stokes + 1) + " and CTYPE" + std::to_string(i + 1) + ")");
      stokes = i;
    } else if (code == "WAVE" || code == "AWAV" || code == "FREQ" || code == "WAVN") {
      if (spectral >= 0)
        Fail("two spectral axes (CTYPE" + std::to_string(spectral + 1) + " and CTYPE" + std::to_string(i + 1) + ")");
      spectral = i;
    } else if (code == "VRAD" || code == "VOPT" || code == "ZOPT" || code == "VELO" || code == "ENER" ||
               code == "BETA" || code == "VAVE") {
      Fail("CTYPE" + std::to_string(i + 1) + " = '" + t +
           "': spectral type not supported; expected WAVE, AWAV, FREQ or WAVN");
    }
  }
  if (spectral < 0 && stokes < 0) Fail("no spectral axis and no STOKES axis (" + ctypes + ")");
  if (spectral < 0)
    Fail("no spectral axis: no CTYPEn is WAVE, AWAV, FREQ or WAVN (" + ctypes + ")");
  if (stokes < 0) Fail("no STOKES axis: no CTYPEn is 'STOKES' (" + ctypes + ")");

  std::vector<int> spatial;
  for (int i = 0; i < 4; ++i)
    if (i != spectral && i != stokes) spatial.push_back(i);
  info.x_axis = spatial[0];
  info.y_axis = spatial[1];
  info.spectral_axis = spectral;
  info.stokes_axis = stokes;
  for (int i = 0; i < 4; ++i) {
    CubeAxis& a = info.axes[i];
    a.fits_axis = i + 1;
    a.size = static_cast<long>(naxes[i]);
    a.ctype = Trim(w.ctype[i]);
    a.cunit = Trim(w.cunit[i]);
    a.role = i == spectral ? AxisRole::kSpectral
             : i == stokes ? AxisRole::kStokes
             : i == spatial[0] ? AxisRole::kSpatialX
                               : AxisRole::kSpatialY;
  }
  info.nx = info.axes[info.x_axis].size;
  info.ny = info.axes[info.y_axis].size;
  info.spectral_ctype = Trim(w.ctype[spectral]);

  // Translate non-standard units (e.g. 'ANGSTROM') before wcsset, as wcslib recommends.
  int fixstat = unitfix(0, &w);
  (void)fixstat;
  const int st = wcsset(&w);
  if (st != 0) Fail("invalid WCS (" + ctypes + "): " + io_detail::WcsMessage(w, st));

  // The spectral and STOKES axes must not be mixed with other axes by PCi_j (or CDi_j).
  for (int i = 0; i < 4; ++i) {
    for (int j = 0; j < 4; ++j) {
      if (i == j) continue;
      const double pc = w.pc[i * 4 + j];
      if (pc != 0.0 && (i == spectral || j == spectral || i == stokes || j == stokes)) {
        Fail("PC" + std::to_string(i + 1) + "_" + std::to_string(j + 1) + " = " + Num(pc) +
             " (or the matching CD element) couples the " + (i == spectral || j == spectral ? "spectral" : "STOKES") +
             " axis with another axis; not supported");
      }
    }
  }

  // World coordinates along the spectral and STOKES axes (other pixel coordinates at 1).
  const long nw = info.axes[spectral].size;
  const long ns = info.axes[stokes].size;
  auto world_along = [&](int axis, long n, std::vector<double>& out) {
    std::vector<double> pix(static_cast<std::size_t>(n) * 4, 1.0), img(pix.size()), world(pix.size());
    std::vector<double> phi(n), theta(n);
    std::vector<int> stat(n);
    for (long k = 0; k < n; ++k) pix[k * 4 + axis] = static_cast<double>(k + 1);
    const int s = wcsp2s(&w, static_cast<int>(n), 4, pix.data(), img.data(), phi.data(), theta.data(),
                         world.data(), stat.data());
    if (s != 0 && s != 8) Fail("cannot evaluate the WCS along axis " + std::to_string(axis + 1) + ": " + io_detail::WcsMessage(w, s));
    out.resize(n);
    for (long k = 0; k < n; ++k) {
      if (stat[k] != 0) {
        out[k] = std::numeric_limits<double>::quiet_NaN();
      } else {
        out[k] = world[k * 4 + axis];
      }
    }
  };

  // Spectral grid in nm.
  std::vector<double> sw;
  world_along(spectral, nw, sw);
  const std::string code = Upper4(w.ctype[spectral]);
  const std::string skey = "CTYPE" + std::to_string(spectral + 1) + " = '" + info.spectral_ctype + "'";
  std::vector<double> nm(nw);
  for (long k = 0; k < nw; ++k) {
    const double v = sw[k];
    double lambda_nm = std::numeric_limits<double>::quiet_NaN();
    if (code == "WAVE" || code == "AWAV") lambda_nm = v * 1e9;
    else if (code == "FREQ") lambda_nm = constants::kSpeedOfLight_m_s / v * 1e9;
    else if (code == "WAVN") lambda_nm = 1e9 / v;
    if (!std::isfinite(lambda_nm) || lambda_nm <= 0.0) {
      Fail(skey + ", CRVAL" + std::to_string(spectral + 1) + "/CDELT" + std::to_string(spectral + 1) +
           ": spectral pixel " + std::to_string(k + 1) + " gives a non-positive or invalid wavelength (" +
           Num(lambda_nm) + " nm)");
    }
    nm[k] = lambda_nm;
  }
  if (nw >= 2) {
    const bool increasing = nm[1] > nm[0];
    for (long k = 1; k < nw; ++k) {
      const bool ok = increasing ? nm[k] > nm[k - 1] : nm[k] < nm[k - 1];
      if (!ok)
        Fail(skey + ": the wavelength grid is not strictly monotonic at spectral pixels " + std::to_string(k) +
             ".." + std::to_string(k + 1) + " (" + Num(nm[k - 1]) + ", " + Num(nm[k]) + " nm)");
    }
    if (!increasing) {
      std::reverse(nm.begin(), nm.end());
      info.spectral_reversed = true;
    }
  }
  info.file_frame = code == "AWAV" ? WavelengthFrame::kAir : WavelengthFrame::kVacuum;
  info.frame = options.frame.value_or(info.file_frame);
  if (info.frame != info.file_frame) {
    try {
      nm = ConvertWavelengths_nm(nm, info.file_frame, info.frame);
    } catch (const OptionError& e) {
      Fail(skey + ": cannot convert to " + ToString(info.frame) + " wavelengths: " + e.what());
    }
  }
  info.wavelength_nm = std::move(nm);

  // STOKES codes.
  std::vector<double> sv;
  world_along(stokes, ns, sv);
  const std::string tkey = "CTYPE" + std::to_string(stokes + 1) + " = 'STOKES' (CRVAL" + std::to_string(stokes + 1) +
                           ", CDELT" + std::to_string(stokes + 1) + ", CRPIX" + std::to_string(stokes + 1) + ")";
  for (long k = 0; k < ns; ++k) {
    const double v = sv[k];
    const double r = std::round(v);
    if (!std::isfinite(v) || std::fabs(v - r) > 1e-6)
      Fail(tkey + ": pixel " + std::to_string(k + 1) + " has STOKES value " + Num(v) + "; expected an integer code");
    if (std::fabs(r) > 1000.0)  // no STOKES code of Paper I is near; and the cast below must fit an int
      Fail(tkey + ": pixel " + std::to_string(k + 1) + " has STOKES value " + Num(v) + ", outside 1..4 (I, Q, U, V)");
    const int code_v = static_cast<int>(r);
    if (const char* feed = FeedCode(code_v)) {
      Fail(tkey + ": pixel " + std::to_string(k + 1) + " has STOKES value " + std::to_string(code_v) + " (" + feed +
           "); feed correlations RR, LL, RL, LR, XX, YY, XY, YX (codes -1..-8) are not supported, only "
           "I, Q, U, V (codes 1..4)");
    }
    if (code_v < 1 || code_v > 4)
      Fail(tkey + ": pixel " + std::to_string(k + 1) + " has STOKES value " + std::to_string(code_v) +
           ", outside 1..4 (I, Q, U, V)");
    const auto p = static_cast<StokesParameter>(code_v);
    if (info.StokesIndex(p) >= 0) Fail(tkey + ": Stokes " + ToString(p) + " appears twice");
    info.stokes.push_back(p);
  }

  // 2-D WCS of the spatial axes.
  io_detail::WcsHolder sub;
  int nsub = 2;
  int axes[2] = {info.x_axis + 1, info.y_axis + 1};
  const int ss = wcssub(1, &w, &nsub, axes, &sub.w);
  if (ss != 0) Fail("cannot extract the spatial WCS of axes " + std::to_string(axes[0]) + " and " +
                    std::to_string(axes[1]) + ": " + io_detail::WcsMessage(w, ss));
  std::string cards;
  if (!io_detail::WcsToCards(sub.w, cards, error)) Fail("cannot format the spatial WCS: " + error);
  info.spatial_wcs_header = cards;
}

void CubeReader::Impl::ReadRaw(long y_begin, long y_count, bool force_float, RawCubeTile& tile) {
  if (y_begin < 0 || y_count <= 0 || y_begin + y_count > info.ny) {
    throw OptionError("CubeReader::ReadRows: rows " + std::to_string(y_begin) + " + " + std::to_string(y_count) +
                      " outside 0.." + std::to_string(info.ny));
  }
  long blc[4], trc[4], inc[4] = {1, 1, 1, 1};
  long dims[4];
  for (int i = 0; i < 4; ++i) {
    blc[i] = 1;
    trc[i] = info.axes[i].size;
  }
  blc[info.y_axis] = y_begin + 1;
  trc[info.y_axis] = y_begin + y_count;
  for (int i = 0; i < 4; ++i) dims[i] = trc[i] - blc[i] + 1;
  long stride[4];
  stride[0] = 1;
  for (int i = 1; i < 4; ++i) stride[i] = stride[i - 1] * dims[i - 1];
  const std::size_t n = static_cast<std::size_t>(stride[3] * dims[3]);

  // Read float32 (and 8/16-bit integer) data as float: exact, half the memory traffic of doubles.
  tile.as_float = force_float || info.bitpix == -32 || info.bitpix == 8 || info.bitpix == 16;
  void* buffer;
  int datatype;
  if (tile.as_float) {
    tile.data_f.resize(n);
    buffer = tile.data_f.data();
    datatype = TFLOAT;
  } else {
    tile.data_d.resize(n);
    buffer = tile.data_d.data();
    datatype = TDOUBLE;
  }
  // Integer images: BLANK pixels become NaN. Floating images: no null substitution, so NaN and Inf
  // samples arrive unchanged (cfitsio would otherwise map both to the null value).
  const float nul_f = info.bitpix > 0 ? std::numeric_limits<float>::quiet_NaN() : 0.0f;
  const double nul_d = info.bitpix > 0 ? std::numeric_limits<double>::quiet_NaN() : 0.0;
  void* nulval = tile.as_float ? const_cast<float*>(&nul_f) : static_cast<void*>(const_cast<double*>(&nul_d));
  int anynul = 0, status = 0;
  tile.file_byte_order = false;
  // The rows of a tile are contiguous runs of the file for every fixed index of the axes after y (all axes
  // before y are read whole): one fits_read_img per run, a few large reads that cfitsio passes straight
  // to the file, where fits_read_subset would copy line by line through its record buffers (~3x slower).
  // Short runs (y among the fastest axes) keep fits_read_subset.
  LONGLONG full_stride = 1;
  for (int i = 0; i < info.y_axis; ++i) full_stride *= info.axes[i].size;
  const LONGLONG run = full_stride * y_count;
  if (run >= 4096) {
    long outer = 1;
    for (int i = info.y_axis + 1; i < 4; ++i) outer *= info.axes[i].size;
    const std::size_t elem = tile.as_float ? sizeof(float) : sizeof(double);
    for (long j = 0; j < outer && status == 0; ++j) {
      // Index j over the axes after y (FITS order) -> offset of the run's first element in the file.
      LONGLONG first = full_stride * y_begin, plane = full_stride * info.axes[info.y_axis].size;
      long rest = j;
      for (int i = info.y_axis + 1; i < 4; ++i) {
        first += (rest % info.axes[i].size) * plane;
        rest /= info.axes[i].size;
        plane *= info.axes[i].size;
      }
      void* into = static_cast<char*>(buffer) + static_cast<std::size_t>(j) * static_cast<std::size_t>(run) * elem;
      if (data_fd >= 0 && tile.as_float) {  // float32 as stored: Gather swaps the bytes as it converts
        ReadDirect(first, run, static_cast<float*>(into), y_begin, y_count);
        tile.file_byte_order = true;
      } else {
        fits_read_img(f, datatype, first + 1, run, nulval, into, &anynul, &status);
      }
    }
  } else {
    fits_read_subset(f, datatype, blc, trc, inc, nulval, buffer, &anynul, &status);
  }
  if (status) {
    Fail("cannot read rows " + std::to_string(y_begin + 1) + ".." + std::to_string(y_begin + y_count) +
         " of the data unit: " + CfitsioMessage(status));
  }
  tile.y_begin = y_begin;
  tile.y_count = y_count;
  tile.nx = info.nx;
  tile.n_stokes = info.n_stokes();
  tile.n_wavelength = info.n_wavelength();
  tile.stride_x = stride[info.x_axis];
  tile.stride_y = stride[info.y_axis];
  tile.stride_spectral = stride[info.spectral_axis];
  tile.stride_stokes = stride[info.stokes_axis];
  tile.spectral_reversed = info.spectral_reversed;
  tile.v_index = info.StokesIndex(StokesParameter::kV);
  tile.v_sign = static_cast<double>(options.v_sign);
}

namespace {
// A float32 of the file (big-endian) in native order. The swap moves bytes only, so NaN payloads, -0 and
// subnormals arrive as cfitsio's swap gives them.
inline float FromFileOrder(float stored) {
  std::uint32_t u;
  std::memcpy(&u, &stored, sizeof u);
  u = __builtin_bswap32(u);
  float v;
  std::memcpy(&v, &u, sizeof v);
  return v;
}

// A sample as a double: as stored, or (kSwap) a float32 in the file's byte order.
template <bool kSwap, class S>
inline double Sample(const S* p) {
  if constexpr (kSwap) {
    static_assert(std::is_same_v<S, float>, "only float32 samples are read in the file's byte order");
    return static_cast<double>(FromFileOrder(*p));
  } else {
    return static_cast<double>(*p);
  }
}

template <class S, bool kSwap = false>
void GatherFrom(const RawCubeTile& t, const S* data, long pixel, double* out) {
  const long nw = t.n_wavelength;
  const long x = pixel % t.nx, yy = pixel / t.nx;
  const S* base = data + x * t.stride_x + yy * t.stride_y;
  const long sl = t.spectral_reversed ? -t.stride_spectral : t.stride_spectral;
  const long first = t.spectral_reversed ? (nw - 1) * t.stride_spectral : 0;
  for (int s = 0; s < t.n_stokes; ++s) {
    const S* src = base + s * t.stride_stokes + first;
    double* d = out + s * nw;
    if (s == t.v_index && t.v_sign != 1.0) {
      const double sign = t.v_sign;
      for (long k = 0; k < nw; ++k) d[k] = Sample<kSwap>(src + k * sl) * sign;
    } else if (sl == 1) {  // x * 1.0 == x: no multiplication for the other parameters
      for (long k = 0; k < nw; ++k) d[k] = Sample<kSwap>(src + k);
    } else {
      for (long k = 0; k < nw; ++k) d[k] = Sample<kSwap>(src + k * sl);
    }
  }
}

#if defined(__SSE2__)
// The bytes of each 32-bit lane reversed (SSE2 has no byte shuffle): 16-bit halves swapped, then the bytes
// inside each half.
inline __m128 ByteSwap32(__m128 v) {
  __m128i x = _mm_castps_si128(v);
  x = _mm_shufflehi_epi16(_mm_shufflelo_epi16(x, 0xB1), 0xB1);
  x = _mm_or_si128(_mm_slli_epi16(x, 8), _mm_srli_epi16(x, 8));
  return _mm_castsi128_ps(x);
}

template <bool kSwap>
inline __m128 LoadFloats(const float* p) {
  const __m128 v = _mm_loadu_ps(p);
  if constexpr (kSwap) return ByteSwap32(v);
  else return v;
}

// Planes a and b (consecutive wavelengths) at 8 neighbouring pixels into pixel j's pair d[j * record + 0, 1]:
// converted (exactly, as static_cast) and interleaved so that each pixel gets one 16-byte store.
template <bool kSwap>
inline void GatherPlanePairOf8(const float* a, const float* b, double* d, long record) {
  const __m128 a0 = LoadFloats<kSwap>(a), a1 = LoadFloats<kSwap>(a + 4);
  const __m128 b0 = LoadFloats<kSwap>(b), b1 = LoadFloats<kSwap>(b + 4);
  const __m128 as[2] = {a0, a1}, bs[2] = {b0, b1};
  for (int h = 0; h < 2; ++h) {
    const __m128d lo_a = _mm_cvtps_pd(as[h]), lo_b = _mm_cvtps_pd(bs[h]);
    const __m128d hi_a = _mm_cvtps_pd(_mm_movehl_ps(as[h], as[h])), hi_b = _mm_cvtps_pd(_mm_movehl_ps(bs[h], bs[h]));
    double* p = d + 4 * h * record;
    _mm_storeu_pd(p, _mm_unpacklo_pd(lo_a, lo_b));
    _mm_storeu_pd(p + record, _mm_unpackhi_pd(lo_a, lo_b));
    _mm_storeu_pd(p + 2 * record, _mm_unpacklo_pd(hi_a, hi_b));
    _mm_storeu_pd(p + 3 * record, _mm_unpackhi_pd(hi_a, hi_b));
  }
}
#endif

// Pixels first .. first + count - 1 into out[j * record + s * n_wavelength + w]. With the spectral axis not the
// fastest, plane by plane: each (Stokes, wavelength) plane is read at `count` neighbouring pixels (one or two
// cache lines and pages when x is the fastest axis) instead of each pixel reading one sample from every plane.
template <class S, bool kSwap = false>
void GatherBlockFrom(const RawCubeTile& t, const S* data, long first, long count, double* out) {
  const long nw = t.n_wavelength;
  const long record = static_cast<long>(t.n_stokes) * nw;
  if (t.stride_spectral == 1 || count == 1) {
    for (long j = 0; j < count; ++j) GatherFrom<S, kSwap>(t, data, first + j, out + j * record);
    return;
  }
  const long sl = t.spectral_reversed ? -t.stride_spectral : t.stride_spectral;
  const long first_k = t.spectral_reversed ? (nw - 1) * t.stride_spectral : 0;
  constexpr long kMaxBlock = 64;
  long offset[kMaxBlock];
  for (long j0 = 0; j0 < count; j0 += kMaxBlock) {
    const long m = std::min(kMaxBlock, count - j0);
    for (long j = 0; j < m; ++j) {
      const long p = first + j0 + j;
      offset[j] = (p % t.nx) * t.stride_x + (p / t.nx) * t.stride_y;
    }
    const bool contiguous = t.stride_x == 1 && offset[m - 1] - offset[0] == m - 1;
    double* const block = out + j0 * record;
    for (int s = 0; s < t.n_stokes; ++s) {
      const double sign = s == t.v_index ? t.v_sign : 1.0;
      long k = 0;
#if defined(__SSE2__)
      if constexpr (std::is_same_v<S, float>) {
        if (sign == 1.0 && contiguous && m == 8) {  // the map's block of float samples: two planes at a time
          for (; k + 1 < nw; k += 2) {
            const S* a = data + s * t.stride_stokes + first_k + k * sl + offset[0];
            // Hundreds of planes are read side by side, more streams than the hardware prefetcher follows:
            // ask for the lines the block after next will read.
            __builtin_prefetch(a + 32);
            __builtin_prefetch(a + sl + 32);
            GatherPlanePairOf8<kSwap>(a, a + sl, block + s * nw + k, record);
          }
        }
      }
#endif
      for (; k < nw; ++k) {
        const S* plane = data + s * t.stride_stokes + first_k + k * sl;
        double* d = block + s * nw + k;
        if (sign != 1.0) {
          for (long j = 0; j < m; ++j) d[j * record] = Sample<kSwap>(plane + offset[j]) * sign;
        } else if (contiguous && m == 8) {  // the map's block: unrolled
          const S* src = plane + offset[0];
          // Hundreds of planes are read side by side, more streams than the hardware prefetcher follows:
          // ask for the line the block after next will read.
          __builtin_prefetch(src + 128 / sizeof(S));
          for (long j = 0; j < 8; ++j) d[j * record] = Sample<kSwap>(src + j);
        } else if (contiguous) {  // x * 1.0 == x: no multiplication for the other parameters
          const S* src = plane + offset[0];
          for (long j = 0; j < m; ++j) d[j * record] = Sample<kSwap>(src + j);
        } else {
          for (long j = 0; j < m; ++j) d[j * record] = Sample<kSwap>(plane + offset[j]);
        }
      }
    }
  }
}
}  // namespace

void RawCubeTile::GatherBlock(long first_pixel, long count, double* out) const {
  if (as_float && file_byte_order) GatherBlockFrom<float, true>(*this, data_f.data(), first_pixel, count, out);
  else if (as_float) GatherBlockFrom(*this, data_f.data(), first_pixel, count, out);
  else GatherBlockFrom(*this, data_d.data(), first_pixel, count, out);
}

std::uint32_t RawCubeTile::Gather(long pixel, double* out) const {
  GatherSamples(pixel, out);
  std::uint32_t bad = 0;
  const long n = static_cast<long>(n_stokes) * n_wavelength;
  for (long k = 0; k < n; ++k) bad += !std::isfinite(out[k]);
  return bad;
}

void RawCubeTile::GatherSamples(long pixel, double* out) const {
  if (as_float && file_byte_order) GatherFrom<float, true>(*this, data_f.data(), pixel, out);
  else if (as_float) GatherFrom(*this, data_f.data(), pixel, out);
  else GatherFrom(*this, data_d.data(), pixel, out);
}

template <class T>
void CubeReader::Impl::Read(long y_begin, long y_count, CubeTileT<T>& tile) {
  ReadRaw(y_begin, y_count, std::is_same_v<T, float>, scratch);
  if (scratch.file_byte_order) {  // the direct read: to native floats in place before the reorder
    for (float& v : scratch.data_f) v = FromFileOrder(v);
    scratch.file_byte_order = false;
  }
  const int ns = info.n_stokes();
  const long nw = info.n_wavelength();
  const long nx = info.nx;
  const std::size_t n = static_cast<std::size_t>(nx * y_count * ns * nw);
  tile.y_begin = y_begin;
  tile.y_count = y_count;
  tile.nx = nx;
  tile.n_stokes = ns;
  tile.n_wavelength = nw;
  tile.data.resize(n);
  tile.nonfinite.assign(static_cast<std::size_t>(nx * y_count), 0u);

  const long sx = scratch.stride_x, sy = scratch.stride_y, sl = scratch.stride_spectral, sk = scratch.stride_stokes;
  const int v_index = scratch.v_index;
  const T v_sign = static_cast<T>(options.v_sign);
  const bool rev = info.spectral_reversed;
  T* dst = tile.data.data();
  // Reorder to pixel-major [pixel][stokes][wavelength] in 8 x 8 blocks of (pixels, wavelengths). Cube
  // dimensions are often powers of two, so both the per-pixel gather (stride of a whole wavelength plane) and
  // the per-plane scatter (stride of a whole pixel record) hit the same cache sets over and over; an 8 x 8
  // block touches 8 source and 8 destination lines, which the caches hold, and is ~3x faster here.
  const long npix = nx * y_count;
  pixel_offset.resize(static_cast<std::size_t>(npix));
  for (long yy = 0, p = 0; yy < y_count; ++yy)
    for (long x = 0; x < nx; ++x, ++p) pixel_offset[static_cast<std::size_t>(p)] = x * sx + yy * sy;
  const long* off = pixel_offset.data();
  const long rec = static_cast<long>(ns) * nw;  // one pixel's record in the tile
  const bool contiguous = sx == 1 && sy == nx;
  constexpr long kB = 8, kChunk = 64;  // 8 x 8 micro-blocks inside chunks of 64 pixels per thread
  const long chunks = (npix + kChunk - 1) / kChunk;
  auto reorder = [&](const auto* src) {
#pragma omp parallel for schedule(static) num_threads(ResolveThreadCount(options.threads))
  for (long c = 0; c < chunks; ++c) {
    const long c0 = c * kChunk, c1 = std::min(c0 + kChunk, npix);
    for (int s = 0; s < ns; ++s) {
      const T sign = s == v_index ? v_sign : T(1);
      const auto* splane = src + s * sk;
      for (long k0 = 0; k0 < nw; k0 += kB) {
        const long k1 = std::min(k0 + kB, nw);
        for (long p0 = c0; p0 < c1; p0 += kB) {
          const long p1 = std::min(p0 + kB, c1);
          for (long k = k0; k < k1; ++k) {
            const auto* sk_plane = splane + (rev ? nw - 1 - k : k) * sl;
            T* d = dst + s * nw + k;
            if (contiguous) {  // x then y are the fastest file axes: pixel p sits at offset p of the plane
              for (long p = p0; p < p1; ++p) d[p * rec] = static_cast<T>(sk_plane[p]) * sign;
            } else {
              for (long p = p0; p < p1; ++p) d[p * rec] = static_cast<T>(sk_plane[off[p]]) * sign;
            }
          }
        }
      }
    }
    for (long p = c0; p < c1; ++p) {
      const T* d = dst + p * rec;
      std::uint32_t bad = 0;
      for (long k = 0; k < rec; ++k) bad += !std::isfinite(d[k]);
      tile.nonfinite[static_cast<std::size_t>(p)] = bad;
    }
  }
  };
  if (scratch.as_float) {
    reorder(scratch.data_f.data());
  } else {
    reorder(scratch.data_d.data());
  }
}

CubeReader::CubeReader(const std::string& path, const CubeReadOptions& options) : impl_(std::make_unique<Impl>()) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("CubeReadOptions: " + problem);
  impl_->options = options;
  impl_->Open(path);
  if (options.scan_statistics) ScanStatistics();
}

CubeReader::~CubeReader() = default;
CubeReader::CubeReader(CubeReader&&) noexcept = default;
CubeReader& CubeReader::operator=(CubeReader&&) noexcept = default;

const CubeInfo& CubeReader::info() const { return impl_->info; }

bool CubeReader::reads_data_directly() const { return impl_->data_fd >= 0; }

long CubeReader::rows_per_tile() const {
  const CubeInfo& i = impl_->info;
  // Tile buffer plus the cfitsio read buffer, in doubles.
  const double row_bytes = 2.0 * 8.0 * static_cast<double>(i.nx) * i.n_stokes() * static_cast<double>(i.n_wavelength());
  const double budget = impl_->options.max_tile_mib * 1048576.0;
  const long rows = static_cast<long>(std::floor(budget / row_bytes));
  return std::clamp(rows, 1L, i.ny);
}

template <class T>
void CubeReader::ReadRows(long y_begin, long y_count, CubeTileT<T>& tile) {
  impl_->Read(y_begin, y_count, tile);
}

void CubeReader::ReadRowsRaw(long y_begin, long y_count, RawCubeTile& tile) {
  impl_->ReadRaw(y_begin, y_count, false, tile);
}

template <class T>
bool CubeReader::NextTile(CubeTileT<T>& tile) {
  if (impl_->next_row >= impl_->info.ny) return false;
  const long count = std::min(rows_per_tile(), impl_->info.ny - impl_->next_row);
  impl_->Read(impl_->next_row, count, tile);
  impl_->next_row += count;
  return true;
}

void CubeReader::Rewind() { impl_->next_row = 0; }

const CubeStatistics& CubeReader::ScanStatistics() {
  const CubeInfo& i = impl_->info;
  CubeStatistics st;
  const int ns = i.n_stokes();
  const double inf = std::numeric_limits<double>::infinity();
  st.min = inf;
  st.max = -inf;
  st.min_per_stokes.assign(ns, inf);
  st.max_per_stokes.assign(ns, -inf);
  CubeTile tile;
  const long saved = impl_->next_row;
  impl_->next_row = 0;
  while (NextTile(tile)) {
    const long nw = tile.n_wavelength;
    for (long p = 0; p < tile.n_pixels(); ++p) {
      if (tile.nonfinite[static_cast<std::size_t>(p)]) ++st.pixels_with_nonfinite;
      for (int s = 0; s < ns; ++s) {
        const double* d = tile.Spectrum(p, s);
        double lo = st.min_per_stokes[s], hi = st.max_per_stokes[s];
        for (long k = 0; k < nw; ++k) {
          const double v = d[k];
          if (std::isnan(v)) {
            ++st.nan_samples;
          } else if (std::isinf(v)) {
            ++st.inf_samples;
          } else {
            ++st.finite_samples;
            lo = std::min(lo, v);
            hi = std::max(hi, v);
          }
        }
        st.min_per_stokes[s] = lo;
        st.max_per_stokes[s] = hi;
      }
    }
  }
  impl_->next_row = saved;
  if (st.finite_samples == 0) {
    impl_->Fail("all " + std::to_string(st.nan_samples + st.inf_samples) +
                " data samples are NaN or Inf: no usable data");
  }
  for (int s = 0; s < ns; ++s) {
    st.min = std::min(st.min, st.min_per_stokes[s]);
    st.max = std::max(st.max, st.max_per_stokes[s]);
  }
  impl_->info.statistics = st;
  return *impl_->info.statistics;
}

CubeInfo ReadCubeInfo(const std::string& path, const CubeReadOptions& options) {
  CubeReader r(path, options);
  return r.info();
}

template void CubeReader::ReadRows<float>(long, long, CubeTileT<float>&);
template void CubeReader::ReadRows<double>(long, long, CubeTileT<double>&);
template bool CubeReader::NextTile<float>(CubeTileT<float>&);
template bool CubeReader::NextTile<double>(CubeTileT<double>&);

}  // namespace zeeline
