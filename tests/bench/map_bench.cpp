// map_bench -- speed and memory of `zeeline map --method wfa` against reading the same cube with cfitsio.
//
// Writes a synthetic float32 Stokes cube (default ~537 MB: 512 x 512 pixels x 128 wavelengths x IQUV) to
// $ZEELINE_BENCH_DIR (default /tmp), then prints:
//   * the time to read it with cfitsio alone (fits_read_subset, the same row tiles the map uses),
//   * the time of a weak-field map with 1 thread and with 2 threads (library call, as `zeeline map`),
//   * peak RSS after a small cube and after the large one (it should not grow with the cube).
// The file is deleted at the end. Usage: map_bench [size_scale=1.0]
#include <fitsio.h>
#include <sys/resource.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "zeeline/io/cube_reader.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace {

double PeakRssMiB() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return static_cast<double>(u.ru_maxrss) / 1024.0;
}

double Seconds(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

void Check(int status, const char* what) {
  if (status) {
    char msg[FLEN_STATUS];
    fits_get_errstatus(status, msg);
    std::fprintf(stderr, "map_bench: %s: %s\n", what, msg);
    std::exit(1);
  }
}

// A weak-field line whose field varies across the image: written plane by plane (x fastest).
void WriteCube(const std::string& path, long nx, long ny, long nw) {
  fitsfile* f = nullptr;
  int status = 0;
  std::remove(path.c_str());
  fits_create_file(&f, path.c_str(), &status);
  long naxes[4] = {nx, ny, nw, 4};
  fits_create_img(f, FLOAT_IMG, 4, naxes, &status);
  const double l0 = 630.25, step = 0.0005, w = 0.003;
  auto key_s = [&](const char* k, const char* v) { fits_write_key_str(f, k, v, nullptr, &status); };
  auto key_d = [&](const char* k, double v) { fits_write_key_dbl(f, k, v, 12, nullptr, &status); };
  key_s("CTYPE3", "AWAV");
  key_s("CUNIT3", "nm");
  key_d("CRPIX3", 1.0);
  key_d("CRVAL3", l0 - step * static_cast<double>(nw) / 2);
  key_d("CDELT3", step);
  key_s("CTYPE4", "STOKES");
  key_d("CRPIX4", 1.0);
  key_d("CRVAL4", 1.0);
  key_d("CDELT4", 1.0);
  Check(status, "create");
  std::vector<float> plane(static_cast<std::size_t>(nx * ny));
  const double c = 1.8544e-6 * 2.5;  // Lorentz unit per gauss at 630 nm times g_eff
  for (long s = 0; s < 4; ++s)
    for (long k = 0; k < nw; ++k) {
      const double x = (l0 - step * static_cast<double>(nw) / 2 + step * static_cast<double>(k) - l0) / w;
      const double g = std::exp(-x * x), dg = -2.0 * x / w * g;
      for (long j = 0; j < ny; ++j)
        for (long i = 0; i < nx; ++i) {
          const double b = 200.0 * std::sin(0.01 * static_cast<double>(i)) * std::cos(0.013 * static_cast<double>(j));
          double v = 0.0;
          if (s == 0) v = 1.0 - 0.6 * g;
          if (s == 3) v = -c * b * 0.6 * dg;  // V = -C g B dI/dl with dI/dl = -0.6 dg
          plane[static_cast<std::size_t>(j * nx + i)] = static_cast<float>(v + 1e-3 * std::sin(1e3 * (i + 7 * j + 13 * k + 31 * s)));
        }
      long first = 1 + (s * nw + k) * nx * ny;
      fits_write_img(f, TFLOAT, first, nx * ny, plane.data(), &status);
    }
  fits_close_file(f, &status);
  Check(status, "write");
}

double ReadWithCfitsio(const std::string& path, long rows_per_tile, int datatype = TFLOAT) {
  const auto t0 = std::chrono::steady_clock::now();
  fitsfile* f = nullptr;
  int status = 0;
  fits_open_image(&f, path.c_str(), READONLY, &status);
  long naxes[4];
  int naxis = 0;
  fits_get_img_dim(f, &naxis, &status);
  fits_get_img_size(f, 4, naxes, &status);
  std::vector<double> buf(static_cast<std::size_t>(naxes[0] * rows_per_tile * naxes[2] * naxes[3]));
  for (long y0 = 0; y0 < naxes[1]; y0 += rows_per_tile) {
    const long rows = std::min(rows_per_tile, naxes[1] - y0);
    long fpix[4] = {1, y0 + 1, 1, 1}, lpix[4] = {naxes[0], y0 + rows, naxes[2], naxes[3]}, inc[4] = {1, 1, 1, 1};
    int anynul = 0;
    fits_read_subset(f, datatype, fpix, lpix, inc, nullptr, buf.data(), &anynul, &status);
  }
  fits_close_file(f, &status);
  Check(status, "read");
  return Seconds(t0);
}

double ReadWithCubeReader(const std::string& path) {
  const auto t0 = std::chrono::steady_clock::now();
  zeeline::CubeReader reader(path);
  zeeline::CubeTile tile;
  while (reader.NextTile(tile)) {
  }
  return Seconds(t0);
}

double MapWfa(const std::string& path, int threads) {
  const auto t0 = std::chrono::steady_clock::now();
  zeeline::CubeReadOptions read;
  read.threads = threads;
  zeeline::CubeReader reader(path, read);
  zeeline::FieldMapOptions o;
  o.method = zeeline::MapMethod::kWeakField;
  o.rest_wavelength_nm = 630.25;
  o.pattern = zeeline::ComputeZeemanPattern(zeeline::ParseLevel("5P1"), zeeline::ParseLevel("5D0"));
  o.window_halfwidth_nm = 0.012;
  o.threads = threads;
  zeeline::FieldMaps maps;
  zeeline::ComputeFieldMaps(reader, o, {}, maps);
  return Seconds(t0);
}

}  // namespace

int main(int argc, char** argv) {
  const double scale = argc > 1 ? std::atof(argv[1]) : 1.0;
  const char* dir_env = std::getenv("ZEELINE_BENCH_DIR");
  const std::string dir = dir_env && *dir_env ? dir_env : "/tmp";
  const std::string small = dir + "/zeeline_map_bench_small.fits", large = dir + "/zeeline_map_bench_large.fits";
  const long nw = 128;
  const long n_small = 128, n_large = static_cast<long>(512 * std::sqrt(scale));

  WriteCube(small, n_small, n_small, nw);
  const double t_small = MapWfa(small, 2);
  const double rss_small = PeakRssMiB();
  std::printf("small cube %ld x %ld x %ld x 4 (%.0f MB): wfa map %.2f s, peak RSS %.0f MiB\n", n_small, n_small, nw,
              4.0 * n_small * n_small * nw * 4 / 1e6, t_small, rss_small);
  std::remove(small.c_str());

  WriteCube(large, n_large, n_large, nw);
  const double size_mb = 4.0 * n_large * n_large * nw * 4 / 1e6;
  zeeline::CubeReader probe(large);
  const long rows = probe.rows_per_tile();
  const double t_read = ReadWithCfitsio(large, rows);
  const double t_read_double = ReadWithCfitsio(large, rows, TDOUBLE);
  const double t_reader = ReadWithCubeReader(large);
  const double t1 = MapWfa(large, 1);
  const double t2 = MapWfa(large, 2);
  const double rss_large = PeakRssMiB();
  std::printf("large cube %ld x %ld x %ld x 4 (%.0f MB), %ld rows per tile\n", n_large, n_large, nw, size_mb, rows);
  std::printf("  cfitsio read alone      %.2f s (%.0f MB/s)\n", t_read, size_mb / t_read);
  std::printf("  cfitsio read as double  %.2f s\n", t_read_double);
  std::printf("  zeeline tile reader     %.2f s (%.2f x read; reorders to pixel-major doubles)\n", t_reader, t_reader / t_read);
  std::printf("  wfa map, 1 thread       %.2f s (%.2f x read, %.0f px/s)\n", t1, t1 / t_read,
              static_cast<double>(n_large * n_large) / t1);
  std::printf("  wfa map, 2 threads      %.2f s (%.2f x read, speed-up %.2f x)\n", t2, t2 / t_read, t1 / t2);
  std::printf("  peak RSS after large    %.0f MiB (after small cube: %.0f MiB)\n", rss_large, rss_small);
  std::remove(large.c_str());
  return 0;
}
