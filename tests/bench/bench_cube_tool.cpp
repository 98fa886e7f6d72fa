// bench_cube_tool -- helpers of tests/bench/map_speed.sh (prints figures; asserts nothing).
//
//   bench_cube_tool floor CUBE [REPEATS]
//       The I/O floor: reads every sample of the primary image as native float with cfitsio alone
//       (fits_read_img in 16 MiB pieces, in file order, into one reused buffer) and prints the best of
//       REPEATS (default 3) wall times: "floor_s <seconds> bytes <n>".
//   bench_cube_tool bare CUBE [REPEATS] [--checks]
//       A lower bound for any weak-field map of an x, y, wavelength, Stokes (I, Q, U, V) float cube: the bare
//       arithmetic of the weak-field fits alone, with the pixels in vector lanes (rows of 16 spectral planes
//       read with fits_read_subset, not timed): first and second differences of I, the five sums
//       V.dI, dI.dI, Q.d2I, U.d2I, d2I.d2I in float, then B_LOS, B_T = (aQ^2 + aU^2)^(1/4) and the azimuth.
//       No data check, continuum, noise, error bar, saturation correction or regime test. Prints the best of
//       REPEATS (default 3) kernel times on one core: "bare_kernel_s <seconds> ns_per_pixel <ns>".
//       With --checks, the same with the passes of the map's checks added (LanesKernel): "lanes_kernel_s ...".
//   bench_cube_tool reshape IN OUT ORDER [Y_REPEAT]
//       Writes a copy of the 4-axis cube IN with its axes in ORDER (a permutation of the letters of the
//       input axes named x, y, l (spectral), s (STOKES), e.g. "lsxy" = spectrum fastest) and its y axis
//       repeated Y_REPEAT times (default 1; to grow a cube with realistic content). The WCS keywords of
//       each axis (CTYPE, CUNIT, CRPIX, CRVAL, CDELT) move with it; the spatial axes keep a diagonal WCS.
//       The input is held in memory (a bench helper, not a library path).
#include <fitsio.h>

#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

namespace {

void Check(int status, const char* what) {
  if (status) {
    char msg[FLEN_STATUS];
    fits_get_errstatus(status, msg);
    std::fprintf(stderr, "bench_cube_tool: %s: %s\n", what, msg);
    std::exit(1);
  }
}

int Floor(const char* path, int repeats) {
  double best = 1e300;
  long long total = 0;
  std::vector<float> buf(4L << 20);  // 16 MiB of floats, reused
  for (int r = 0; r < repeats; ++r) {
    const auto t0 = std::chrono::steady_clock::now();
    fitsfile* f = nullptr;
    int status = 0, naxis = 0;
    fits_open_image(&f, path, READONLY, &status);
    long naxes[4] = {1, 1, 1, 1};
    fits_get_img_dim(f, &naxis, &status);
    fits_get_img_size(f, 4, naxes, &status);
    total = static_cast<long long>(naxes[0]) * naxes[1] * naxes[2] * naxes[3];
    float nul = 0.0f;
    int anynul = 0;
    for (long long first = 1; first <= total && status == 0; first += static_cast<long long>(buf.size())) {
      const long long n = std::min<long long>(static_cast<long long>(buf.size()), total - first + 1);
      fits_read_img(f, TFLOAT, first, n, &nul, buf.data(), &anynul, &status);
    }
    fits_close_file(f, &status);
    Check(status, path);
    best = std::min(best, std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
  }
  std::printf("floor_s %.4f bytes %lld\n", best, total * 4);
  return 0;
}

// The bare kernel of `bare` on one block of rows: `block` is [stokes][wavelength][row][x] (I, Q, U, V).
__attribute__((noinline)) double BareKernel(const float* block, long nx, long rows, long nl, float* __restrict svd,
                                            float* __restrict sdd, float* __restrict sqx, float* __restrict sux,
                                            float* __restrict sxx) {
  const long plane = nx * rows;
  double checksum = 0.0;
  for (long r = 0; r < rows; ++r) {
    std::fill_n(svd, nx, 0.0f);
    std::fill_n(sdd, nx, 0.0f);
    std::fill_n(sqx, nx, 0.0f);
    std::fill_n(sux, nx, 0.0f);
    std::fill_n(sxx, nx, 0.0f);
    for (long l = 1; l + 1 < nl; ++l) {
      const float* im = block + ((l - 1) * rows + r) * nx;  // I at l - 1, l, l + 1
      const float* i0 = im + plane;
      const float* ip = i0 + plane;
      const float* q = block + ((nl + l) * rows + r) * nx;
      const float* u = q + nl * plane;
      const float* v = u + nl * plane;
      for (long x = 0; x < nx; ++x) {
        const float d1 = 0.5f * (ip[x] - im[x]), d2 = ip[x] - 2.0f * i0[x] + im[x];
        svd[x] += v[x] * d1;
        sdd[x] += d1 * d1;
        sqx[x] += q[x] * d2;
        sux[x] += u[x] * d2;
        sxx[x] += d2 * d2;
      }
    }
    for (long x = 0; x < nx; ++x) {
      const float blos = -svd[x] / sdd[x], aq = sqx[x] / sxx[x], au = sux[x] / sxx[x];
      const float bt = std::sqrt(std::sqrt(aq * aq + au * au)), azimuth = 0.5f * std::atan2(au, aq);
      checksum += static_cast<double>(blos + bt + azimuth);
    }
  }
  return checksum;
}

// `bare --checks`: the passes today's per-pixel chain makes beyond the bare sums, written the same way (pixels in
// lanes, float): the data-sanity pass (range of I, Q, U, V and the maxima of |X| - I), the continuum level and
// the second-difference noise of the four spectra over the outer 10 % of samples on each side, the line
// centroid and the centre-of-gravity sums of I +- V, the core minimum and a 7-sample parabola's moments about
// the rest sample, the saturation-corrected transverse regressor with its noise, the chi2 passes of V and of
// Q, U against the fitted amplitudes, and per pixel the errors, one logarithm and two atan2 as the map makes.
// The line-core samples around each pixel's own minimum (a gather per pixel) are not modelled.
__attribute__((noinline)) double LanesKernel(const float* block, long nx, long rows, long nl, float* __restrict acc) {
  const long plane = nx * rows;
  const long edge = std::max(2L, nl / 10), mid = nl / 2;
  enum { kSvd, kSdd, kSqx, kSux, kSxx, kSxn, kOk, kEq, kEu, kEv, kIc, kNi, kNq, kNu, kNv, kWs, kLs, kNp, kDp, kNm,
         kDm, kMin, kM0, kM1, kM2, kChiV, kChiQ, kS0, kAq, kAu, kKb, kCount };
  float* a[kCount];
  for (int k = 0; k < kCount; ++k) a[k] = acc + k * nx;
  double checksum = 0.0;
  auto at = [&](int stokes, long l, long r) { return block + ((stokes * nl + l) * rows + r) * nx; };
  // Chunks of kChunk pixels of a row: the chunk's 4 x nl sample runs and its sums stay in the L2 cache (the
  // same time as whole rows here: the passes are bound by their instructions, not by memory).
  constexpr long kChunk = 128;
  for (long chunk = 0; chunk < rows * ((nx + kChunk - 1) / kChunk); ++chunk) {
    const long chunks_per_row = (nx + kChunk - 1) / kChunk;
    const long r = chunk / chunks_per_row, x0 = (chunk % chunks_per_row) * kChunk, x1 = std::min(nx, x0 + kChunk);
    for (int k = 0; k < kCount; ++k) std::fill(a[k] + x0, a[k] + x1, 0.0f);
    for (int k = kEq; k <= kEv; ++k) std::fill(a[k] + x0, a[k] + x1, -1e30f);
    std::fill(a[kMin] + x0, a[kMin] + x1, 1e30f);
    // Sanity: every sample of the four spectra.
    for (long l = 0; l < nl; ++l) {
      const float *i = at(0, l, r), *q = at(1, l, r), *u = at(2, l, r), *v = at(3, l, r);
      float *ok = a[kOk], *eq = a[kEq], *eu = a[kEu], *ev = a[kEv];
      for (long x = x0; x < x1; ++x) {
        const float lim = 1e30f;
        ok[x] += (std::fabs(i[x]) > lim) + (std::fabs(q[x]) > lim) + (std::fabs(u[x]) > lim) + (std::fabs(v[x]) > lim);
        eq[x] = std::max(eq[x], std::fabs(q[x]) - i[x]);
        eu[x] = std::max(eu[x], std::fabs(u[x]) - i[x]);
        ev[x] = std::max(ev[x], std::fabs(v[x]) - i[x]);
      }
    }
    // Continuum level and noise: two runs of `edge` samples.
    for (long run = 0; run < 2; ++run) {
      const long l0 = run == 0 ? 0 : nl - edge;
      for (long l = l0; l < l0 + edge; ++l) {
        const float* i = at(0, l, r);
        float* ic = a[kIc];
        for (long x = x0; x < x1; ++x) ic[x] += i[x];
      }
      for (long l = l0 + 1; l + 1 < l0 + edge; ++l)
        for (int p = 0; p < 4; ++p) {
          const float *m = at(p, l - 1, r), *c = at(p, l, r), *n = at(p, l + 1, r);
          float* s2 = a[kNi + p];
          for (long x = x0; x < x1; ++x) {
            const float d = m[x] - 2.0f * c[x] + n[x];
            s2[x] += d * d;
          }
        }
    }
    for (long x = x0; x < x1; ++x) a[kIc][x] /= static_cast<float>(2 * edge);
    // Window: derivatives, the B_LOS and centroid sums, the centre of gravity, the core minimum.
    for (long l = 1; l + 1 < nl; ++l) {
      const float *im = at(0, l - 1, r), *i0 = im + plane, *ip = i0 + plane, *v = at(3, l, r);
      const float wl = static_cast<float>(l);
      const float *ic = a[kIc];
      float *svd = a[kSvd], *sdd = a[kSdd], *ws = a[kWs], *ls = a[kLs], *np = a[kNp], *dp = a[kDp], *nm = a[kNm],
            *dm = a[kDm], *mn = a[kMin];
      for (long x = x0; x < x1; ++x) {
        const float d1 = 0.5f * (ip[x] - im[x]), depth = std::fabs(ic[x] - i0[x]);
        svd[x] += v[x] * d1;
        sdd[x] += d1 * d1;
        ws[x] += depth;
        ls[x] += depth * wl;
        const float ap = ic[x] - i0[x] - v[x], am = ic[x] - i0[x] + v[x];
        np[x] += wl * ap;
        dp[x] += ap;
        nm[x] += wl * am;
        dm[x] += am;
        mn[x] = std::min(mn[x], i0[x]);
      }
    }
    for (long l = mid - 3; l <= mid + 3; ++l) {
      const float* i = at(0, l, r);
      const float t = static_cast<float>(l - mid);
      float *m0 = a[kM0], *m1 = a[kM1], *m2 = a[kM2];
      for (long x = x0; x < x1; ++x) {
        m0[x] += i[x];
        m1[x] += t * i[x];
        m2[x] += t * t * i[x];
      }
    }
    for (long x = x0; x < x1; ++x) {  // saturation index from the core shape: one logarithm per pixel
      const float curvature = a[kM2][x] - 4.0f * a[kM0][x] / 7.0f;
      a[kS0][x] = a[kMin][x] * (1.0f - 0.1f * std::log(1.0f + std::fabs(curvature)));
      a[kKb][x] = -a[kSvd][x] / a[kSdd][x];
    }
    // Transverse regressor (saturation-corrected) and its noise; then the amplitudes.
    for (long l = 1; l + 1 < nl; ++l) {
      const float *im = at(0, l - 1, r), *i0 = im + plane, *ip = i0 + plane, *q = at(1, l, r), *u = at(2, l, r);
      const float *s0 = a[kS0];
      float *sqx = a[kSqx], *sux = a[kSux], *sxx = a[kSxx], *sxn = a[kSxn];
      for (long x = x0; x < x1; ++x) {
        const float d1 = 0.5f * (ip[x] - im[x]), d2 = ip[x] - 2.0f * i0[x] + im[x], t = i0[x] - s0[x];
        const float xr = d2 - 2.0f * d1 * d1 / t, g1 = 4.0f * std::fabs(d1) / t;
        sqx[x] += q[x] * xr;
        sux[x] += u[x] * xr;
        sxx[x] += xr * xr;
        sxn[x] += 1.0f + g1 * g1;
      }
    }
    for (long x = x0; x < x1; ++x) {
      a[kAq][x] = a[kSqx][x] / a[kSxx][x];
      a[kAu][x] = a[kSux][x] / a[kSxx][x];
    }
    // chi2 of V and of Q, U against the fitted amplitudes.
    for (long l = 1; l + 1 < nl; ++l) {
      const float *im = at(0, l - 1, r), *i0 = im + plane, *ip = i0 + plane, *q = at(1, l, r), *u = at(2, l, r),
                  *v = at(3, l, r);
      const float *s0 = a[kS0], *kb = a[kKb], *aq = a[kAq], *au = a[kAu];
      float *cv = a[kChiV], *cq = a[kChiQ];
      for (long x = x0; x < x1; ++x) {
        const float d1 = 0.5f * (ip[x] - im[x]), d2 = ip[x] - 2.0f * i0[x] + im[x], t = i0[x] - s0[x];
        const float xr = d2 - 2.0f * d1 * d1 / t;
        const float rv = v[x] + kb[x] * d1, rq = q[x] - xr * aq[x], ru = u[x] - xr * au[x];
        cv[x] += rv * rv;
        cq[x] += rq * rq + ru * ru;
      }
    }
    for (long x = x0; x < x1; ++x) {  // the answers and their errors, two atan2 as the map's field vector
      const float blos = a[kKb][x], aq = a[kAq][x], au = a[kAu][x];
      const float p = std::sqrt(aq * aq + au * au), sa = std::sqrt(a[kNq][x] + a[kNu][x]) / std::sqrt(a[kSxx][x]);
      const float p0 = std::sqrt(std::max(p * p - sa * sa, 0.0f)), bt = std::sqrt(p0);
      const float azimuth = 0.5f * std::atan2(au, aq), incl = std::atan2(bt, blos);
      const float vlos = a[kNp][x] / a[kDp][x] + a[kNm][x] / a[kDm][x] + a[kLs][x] / a[kWs][x];
      checksum += static_cast<double>(blos + bt + azimuth + incl + vlos + a[kChiV][x] + a[kChiQ][x] + a[kOk][x] +
                                      a[kEq][x] + a[kEu][x] + a[kEv][x] + a[kNi][x] + a[kNv][x] + a[kSxn][x]);
    }
  }
  return checksum;
}

int Bare(const char* path, int repeats, bool checks) {
  fitsfile* f = nullptr;
  int status = 0;
  long n[4] = {1, 1, 1, 1};
  fits_open_image(&f, path, READONLY, &status);
  fits_get_img_size(f, 4, n, &status);
  Check(status, path);
  const long nx = n[0], ny = n[1], nl = n[2], rows = 16;
  char ctype3[FLEN_VALUE] = "", ctype4[FLEN_VALUE] = "";
  int st = 0;
  fits_read_key(f, TSTRING, "CTYPE3", ctype3, nullptr, &st);
  fits_read_key(f, TSTRING, "CTYPE4", ctype4, nullptr, &st);
  const bool spectral = std::strstr(ctype3, "WAV") || std::strstr(ctype3, "FREQ");
  if (st || !spectral || !std::strstr(ctype4, "STOKES") || n[3] != 4 || nl < (checks ? 7 : 3)) {
    std::fprintf(stderr, "bench_cube_tool: %s: bare needs x, y, wavelength (%s), Stokes IQUV axes in that order\n",
                 path, checks ? "at least 7 samples" : "at least 3 samples");
    fits_close_file(f, &status);
    return 2;
  }
  std::vector<float> block(static_cast<std::size_t>(nx * rows * nl * 4));
  std::vector<float> sums(static_cast<std::size_t>(40 * nx));
  float* s = sums.data();
  double best = 1e300, checksum = 0.0;
  for (int rep = 0; rep < repeats; ++rep) {
    double kernel = 0.0;
    for (long y0 = 0; y0 < ny; y0 += rows) {
      const long count = std::min(rows, ny - y0);
      long first[4] = {1, y0 + 1, 1, 1}, last[4] = {nx, y0 + count, nl, 4}, step[4] = {1, 1, 1, 1};
      float nul = 0.0f;
      int anynul = 0;
      fits_read_subset(f, TFLOAT, first, last, step, &nul, block.data(), &anynul, &status);
      Check(status, path);
      const auto t0 = std::chrono::steady_clock::now();
      checksum = checks ? LanesKernel(block.data(), nx, count, nl, s)
                        : BareKernel(block.data(), nx, count, nl, s, s + nx, s + 2 * nx, s + 3 * nx, s + 4 * nx);
      kernel += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    }
    best = std::min(best, kernel);
  }
  fits_close_file(f, &status);
  std::printf("%s %.4f ns_per_pixel %.1f (checksum of the last rows %g)\n", checks ? "lanes_kernel_s" : "bare_kernel_s",
              best, 1e9 * best / static_cast<double>(nx * ny), checksum);
  return 0;
}

int Reshape(const char* in_path, const char* out_path, const std::string& order, long y_repeat) {
  fitsfile* f = nullptr;
  int status = 0;
  fits_open_image(&f, in_path, READONLY, &status);
  long n_in[4];
  int naxis = 0;
  fits_get_img_dim(f, &naxis, &status);
  fits_get_img_size(f, 4, n_in, &status);
  Check(status, in_path);
  // Axis letters of the input: the spectral and STOKES axes from CTYPE, the spatial ones x then y.
  char letters[4];
  std::array<std::array<std::string, 5>, 4> wcs;  // CTYPE, CUNIT, CRPIX, CRVAL, CDELT (card values)
  const char* keys[5] = {"CTYPE", "CUNIT", "CRPIX", "CRVAL", "CDELT"};
  int spatial = 0;
  for (int i = 0; i < 4; ++i) {
    for (int k = 0; k < 5; ++k) {
      char value[FLEN_VALUE] = {0}, comment[FLEN_COMMENT];
      int st = 0;
      const std::string key = keys[k] + std::to_string(i + 1);
      if (fits_read_keyword(f, key.c_str(), value, comment, &st) == 0) wcs[i][k] = value;
    }
    const std::string ct = wcs[i][0];
    if (ct.find("STOKES") != std::string::npos) letters[i] = 's';
    else if (ct.find("WAVE") != std::string::npos || ct.find("AWAV") != std::string::npos ||
             ct.find("FREQ") != std::string::npos || ct.find("WAVN") != std::string::npos)
      letters[i] = 'l';
    else letters[i] = spatial++ == 0 ? 'x' : 'y';
  }
  if (order.size() != 4 || !std::is_permutation(order.begin(), order.end(), std::string("xyls").begin())) {
    std::fprintf(stderr, "bench_cube_tool: ORDER '%s' must be a permutation of xyls\n", order.c_str());
    return 2;
  }
  const long long n = static_cast<long long>(n_in[0]) * n_in[1] * n_in[2] * n_in[3];
  std::vector<float> data(static_cast<std::size_t>(n));
  float nul = 0.0f;
  int anynul = 0;
  fits_read_img(f, TFLOAT, 1, n, &nul, data.data(), &anynul, &status);
  fits_close_file(f, &status);
  Check(status, in_path);

  int src_axis[4];  // output axis j comes from input axis src_axis[j]
  for (int j = 0; j < 4; ++j) src_axis[j] = static_cast<int>(std::find(letters, letters + 4, order[j]) - letters);
  long n_out[4];
  long in_stride[4] = {1, n_in[0], n_in[0] * n_in[1], n_in[0] * n_in[1] * n_in[2]};
  for (int j = 0; j < 4; ++j) n_out[j] = n_in[src_axis[j]] * (order[j] == 'y' ? y_repeat : 1);
  const long ny_in = n_in[std::find(letters, letters + 4, 'y') - letters];

  std::remove(out_path);
  fitsfile* o = nullptr;
  fits_create_file(&o, out_path, &status);
  fits_create_img(o, FLOAT_IMG, 4, n_out, &status);
  for (int j = 0; j < 4; ++j)
    for (int k = 0; k < 5; ++k) {
      if (wcs[src_axis[j]][k].empty()) continue;
      const std::string card = std::string(keys[k]) + std::to_string(j + 1);
      char rec[FLEN_CARD];
      std::snprintf(rec, sizeof rec, "%-8s= %s", card.c_str(), wcs[src_axis[j]][k].c_str());
      fits_write_record(o, rec, &status);
    }
  Check(status, out_path);
  // Output in file order, written in pieces.
  std::vector<float> piece;
  piece.reserve(4L << 20);
  long long first = 1;
  long idx[4] = {0, 0, 0, 0};
  const long long n_total = static_cast<long long>(n_out[0]) * n_out[1] * n_out[2] * n_out[3];
  for (long long e = 0; e < n_total; ++e) {
    long long src = 0;
    for (int j = 0; j < 4; ++j) {
      long v = idx[j];
      if (order[j] == 'y') v %= ny_in;
      src += static_cast<long long>(v) * in_stride[src_axis[j]];
    }
    piece.push_back(data[static_cast<std::size_t>(src)]);
    for (int j = 0; j < 4; ++j) {
      if (++idx[j] < n_out[j]) break;
      idx[j] = 0;
    }
    if (piece.size() == piece.capacity() || e + 1 == n_total) {
      fits_write_img(o, TFLOAT, first, static_cast<LONGLONG>(piece.size()), piece.data(), &status);
      first += static_cast<long long>(piece.size());
      piece.clear();
    }
  }
  fits_close_file(o, &status);
  Check(status, out_path);
  std::printf("wrote %s: %ld x %ld x %ld x %ld (%s), %.1f MiB\n", out_path, n_out[0], n_out[1], n_out[2], n_out[3],
              order.c_str(), static_cast<double>(n_total) * 4.0 / 1048576.0);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc >= 3 && std::strcmp(argv[1], "floor") == 0) return Floor(argv[2], argc > 3 ? std::atoi(argv[3]) : 3);
  if (argc >= 3 && std::strcmp(argv[1], "bare") == 0) {
    bool checks = false;
    int repeats = 3;
    for (int i = 3; i < argc; ++i) {
      if (std::strcmp(argv[i], "--checks") == 0) checks = true;
      else repeats = std::atoi(argv[i]);
    }
    if (repeats < 1) {
      std::fprintf(stderr, "bench_cube_tool: bare: REPEATS must be a whole number >= 1\n");
      return 2;
    }
    return Bare(argv[2], repeats, checks);
  }
  if (argc >= 5 && std::strcmp(argv[1], "reshape") == 0)
    return Reshape(argv[2], argv[3], argv[4], argc > 5 ? std::atol(argv[5]) : 1);
  std::fprintf(stderr, "usage: bench_cube_tool floor CUBE [REPEATS] | bare CUBE [REPEATS] [--checks] | reshape IN OUT ORDER [Y_REPEAT]\n");
  return 2;
}
