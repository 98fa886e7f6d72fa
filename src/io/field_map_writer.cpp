#include "zeeline/io/field_map_writer.hpp"

#include <fitsio.h>
#include <wcslib/wcs.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <cmath>
#include <limits>
#include <set>

#include "io/atomic_file.hpp"
#include "io/fits_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {

using io_detail::AsciiOnly;
using io_detail::CfitsioMessage;
using io_detail::Num;

std::string StandardMapUnit(const std::string& extname) {
  std::string name = extname;
  const std::string suffix = map_names::kErrorSuffix;
  if (name.size() > suffix.size() && name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0)
    name = name.substr(0, name.size() - suffix.size());
  if (name == map_names::kField || name == map_names::kBlos || name == map_names::kBtrans) return "G";
  if (name == map_names::kInclination || name == map_names::kAzimuth) return "deg";
  if (name == map_names::kVlos) return "km/s";
  return "";
}

ImageHdu MakeMap(const std::string& extname, long nx, long ny, std::vector<double> values) {
  ImageHdu h;
  h.extname = extname;
  h.bunit = StandardMapUnit(extname);
  h.naxes = {nx, ny};
  h.values = std::move(values);
  if (extname == map_names::kQuality || extname == map_names::kMethod) h.type = FitsPixelType::kInt32;
  return h;
}

namespace {

// The FITS BITPIX (cfitsio's *_IMG) of a pixel type.
int BitpixOf(FitsPixelType type) {
  switch (type) {
    case FitsPixelType::kFloat64: return DOUBLE_IMG;
    case FitsPixelType::kInt16: return SHORT_IMG;
    case FitsPixelType::kInt32: return LONG_IMG;
    case FitsPixelType::kFloat32: break;
  }
  return FLOAT_IMG;
}

bool ValidKeyword(const std::string& k) {
  if (k.empty() || k.size() > 8) return false;
  return std::all_of(k.begin(), k.end(), [](char c) {
    return (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-' || c == '_';
  });
}

std::string ValidateProvenance(const Provenance& p) {
  for (const auto& kv : p.keywords) {
    if (!ValidKeyword(kv.key))
      return "provenance.keywords: '" + kv.key + "' is not a FITS keyword (1-8 characters A-Z 0-9 - _)";
  }
  return "";
}

struct Writer {
  fitsfile* f = nullptr;
  std::string path;
  std::string hdu = "primary HDU";
  bool longstrn_written = false;  // per HDU

  [[noreturn]] void Fail(const std::string& what) const {
    throw FitsError("'" + path + "' " + hdu + ": " + what);
  }
  void Check(int status, const std::string& what) const {
    if (status) Fail(what + ": " + CfitsioMessage(status));
  }

  void Key(const HeaderValue& hv) {
    if (!ValidKeyword(hv.key)) Fail("keyword '" + hv.key + "' is not a valid FITS keyword name");
    int status = 0;
    const std::string comment = AsciiOnly(hv.comment);
    char* cm = comment.empty() ? nullptr : const_cast<char*>(comment.c_str());
    if (const auto* s = std::get_if<std::string>(&hv.value)) {
      const std::string v = AsciiOnly(*s);
      if (v.size() > 68) {
        if (!longstrn_written) {  // HEASARC long-string convention: announce it with LONGSTRN
          fits_write_key_longwarn(f, &status);
          longstrn_written = true;
        }
        fits_write_key_longstr(f, hv.key.c_str(), v.c_str(), cm, &status);
      } else {
        fits_write_key(f, TSTRING, hv.key.c_str(), const_cast<char*>(v.c_str()), cm, &status);
      }
    } else if (const auto* d = std::get_if<double>(&hv.value)) {
      if (!std::isfinite(*d)) Fail("keyword " + hv.key + " = " + Num(*d) + ": FITS header values must be finite");
      fits_write_key_dbl(f, hv.key.c_str(), *d, -15, cm, &status);
    } else if (const auto* i = std::get_if<long long>(&hv.value)) {
      LONGLONG v = *i;
      fits_write_key(f, TLONGLONG, hv.key.c_str(), &v, cm, &status);
    } else if (const auto* b = std::get_if<bool>(&hv.value)) {
      int v = *b ? 1 : 0;
      fits_write_key(f, TLOGICAL, hv.key.c_str(), &v, cm, &status);
    }
    Check(status, "cannot write keyword " + hv.key);
  }

  void History(const std::string& text) {
    const std::string t = AsciiOnly(text);
    for (std::size_t i = 0; i < t.size() || i == 0; i += 70) {
      int status = 0;
      fits_write_history(f, t.substr(i, 70).c_str(), &status);
      Check(status, "cannot write HISTORY");
      if (t.empty()) break;
    }
  }

  void Provenance(const zeeline::Provenance& p) {
    Key({"CREATOR", std::string("zeeline " ZEELINE_VERSION), "software that wrote this file"});
    int status = 0;
    fits_write_date(f, &status);
    Check(status, "cannot write DATE");
    if (!p.method.empty()) Key({"ZLMETHOD", p.method, "field estimation method"});
    if (!p.line.empty()) Key({"ZLLINE", p.line, "spectral line used"});
    if (!p.input.empty()) Key({"ZLINPUT", p.input, "input file"});
    if (!p.command_line.empty()) Key({"ZLCMD", p.command_line, "command line"});
    for (const auto& kv : p.keywords) Key(kv);
    for (const auto& h : p.history) History(h);
  }

  // Writes WCS cards; a WCSAXES card is replaced by `wcsaxes` (when > 0) or kept.
  void WcsCards(const std::string& cards, int wcsaxes) {
    if (wcsaxes > 0) {
      int status = 0;
      int v = wcsaxes;
      fits_write_key(f, TINT, "WCSAXES", &v, const_cast<char*>("number of WCS axes"), &status);
      Check(status, "cannot write WCSAXES");
    }
    for (const auto& card : io_detail::SplitCards(cards)) {
      const std::string key = io_detail::CardKeyword(card);
      if (key == "WCSAXES" && wcsaxes > 0) continue;
      int status = 0;
      fits_write_record(f, card.c_str(), &status);
      Check(status, "cannot write WCS card '" + io_detail::Trim(card) + "'");
    }
  }

  void Image(const ImageHdu& h, const std::string& spatial_wcs) {
    ImageHeader(h, spatial_wcs);
    int status = 0;
    const auto n = static_cast<LONGLONG>(h.values.size());
    if (h.values.empty() && !h.values_f32.empty()) {  // kFloat32 only (ValidateImages)
      fits_write_img(f, TFLOAT, 1, static_cast<LONGLONG>(h.values_f32.size()), const_cast<float*>(h.values_f32.data()),
                     &status);
    } else if (h.type == FitsPixelType::kFloat32 || h.type == FitsPixelType::kFloat64) {
      fits_write_img(f, TDOUBLE, 1, n, const_cast<double*>(h.values.data()), &status);
    } else {
      const double lo = h.type == FitsPixelType::kInt16 ? -32768.0 : -2147483648.0;
      const double hi = h.type == FitsPixelType::kInt16 ? 32767.0 : 2147483647.0;
      std::vector<LONGLONG> iv(h.values.size());
      for (std::size_t i = 0; i < h.values.size(); ++i) {
        const double v = h.values[i];
        if (!(v >= lo && v <= hi) || v != std::floor(v))
          Fail("pixel " + std::to_string(i) + " = " + Num(v) + " is not an integer in " + Num(lo) + ".." + Num(hi) +
               " (integer image)");
        iv[i] = static_cast<LONGLONG>(v);
      }
      fits_write_img(f, TLONGLONG, 1, n, iv.data(), &status);
    }
    Check(status, "cannot write the image data");
  }

  // The image HDU and its header; the data follow (Image) or are written later (FieldMapFileStream).
  void ImageHeader(const ImageHdu& h, const std::string& spatial_wcs) {
    hdu = "HDU '" + h.extname + "'";
    longstrn_written = false;
    const int bitpix = BitpixOf(h.type);
    std::vector<long> naxes = h.naxes;
    int status = 0;
    fits_create_img(f, bitpix, static_cast<int>(naxes.size()), naxes.data(), &status);
    Check(status, "cannot create the image HDU");
    Key({"EXTNAME", h.extname, "map name"});
    if (!h.bunit.empty()) Key({"BUNIT", h.bunit, "physical unit of the values"});
    const std::string& wcs = !h.wcs_header.empty() ? h.wcs_header : (h.spatial_wcs ? spatial_wcs : std::string());
    if (!wcs.empty()) WcsCards(wcs, static_cast<int>(naxes.size()) != 2 ? static_cast<int>(naxes.size()) : 0);
    for (const auto& kv : h.keywords) Key(kv);
  }
};

// `layout`: headers only (FieldMapFileStream), the values must be empty.
void ValidateImages(const std::string& path, const std::vector<ImageHdu>& images, bool layout = false) {
  std::set<std::string> names;
  for (const auto& h : images) {
    const std::string where = "'" + path + "' HDU '" + h.extname + "': ";
    if (h.extname.empty() || h.extname.size() > 68 ||
        !std::all_of(h.extname.begin(), h.extname.end(),
                     [](char c) { return (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '_'; }))
      throw FitsError(where + "EXTNAME must be 1-68 characters A-Z, 0-9, '_'");
    if (!names.insert(h.extname).second) throw FitsError(where + "EXTNAME appears twice");
    if (h.naxes.empty() || h.naxes.size() > 999) throw FitsError(where + "needs 1..999 axes");
    long double n = 1;
    for (long a : h.naxes) {
      if (a <= 0) throw FitsError(where + "axis length " + std::to_string(a) + " must be > 0");
      n *= a;
    }
    if (!h.values_f32.empty() && (!h.values.empty() || h.type != FitsPixelType::kFloat32))
      throw FitsError(where + "a float32 payload needs a float32 image and no double values");
    const std::size_t count = h.values.empty() ? h.values_f32.size() : h.values.size();
    if (layout) {
      if (count != 0 || h.naxes.size() != 2 || h.type == FitsPixelType::kFloat64)
        throw FitsError(where + "a streamed map must be a 2-D float32, int16 or int32 image without values");
    } else if (n != static_cast<long double>(count))
      throw FitsError(where + "has " + std::to_string(count) + " values but the axes need " +
                      Num(static_cast<double>(n)));
    if (AsciiOnly(h.bunit) != h.bunit) throw FitsError(where + "BUNIT must be ASCII");
  }
}

void CreateFile(fitsfile** f, const std::string& temp, const std::string& path) {
  int status = 0;
  if (fits_create_diskfile(f, temp.c_str(), &status)) {
    *f = nullptr;
    throw FitsError("'" + path + "': cannot create '" + temp + "': " + CfitsioMessage(status));
  }
}

void CloseFile(Writer& w) {
  int status = 0;
  fitsfile* f = w.f;
  w.f = nullptr;
  if (fits_close_file(f, &status)) throw FitsError("'" + w.path + "': cannot finish the file: " + CfitsioMessage(status));
}

}  // namespace

std::string FitsWriteOptions::Validate() const { return ValidateProvenance(provenance); }

void WriteFieldMaps(const std::string& path, const std::vector<ImageHdu>& maps, const std::string& spatial_wcs_header,
                    const FitsWriteOptions& options) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("FitsWriteOptions: " + problem);
  if (maps.empty()) throw FitsError("'" + path + "': no maps to write");
  ValidateImages(path, maps);
  io_detail::TempOutputFile out(path, options.overwrite);
  Writer w;
  w.path = path;
  CreateFile(&w.f, out.temp_path(), path);
  io_detail::FitsCloser closer(w.f);  // closes on exceptions; the temp file is then removed
  int status = 0;
  fits_create_img(w.f, BYTE_IMG, 0, nullptr, &status);
  w.Check(status, "cannot create the primary HDU");
  w.Provenance(options.provenance);
  for (const auto& m : maps) w.Image(m, spatial_wcs_header);
  closer.release();
  CloseFile(w);
  out.Commit();
}

struct FieldMapFileStream::State {
  std::string path, spatial_wcs;
  std::vector<ImageHdu> layout;
  FitsWriteOptions options;
  bool reopened = false;
  io_detail::TempOutputFile out;
  Writer w;
  io_detail::FitsCloser closer;
  State(const std::string& p, bool overwrite, const std::string& work_path)
      : out(work_path.empty() ? io_detail::TempOutputFile(p, overwrite)
                              : io_detail::TempOutputFile(p, overwrite, work_path)) {}

  // Moves to image `hdu` of the layout; `what` names the operation in errors.
  void MoveTo(std::size_t hdu, long first_row, long rows, const char* what) {
    if (hdu >= layout.size()) throw OptionError("FieldMapFileStream: no image " + std::to_string(hdu));
    const ImageHdu& h = layout[hdu];
    w.hdu = "HDU '" + h.extname + "'";
    if (first_row < 0 || rows < 0 || first_row + rows > h.naxes[1])
      w.Fail(std::string(what) + ": rows " + std::to_string(first_row) + ".." + std::to_string(first_row + rows - 1) +
             " lie outside the image (" + std::to_string(h.naxes[1]) + " rows)");
    int status = 0;
    fits_movabs_hdu(w.f, static_cast<int>(hdu) + 2, nullptr, &status);
    w.Check(status, "cannot move to the HDU");
  }

  template <class T>
  void Write(std::size_t hdu, long first_row, long rows, const T* values, int datatype) {
    MoveTo(hdu, first_row, rows, "writing");
    const LONGLONG nx = layout[hdu].naxes[0];
    int status = 0;
    if (rows > 0)
      fits_write_img(w.f, datatype, first_row * nx + 1, rows * nx, const_cast<T*>(values), &status);
    w.Check(status, "cannot write rows " + std::to_string(first_row + 1) + ".." + std::to_string(first_row + rows));
  }

  // A reopened file must hold the layout's images, in order, with the same names, types and sizes.
  void CheckReopened() {
    int nhdu = 0, status = 0;
    fits_get_num_hdus(w.f, &nhdu, &status);
    if (status || nhdu != static_cast<int>(layout.size()) + 1)
      w.Fail("holds " + std::to_string(nhdu) + " HDUs, this run writes " + std::to_string(layout.size() + 1) +
             "; remove it and the checkpoint to start again");
    for (std::size_t i = 0; i < layout.size(); ++i) {
      const ImageHdu& h = layout[i];
      char name[FLEN_VALUE] = {0};
      int bitpix = 0, naxis = 0;
      long nax[2] = {0, 0};
      fits_movabs_hdu(w.f, static_cast<int>(i) + 2, nullptr, &status);
      fits_read_key(w.f, TSTRING, "EXTNAME", name, nullptr, &status);
      fits_get_img_param(w.f, 2, &bitpix, &naxis, nax, &status);
      const int want = BitpixOf(h.type);
      if (status || io_detail::Trim(name) != h.extname || naxis != 2 || nax[0] != h.naxes[0] || nax[1] != h.naxes[1] ||
          bitpix != want)
        w.Fail("HDU " + std::to_string(i + 1) + " is not the image " + h.extname + " this run writes" +
               (status ? " (" + CfitsioMessage(status) + ")" : std::string()) +
               "; remove it and the checkpoint to start again");
    }
  }

  // The primary header of a reopened file gets this run's provenance (CREATOR and everything after it).
  void ReplaceProvenance() {
    int status = 0, nkeys = 0;
    w.hdu = "primary HDU";
    fits_movabs_hdu(w.f, 1, nullptr, &status);
    fits_get_hdrspace(w.f, &nkeys, nullptr, &status);
    w.Check(status, "cannot read the header");
    int first = 0;
    for (int k = 1; k <= nkeys && !first; ++k) {
      char card[FLEN_CARD] = {0};
      fits_read_record(w.f, k, card, &status);
      if (io_detail::CardKeyword(card) == "CREATOR") first = k;
    }
    w.Check(status, "cannot read the header");
    for (int k = nkeys; first && k >= first; --k) fits_delete_record(w.f, k, &status);
    w.Check(status, "cannot replace the provenance keywords");
    w.longstrn_written = false;
    w.Provenance(options.provenance);
  }
};

FieldMapFileStream::FieldMapFileStream(const std::string& path, std::vector<ImageHdu> layout,
                                       const std::string& spatial_wcs_header, const FitsWriteOptions& options,
                                       const std::string& work_path, bool reopen) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("FitsWriteOptions: " + problem);
  if (layout.empty()) throw FitsError("'" + path + "': no maps to write");
  ValidateImages(path, layout, true);
  state_ = std::make_unique<State>(path, options.overwrite, work_path);
  State& st = *state_;
  st.path = path;
  st.spatial_wcs = spatial_wcs_header;
  st.layout = std::move(layout);
  st.options = options;
  st.w.path = path;
  const std::string& file = st.out.temp_path();
  int status = 0;
  if (reopen) {
    if (fits_open_diskfile(&st.w.f, file.c_str(), READWRITE, &status)) {
      st.w.f = nullptr;
      throw FitsError("'" + path + "': cannot reopen the partial map file '" + file + "': " + CfitsioMessage(status) +
                      "; remove the checkpoint to start again");
    }
    st.closer.f = st.w.f;
    st.w.path = file;
    st.CheckReopened();
    st.w.path = path;
    st.reopened = true;
    return;
  }
  if (!work_path.empty()) ::remove(file.c_str());  // a stale partial file of an earlier run
  CreateFile(&st.w.f, file, path);
  st.closer.f = st.w.f;  // closes on exceptions; a temporary file is then removed
  fits_create_img(st.w.f, BYTE_IMG, 0, nullptr, &status);
  st.w.Check(status, "cannot create the primary HDU");
  st.w.Provenance(options.provenance);
  for (const auto& h : st.layout) st.w.ImageHeader(h, spatial_wcs_header);
  // Every data area now exists in cfitsio's view; the last image's is reserved by writing its last pixel
  // (the file then has its full size, so a partial file reopened later reads as a whole).
  const ImageHdu& last = st.layout.back();
  st.w.hdu = "HDU '" + last.extname + "'";
  const LONGLONG n = static_cast<LONGLONG>(last.naxes[0]) * last.naxes[1];
  double zero = 0.0;  // cfitsio converts it to the image's type
  fits_write_img(st.w.f, TDOUBLE, n, 1, &zero, &status);
  st.w.Check(status, "cannot reserve the image data");
}

FieldMapFileStream::~FieldMapFileStream() = default;

const std::vector<ImageHdu>& FieldMapFileStream::layout() const { return state_->layout; }

void FieldMapFileStream::WriteRows(std::size_t hdu, long first_row, long rows, const float* values) {
  if (state_->layout.at(hdu).type != FitsPixelType::kFloat32) throw OptionError("FieldMapFileStream: float rows for an integer image");
  state_->Write(hdu, first_row, rows, values, TFLOAT);
}

void FieldMapFileStream::WriteRows(std::size_t hdu, long first_row, long rows, const std::int16_t* values) {
  if (state_->layout.at(hdu).type != FitsPixelType::kInt16) throw OptionError("FieldMapFileStream: int16 rows for another image type");
  state_->Write(hdu, first_row, rows, values, TSHORT);
}

void FieldMapFileStream::WriteRows(std::size_t hdu, long first_row, long rows, const std::int32_t* values) {
  if (state_->layout.at(hdu).type != FitsPixelType::kInt32) throw OptionError("FieldMapFileStream: int32 rows for another image type");
  state_->Write(hdu, first_row, rows, values, TINT);
}

void FieldMapFileStream::ReadRows(std::size_t hdu, long first_row, long rows, float* values) {
  State& st = *state_;
  st.MoveTo(hdu, first_row, rows, "reading");
  const LONGLONG nx = st.layout[hdu].naxes[0];
  float nulval = std::numeric_limits<float>::quiet_NaN();
  int anynul = 0, status = 0;
  if (rows > 0) fits_read_img(st.w.f, TFLOAT, first_row * nx + 1, rows * nx, &nulval, values, &anynul, &status);
  st.w.Check(status, "cannot read rows " + std::to_string(first_row + 1) + ".." + std::to_string(first_row + rows));
}

void FieldMapFileStream::Flush() {
  State& st = *state_;
  int status = 0;
  fits_flush_buffer(st.w.f, 0, &status);
  st.w.Check(status, "cannot write the file");
}

void FieldMapFileStream::Commit(const std::vector<bool>& keep) {
  State& st = *state_;
  if (keep.size() != st.layout.size()) throw OptionError("FieldMapFileStream::Commit: one keep flag per image");
  if (std::none_of(keep.begin(), keep.end(), [](bool k) { return k; })) throw FitsError("'" + st.path + "': no maps to write");
  if (st.reopened) st.ReplaceProvenance();
  // Last first: a deletion moves the HDUs after it, the ones before keep their numbers.
  for (std::size_t i = st.layout.size(); i-- > 0;) {
    if (keep[i]) continue;
    st.w.hdu = "HDU '" + st.layout[i].extname + "'";
    int status = 0;
    fits_movabs_hdu(st.w.f, static_cast<int>(i) + 2, nullptr, &status);
    fits_delete_hdu(st.w.f, nullptr, &status);
    st.w.Check(status, "cannot remove the empty map");
  }
  st.closer.release();
  CloseFile(st.w);
  st.out.Commit();
}

void WriteStokesCube(const std::string& path, const StokesCubeData& data, const std::vector<double>& wavelength_nm,
                     WavelengthFrame frame, const std::string& spatial_wcs_header,
                     const std::vector<ImageHdu>& extra_hdus, const FitsWriteOptions& options) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("FitsWriteOptions: " + problem);
  const std::string where = "'" + path + "' Stokes cube: ";
  const long nx = data.nx, ny = data.ny;
  const long nw = static_cast<long>(wavelength_nm.size());
  const long ns = static_cast<long>(data.stokes.size());
  if (nx <= 0 || ny <= 0 || nw <= 0 || ns <= 0)
    throw FitsError(where + "empty cube (nx=" + std::to_string(nx) + ", ny=" + std::to_string(ny) +
                    ", wavelengths=" + std::to_string(nw) + ", stokes=" + std::to_string(ns) + ")");
  if (static_cast<long double>(data.values.size()) != static_cast<long double>(nx) * ny * ns * nw)
    throw FitsError(where + "has " + std::to_string(data.values.size()) + " values, expected nx*ny*stokes*wavelengths = " +
                    std::to_string(nx * ny * ns * nw));
  // Uniform increasing wavelength grid.
  const double step = nw > 1 ? (wavelength_nm[nw - 1] - wavelength_nm[0]) / static_cast<double>(nw - 1) : 0.001;
  if (!(step > 0.0) || !std::isfinite(wavelength_nm[0]))
    throw FitsError(where + "wavelength grid must be finite and strictly increasing");
  for (long k = 0; k < nw; ++k) {
    const double expected = wavelength_nm[0] + step * static_cast<double>(k);
    if (!(std::fabs(wavelength_nm[k] - expected) <= 1e-6 * step))
      throw FitsError(where + "wavelength grid is not uniform (pixel " + std::to_string(k + 1) + " = " +
                      Num(wavelength_nm[k]) + " nm, expected " + Num(expected) + " nm); a linear CDELT3 needs a uniform grid");
  }
  // STOKES codes as an arithmetic sequence.
  const int s0 = static_cast<int>(data.stokes[0]);
  const int sstep = ns > 1 ? static_cast<int>(data.stokes[1]) - s0 : 1;
  for (long s = 0; s < ns; ++s) {
    if (static_cast<int>(data.stokes[s]) != s0 + sstep * static_cast<int>(s) || sstep == 0)
      throw FitsError(where + "Stokes order must be an arithmetic sequence of codes (e.g. I,Q,U,V or I,V) for a linear "
                      "STOKES axis");
  }
  ValidateImages(path, extra_hdus);

  io_detail::TempOutputFile out(path, options.overwrite);
  Writer w;
  w.path = path;
  CreateFile(&w.f, out.temp_path(), path);
  io_detail::FitsCloser closer(w.f);
  long naxes[4] = {nx, ny, nw, ns};
  int status = 0;
  fits_create_img(w.f, FLOAT_IMG, 4, naxes, &status);
  w.Check(status, "cannot create the 4-D primary HDU");
  if (!data.bunit.empty()) w.Key({"BUNIT", data.bunit, "physical unit of the values"});
  w.WcsCards(spatial_wcs_header, 4);
  if (spatial_wcs_header.empty()) {
    // WcsCards wrote WCSAXES only; spatial axes default to pixel coordinates.
  }
  const bool air = frame == WavelengthFrame::kAir;
  w.Key({"CTYPE3", std::string(air ? "AWAV" : "WAVE"), air ? "air wavelength" : "vacuum wavelength"});
  w.Key({"CUNIT3", std::string("nm"), "wavelength unit"});
  w.Key({"CRPIX3", 1.0, "reference pixel"});
  w.Key({"CRVAL3", wavelength_nm[0], "wavelength at the reference pixel"});
  w.Key({"CDELT3", step, "wavelength step"});
  w.Key({"CTYPE4", std::string("STOKES"), "1..4 = I, Q, U, V (FITS WCS Paper I)"});
  w.Key({"CRPIX4", 1.0, "reference pixel"});
  w.Key({"CRVAL4", static_cast<double>(s0), "Stokes code at the reference pixel"});
  w.Key({"CDELT4", static_cast<double>(sstep), "Stokes code step"});
  w.Provenance(options.provenance);

  // Planes in file order (x fastest), gathered from the pixel-major layout.
  std::vector<float> plane(static_cast<std::size_t>(nx * ny));
  for (long s = 0; s < ns; ++s) {
    for (long k = 0; k < nw; ++k) {
      for (long p = 0; p < nx * ny; ++p) plane[static_cast<std::size_t>(p)] = data.values[static_cast<std::size_t>((p * ns + s) * nw + k)];
      long fpixel[4] = {1, 1, k + 1, s + 1};
      fits_write_pix(w.f, TFLOAT, fpixel, nx * ny, plane.data(), &status);
      w.Check(status, "cannot write the cube data");
    }
  }
  for (const auto& h : extra_hdus) w.Image(h, spatial_wcs_header);
  closer.release();
  CloseFile(w);
  out.Commit();
}

std::string MakeHelioprojectiveWcs(long nx, long ny, double arcsec_per_pixel, double x0_arcsec, double y0_arcsec) {
  if (!(arcsec_per_pixel > 0.0) || nx <= 0 || ny <= 0)
    throw OptionError("MakeHelioprojectiveWcs: need nx, ny > 0 and arcsec_per_pixel > 0 (got " + std::to_string(nx) +
                      ", " + std::to_string(ny) + ", " + Num(arcsec_per_pixel) + ")");
  io_detail::WcsHolder h;
  wcsini(1, 2, &h.w);
  std::snprintf(h.w.ctype[0], 72, "%s", "HPLN-TAN");
  std::snprintf(h.w.ctype[1], 72, "%s", "HPLT-TAN");
  std::snprintf(h.w.cunit[0], 72, "%s", "arcsec");
  std::snprintf(h.w.cunit[1], 72, "%s", "arcsec");
  h.w.crpix[0] = 0.5 * static_cast<double>(nx + 1);
  h.w.crpix[1] = 0.5 * static_cast<double>(ny + 1);
  h.w.cdelt[0] = arcsec_per_pixel;
  h.w.cdelt[1] = arcsec_per_pixel;
  h.w.crval[0] = x0_arcsec;
  h.w.crval[1] = y0_arcsec;
  std::string cards, error;
  if (!io_detail::WcsToCards(h.w, cards, error)) throw OptionError("MakeHelioprojectiveWcs: " + error);
  return cards;
}

std::vector<ImageHdu> ReadImageHdus(const std::string& path) {
  fitsfile* f = nullptr;
  int status = 0;
  if (fits_open_file(&f, path.c_str(), READONLY, &status))
    throw FitsError("'" + path + "': cannot open as FITS: " + CfitsioMessage(status));
  io_detail::FitsCloser closer(f);
  int nhdu = 0;
  fits_get_num_hdus(f, &nhdu, &status);
  std::vector<ImageHdu> out;
  for (int i = 1; i <= nhdu; ++i) {
    int type = 0;
    status = 0;
    if (fits_movabs_hdu(f, i, &type, &status))
      throw FitsError("'" + path + "' HDU " + std::to_string(i - 1) + ": " + CfitsioMessage(status));
    if (type != IMAGE_HDU) continue;
    int naxis = 0;
    fits_get_img_dim(f, &naxis, &status);
    if (naxis != 2) continue;
    const std::string where = "'" + path + "' HDU " + std::to_string(i - 1);  // file.fits[n] index
    long long nax[2] = {0, 0};
    int bitpix = 0;
    fits_get_img_sizell(f, 2, nax, &status);
    fits_get_img_type(f, &bitpix, &status);
    if (status) throw FitsError(where + ": cannot read NAXISn/BITPIX: " + CfitsioMessage(status));
    if (nax[0] <= 0 || nax[1] <= 0) continue;
    LONGLONG headstart = 0, datastart = 0, dataend = 0;
    fits_get_hduaddrll(f, &headstart, &datastart, &dataend, &status);
    const long double need = static_cast<long double>(nax[0]) * nax[1] * (std::abs(bitpix) / 8);
    if (need > static_cast<long double>(f->Fptr->logfilesize - datastart))
      throw FitsError(where + ": NAXIS1 x NAXIS2 = " + std::to_string(nax[0]) + " x " + std::to_string(nax[1]) +
                      " does not fit in the file: truncated file, or NAXISn inconsistent with the file size");
    ImageHdu h;
    char value[FLEN_VALUE] = {0};
    int st = 0;
    if (fits_read_key(f, TSTRING, "EXTNAME", value, nullptr, &st) == 0) h.extname = io_detail::Trim(value);
    else h.extname = "HDU" + std::to_string(i - 1);  // the file.fits[n] index
    st = 0;
    if (fits_read_key(f, TSTRING, "BUNIT", value, nullptr, &st) == 0) h.bunit = io_detail::Trim(value);
    // The keywords the quicklooks use: code names of METHOD (METHn) and QUALITY (QBITn), the azimuth range
    // (AZRANGE) and detection threshold (DETSIG) written with B_AZIM.
    std::vector<std::string> names = {"AZRANGE", "DETSIG"};
    for (int k = 0; k < 32; ++k) names.push_back("QBIT" + std::to_string(k));
    for (int k = 0; k < 10; ++k) names.push_back("METH" + std::to_string(k));
    for (const std::string& key : names) {
      char text[FLEN_VALUE] = {0}, comment[FLEN_COMMENT] = {0};
      st = 0;
      if (fits_read_keyword(f, key.c_str(), text, comment, &st) != 0) continue;
      const std::string v = io_detail::Trim(text);
      if (!v.empty() && v.front() == '\'') {
        char s[FLEN_VALUE] = {0};
        st = 0;
        if (fits_read_key(f, TSTRING, key.c_str(), s, nullptr, &st) == 0) h.keywords.push_back({key, io_detail::Trim(s), comment});
      } else {
        double d = 0.0;
        st = 0;
        if (fits_read_key(f, TDOUBLE, key.c_str(), &d, nullptr, &st) == 0) h.keywords.push_back({key, d, comment});
      }
    }
    fits_clear_errmsg();
    h.naxes = {static_cast<long>(nax[0]), static_cast<long>(nax[1])};
    h.type = bitpix == DOUBLE_IMG ? FitsPixelType::kFloat64
             : bitpix == FLOAT_IMG ? FitsPixelType::kFloat32
             : bitpix == SHORT_IMG || bitpix == BYTE_IMG ? FitsPixelType::kInt16
                                                         : FitsPixelType::kInt32;
    h.values.resize(static_cast<std::size_t>(nax[0] * nax[1]));
    double nulval = std::numeric_limits<double>::quiet_NaN();
    int anynul = 0;
    if (fits_read_img(f, TDOUBLE, 1, static_cast<LONGLONG>(h.values.size()), &nulval, h.values.data(), &anynul, &status))
      throw FitsError(where + " (EXTNAME '" + h.extname + "'): cannot read the data: " + CfitsioMessage(status));
    char* header = nullptr;
    int nkeys = 0;
    if (fits_hdr2str(f, 1, nullptr, 0, &header, &nkeys, &status) == 0) {
      std::string hdr(header);
      fits_free_memory(header, &status);
      io_detail::WcsHolder wcs;
      std::string error;
      if (io_detail::ParseHeaderWcs(hdr, nkeys, wcs, error)) {
        std::string cards;
        if (io_detail::WcsToCards(wcs.w, cards, error)) h.wcs_header = cards;
      }
    }
    status = 0;
    out.push_back(std::move(h));
  }
  return out;
}

}  // namespace zeeline
