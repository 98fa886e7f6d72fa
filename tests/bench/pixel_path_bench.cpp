// pixel_path_bench -- the per-pixel cost of the map's weak-field path alone: no reading, no writing.
//
// Reads the first tile of a cube once (file order, as `zeeline map`), chooses the layout, then times
// FieldMapEngine::Compute on that tile `repeats` times with one thread and prints the best and the median time
// per pixel (the gather from the file-order tile and every estimator are included). On a shared machine the
// best of many short runs is the figure to compare. Prints figures only.
// Usage: pixel_path_bench CUBE.fits [repeats=15] [method=wfa] [rest_nm=630.2494]
// (the line is Fe I 630.25 nm, 5P1 - 5D0; the cube's wavelengths must be in the same frame as rest_nm).
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/maps/field_maps.hpp"

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: pixel_path_bench CUBE.fits [repeats=15] [method=wfa] [rest_nm=630.2494]\n");
    return 2;
  }
  const std::string path = argv[1];
  const int repeats = argc > 2 ? std::max(1, std::atoi(argv[2])) : 15;
  zeeline::FieldMapOptions o;
  const std::string method = argc > 3 ? argv[3] : "wfa";
  o.method = zeeline::MapMethodFromString(method);
  o.rest_wavelength_nm = argc > 4 ? std::atof(argv[4]) : 630.2494;
  o.pattern = zeeline::ComputeZeemanPattern(zeeline::ParseLevel("5P1"), zeeline::ParseLevel("5D0"));
  o.threads = 1;
  zeeline::CubeReader reader(path);
  const zeeline::CubeInfo& info = reader.info();
  zeeline::RawCubeTile tile;
  reader.ReadRowsRaw(0, std::min(reader.rows_per_tile(), info.ny), tile);
  zeeline::FieldMapEngine engine(info, o);
  engine.ChooseLayout(tile);
  zeeline::FieldMaps maps;
  engine.InitMaps(tile.y_count, maps);
  std::vector<double> us;
  for (int r = 0; r < repeats; ++r) {
    const auto t0 = std::chrono::steady_clock::now();
    engine.Compute(tile, maps);
    const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    us.push_back(s / static_cast<double>(tile.n_pixels()) * 1e6);
  }
  std::sort(us.begin(), us.end());
  const zeeline::SpectralLayout& lay = engine.layout();
  std::printf("layout: fit window +-%.4f nm, %zu continuum samples\n", lay.window_halfwidth_nm, lay.continuum.size());
  std::printf("%s: %ld pixels x %ld wavelengths x %d Stokes, method %s, 1 thread, %d runs: best %.3f us/pixel, median %.3f\n",
              path.c_str(), tile.n_pixels(), tile.n_wavelength, tile.n_stokes, method.c_str(), repeats,
              us.front(), us[us.size() / 2]);
  return 0;
}
