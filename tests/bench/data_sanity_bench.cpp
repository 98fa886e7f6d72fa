// data_sanity_bench -- per-pixel cost of the map's data-sanity check (maps/data_sanity.hpp) beside the weak-field
// estimate it precedes (Google Benchmark): one 630.25 nm line, 128 wavelengths, thin-line spectra with noise
// 1e-3 (tests/maps/thin_line_model.hpp), the check passing (every test run) and failing early (an Inf sample).
#include <benchmark/benchmark.h>

#include <cmath>
#include <random>

#include "maps/thin_line_model.hpp"
#include "zeeline/maps/data_sanity.hpp"
#include "zeeline/maps/weak_field.hpp"

namespace {

using namespace zeeline;

struct Fixture {
  ZeemanPattern pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  testing::Spectra spectra;
  std::vector<std::size_t> continuum;
  DataSanityLimits limits = MakeSanityLimits(-32, 1.0, 0.0);
  Fixture() {
    testing::ThinLine t;
    t.field_gauss = 150.0;
    t.inclination_deg = 40.0;
    t.azimuth_deg = 30.0;
    spectra = testing::MakeThinLine(t, pattern, testing::Grid(630.25, 0.032, 128));
    std::mt19937_64 rng(1);
    testing::AddNoise(spectra, 1e-3, rng);
    continuum = ContinuumSamples(spectra.wl.data(), 128, 630.25, 0.012);
  }
};

void BM_SanityCleanPixel(benchmark::State& state) {
  Fixture f;
  for (auto _ : state) benchmark::DoNotOptimize(CheckPixelSanity(f.spectra.View(), f.continuum, f.limits));
}
BENCHMARK(BM_SanityCleanPixel);

void BM_SanityInfInV(benchmark::State& state) {
  Fixture f;
  f.spectra.V[64] = HUGE_VAL;
  for (auto _ : state) benchmark::DoNotOptimize(CheckPixelSanity(f.spectra.View(), f.continuum, f.limits));
}
BENCHMARK(BM_SanityInfInV);

void BM_WeakFieldForComparison(benchmark::State& state) {
  Fixture f;
  const auto noise = EstimateContinuum(f.spectra.View(), f.continuum);
  WeakFieldOptions o;
  o.rest_wavelength_nm = 630.25;
  o.g_eff = f.pattern.g_eff;
  o.G = f.pattern.G;
  o.window_halfwidth_nm = 0.012;
  WeakFieldWorkspace work;
  for (auto _ : state) benchmark::DoNotOptimize(WeakFieldEstimate(f.spectra.View(), noise, o, work));
}
BENCHMARK(BM_WeakFieldForComparison);

}  // namespace

BENCHMARK_MAIN();
