#include "zeeline/io/stokes_transform_writer.hpp"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>

#include "io/fits_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {

void WriteStokesTransformedCube(const CubeInfo& info, const std::string& output, const Eigen::Matrix4d& matrix,
                                int v_sign, const std::vector<std::string>& history, bool overwrite) {
  using io_detail::CfitsioMessage;
  using io_detail::FitsCloser;
  namespace fs = std::filesystem;
  if (fs::exists(output) && !overwrite)
    throw FitsError(output + ": exists; use --overwrite to replace it (nothing was written)");
  int pos[4];
  const StokesParameter all[4] = {StokesParameter::kI, StokesParameter::kQ, StokesParameter::kU, StokesParameter::kV};
  for (int s = 0; s < 4; ++s) {
    pos[s] = info.StokesIndex(all[s]);
    if (pos[s] < 0) throw FitsError(info.path + ": Stokes " + ToString(all[s]) + " missing; cannot rewrite the cube");
  }
  Eigen::Matrix4d file_m = matrix;
  if (v_sign < 0) {
    const Eigen::Vector4d s(1, 1, 1, -1);
    file_m = s.asDiagonal() * matrix * s.asDiagonal();
  }
  const std::string tmp = output + ".tmp-zeeline";
  std::remove(tmp.c_str());
  int status = 0;
  FitsCloser in, out;
  if (fits_open_file(&in.f, info.path.c_str(), READONLY, &status))
    throw FitsError(info.path + ": cannot open: " + CfitsioMessage(status));
  if (fits_create_file(&out.f, tmp.c_str(), &status))
    throw FitsError(output + ": cannot create: " + CfitsioMessage(status));
  auto fail = [&](const std::string& what) {
    const std::string msg = output + " (HDU " + std::to_string(info.hdu) + "): " + what + ": " + CfitsioMessage(status);
    out.Close();
    std::remove(tmp.c_str());
    throw FitsError(msg);
  };
  if (fits_copy_file(in.f, out.f, 1, 1, 1, &status)) fail("copying the input");
  if (fits_movabs_hdu(out.f, info.hdu + 1, nullptr, &status)) fail("moving to the cube");

  const int stokes_axis = info.stokes_axis;
  long naxes[4];
  for (int a = 0; a < 4; ++a) naxes[a] = info.axes[static_cast<std::size_t>(a)].size;
  int slow = 3;
  while (slow == stokes_axis) --slow;
  long slab_n = 1, stride[4];
  for (int a = 0; a < 4; ++a) {
    stride[a] = slab_n;
    slab_n *= a == slow ? 1 : naxes[a];
  }
  std::vector<double> buf(static_cast<std::size_t>(slab_n));
  const long ns = naxes[stokes_axis];
  double nulval = std::numeric_limits<double>::quiet_NaN();
  for (long k = 1; k <= naxes[slow]; ++k) {
    long fpix[4] = {1, 1, 1, 1}, lpix[4], inc[4] = {1, 1, 1, 1};
    for (int a = 0; a < 4; ++a) lpix[a] = naxes[a];
    fpix[slow] = lpix[slow] = k;
    int anynul = 0;
    if (fits_read_subset(out.f, TDOUBLE, fpix, lpix, inc, &nulval, buf.data(), &anynul, &status)) fail("reading");
    for (long e = 0; e < slab_n; ++e) {
      if ((e / stride[stokes_axis]) % ns != 0) continue;  // visit each Stokes vector once (at its first entry)
      double s[4];
      for (int q = 0; q < 4; ++q) s[q] = buf[static_cast<std::size_t>(e + pos[q] * stride[stokes_axis])];
      for (int q = 0; q < 4; ++q) {
        double v = 0.0;
        for (int j = 0; j < 4; ++j) v += file_m(q, j) * s[j];
        buf[static_cast<std::size_t>(e + pos[q] * stride[stokes_axis])] = v;
      }
    }
    if (fits_write_subset(out.f, TDOUBLE, fpix, lpix, buf.data(), &status)) fail("writing");
  }
  for (const std::string& h : history)
    if (fits_write_history(out.f, io_detail::AsciiOnly(h).c_str(), &status)) fail("writing HISTORY");
  char value[FLEN_VALUE], comment[FLEN_COMMENT];
  int st2 = 0;
  if (fits_read_keyword(out.f, "CHECKSUM", value, comment, &st2) == 0)
    if (fits_write_chksum(out.f, &status)) fail("updating CHECKSUM");
  out.Close();
  std::error_code ec;
  fs::rename(tmp, output, ec);
  if (ec) {
    std::remove(tmp.c_str());
    throw FitsError(output + ": cannot write (" + ec.message() + ")");
  }
}

}  // namespace zeeline
