// Streaming read of a Stokes cube larger than 1 GiB: throughput and peak resident memory.
//
// Writes a float32 cube (512 x 520 pixels x 256 wavelengths x 4 Stokes = 1.016 GiB) with cfitsio to
// $ZEELINE_BENCH_DIR (default /tmp), reads it tile by tile with CubeReader, and deletes it. The
// figures are printed as counters (peak_rss_MiB from getrusage ru_maxrss, bytes_per_second); nothing
// is asserted on timing. Expected peak RSS: a few tens of MiB (tile budget 64 MiB includes the cfitsio
// read buffer), i.e. independent of the cube size.
#include <benchmark/benchmark.h>
#include <fitsio.h>
#include <sys/resource.h>

#include <cstdio>
#include <cstdlib>
#include <string>
#include <unistd.h>
#include <vector>

#include "zeeline/io/cube_reader.hpp"

namespace {

constexpr long kNx = 512, kNy = 520, kNw = 256, kNs = 4;

double PeakRssMiB() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return static_cast<double>(u.ru_maxrss) / 1024.0;  // Linux: KiB
}

std::string BenchPath() {
  const char* dir = std::getenv("ZEELINE_BENCH_DIR");
  return std::string(dir && *dir ? dir : "/tmp") + "/zeeline_bench_cube_" + std::to_string(getpid()) + ".fits";
}

// Writes the cube plane by plane (1 MiB buffer) so the writer does not inflate the peak RSS.
void WriteBigCube(const std::string& path) {
  fitsfile* f = nullptr;
  int status = 0;
  std::remove(path.c_str());
  fits_create_file(&f, path.c_str(), &status);
  long naxes[4] = {kNx, kNy, kNw, kNs};
  fits_create_img(f, FLOAT_IMG, 4, naxes, &status);
  const char* ctype[4] = {"HPLN-TAN", "HPLT-TAN", "AWAV", "STOKES"};
  const double crval[4] = {0.0, 0.0, 630.0, 1.0}, cdelt[4] = {1.4e-4, 1.4e-4, 0.0005, 1.0};
  for (int i = 0; i < 4; ++i) {
    const std::string n = std::to_string(i + 1);
    fits_write_key(f, TSTRING, ("CTYPE" + n).c_str(), const_cast<char*>(ctype[i]), nullptr, &status);
    double one = 1.0;
    fits_write_key(f, TDOUBLE, ("CRPIX" + n).c_str(), &one, nullptr, &status);
    fits_write_key(f, TDOUBLE, ("CRVAL" + n).c_str(), const_cast<double*>(&crval[i]), nullptr, &status);
    fits_write_key(f, TDOUBLE, ("CDELT" + n).c_str(), const_cast<double*>(&cdelt[i]), nullptr, &status);
  }
  fits_write_key(f, TSTRING, "CUNIT3", const_cast<char*>("nm"), nullptr, &status);
  std::vector<float> plane(static_cast<std::size_t>(kNx * kNy));
  for (long s = 0; s < kNs; ++s) {
    for (long w = 0; w < kNw; ++w) {
      for (std::size_t i = 0; i < plane.size(); ++i) plane[i] = static_cast<float>(s + 0.001 * w + 1e-7 * i);
      long fpixel[4] = {1, 1, w + 1, s + 1};
      fits_write_pix(f, TFLOAT, fpixel, kNx * kNy, plane.data(), &status);
    }
  }
  fits_close_file(f, &status);
  if (status) {
    char text[FLEN_STATUS];
    fits_get_errstatus(status, text);
    std::fprintf(stderr, "cube_read_bench: cannot write %s: %s\n", path.c_str(), text);
    std::exit(1);
  }
}

template <class T>
void BM_ReadCubeTiles(benchmark::State& state) {
  const std::string path = BenchPath();
  WriteBigCube(path);
  const double bytes = static_cast<double>(kNx) * kNy * kNw * kNs * 4.0;
  double checksum = 0.0;
  for (auto _ : state) {
    zeeline::CubeReader reader(path);
    zeeline::CubeTileT<T> tile;
    while (reader.NextTile(tile)) {
      checksum += static_cast<double>(tile.data[0]);
      benchmark::DoNotOptimize(tile.data.data());
    }
    state.counters["rows_per_tile"] = static_cast<double>(reader.rows_per_tile());
  }
  std::remove(path.c_str());
  state.SetBytesProcessed(static_cast<int64_t>(bytes) * state.iterations());
  state.counters["cube_GiB"] = bytes / (1024.0 * 1024.0 * 1024.0);
  state.counters["peak_rss_MiB"] = PeakRssMiB();
  benchmark::DoNotOptimize(checksum);
}

BENCHMARK(BM_ReadCubeTiles<float>)->Iterations(1)->Unit(benchmark::kSecond)->UseRealTime();
BENCHMARK(BM_ReadCubeTiles<double>)->Iterations(1)->Unit(benchmark::kSecond)->UseRealTime();

}  // namespace

BENCHMARK_MAIN();
