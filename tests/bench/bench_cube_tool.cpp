// bench_cube_tool -- helpers of tests/bench/map_speed.sh (prints figures; asserts nothing).
//
//   bench_cube_tool floor CUBE [REPEATS]
//       The I/O floor: reads every sample of the primary image as native float with cfitsio alone
//       (fits_read_img in 16 MiB pieces, in file order, into one reused buffer) and prints the best of
//       REPEATS (default 3) wall times: "floor_s <seconds> bytes <n>".
//   bench_cube_tool bare CUBE [REPEATS]
//       A lower bound for any weak-field map of an x, y, wavelength, Stokes (I, Q, U, V) float cube: the bare
//       arithmetic of the weak-field fits alone, with the pixels in vector lanes (rows of 16 spectral planes
//       read with fits_read_subset, not timed): first and second differences of I, the five sums
//       V.dI, dI.dI, Q.d2I, U.d2I, d2I.d2I in float, then B_LOS, B_T = (aQ^2 + aU^2)^(1/4) and the azimuth.
//       No data check, continuum, noise, error bar, saturation correction or regime test. Prints the best of
//       REPEATS (default 3) kernel times on one core: "bare_kernel_s <seconds> ns_per_pixel <ns>".
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

int Bare(const char* path, int repeats) {
  fitsfile* f = nullptr;
  int status = 0;
  long n[4] = {1, 1, 1, 1};
  fits_open_image(&f, path, READONLY, &status);
  fits_get_img_size(f, 4, n, &status);
  Check(status, path);
  const long nx = n[0], ny = n[1], nl = n[2], rows = 16;
  if (n[3] != 4 || nl < 3) {
    std::fprintf(stderr, "bench_cube_tool: %s: bare needs x, y, wavelength, Stokes IQUV axes\n", path);
    return 2;
  }
  std::vector<float> block(static_cast<std::size_t>(nx * rows * nl * 4));
  std::vector<float> sums(static_cast<std::size_t>(5 * nx));
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
      checksum = BareKernel(block.data(), nx, count, nl, s, s + nx, s + 2 * nx, s + 3 * nx, s + 4 * nx);
      kernel += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    }
    best = std::min(best, kernel);
  }
  fits_close_file(f, &status);
  std::printf("bare_kernel_s %.4f ns_per_pixel %.1f (checksum of the last rows %g)\n", best,
              1e9 * best / static_cast<double>(nx * ny), checksum);
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
  if (argc >= 3 && std::strcmp(argv[1], "bare") == 0) return Bare(argv[2], argc > 3 ? std::atoi(argv[3]) : 3);
  if (argc >= 5 && std::strcmp(argv[1], "reshape") == 0)
    return Reshape(argv[2], argv[3], argv[4], argc > 5 ? std::atol(argv[5]) : 1);
  std::fprintf(stderr, "usage: bench_cube_tool floor CUBE [REPEATS] | bare CUBE [REPEATS] | reshape IN OUT ORDER [Y_REPEAT]\n");
  return 2;
}
