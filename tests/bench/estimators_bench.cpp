// estimators_bench -- per-pixel cost of the field estimators (Google Benchmark): one 630.25 nm line,
// 128 wavelengths, thin-line spectra with noise 1e-3 (tests/maps/thin_line_model.hpp).
#include <benchmark/benchmark.h>

#include <random>

#include "maps/thin_line_model.hpp"
#include "zeeline/maps/centre_of_gravity.hpp"
#include "zeeline/maps/full_splitting.hpp"
#include "zeeline/maps/weak_field.hpp"

namespace {

using namespace zeeline;

struct Fixture {
  ZeemanPattern pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  testing::Spectra spectra;
  std::vector<std::size_t> continuum;
  explicit Fixture(double field) {
    testing::ThinLine t;
    t.field_gauss = field;
    t.inclination_deg = 40.0;
    t.azimuth_deg = 30.0;
    spectra = testing::MakeThinLine(t, pattern, testing::Grid(630.25, 0.032, 128));
    std::mt19937_64 rng(1);
    testing::AddNoise(spectra, 1e-3, rng);
    continuum = ContinuumSamples(spectra.wl.data(), 128, 630.25, 0.012);
  }
};

void BM_Continuum(benchmark::State& state) {
  Fixture f(150.0);
  for (auto _ : state) benchmark::DoNotOptimize(EstimateContinuum(f.spectra.View(), f.continuum));
}
BENCHMARK(BM_Continuum);

void BM_WeakField(benchmark::State& state) {
  Fixture f(150.0);
  const auto noise = EstimateContinuum(f.spectra.View(), f.continuum);
  WeakFieldOptions o;
  o.rest_wavelength_nm = 630.25;
  o.g_eff = f.pattern.g_eff;
  o.G = f.pattern.G;
  o.window_halfwidth_nm = 0.012;
  WeakFieldWorkspace work;
  for (auto _ : state) benchmark::DoNotOptimize(WeakFieldEstimate(f.spectra.View(), noise, o, work));
}
BENCHMARK(BM_WeakField);

void BM_CentreOfGravity(benchmark::State& state) {
  Fixture f(150.0);
  const auto noise = EstimateContinuum(f.spectra.View(), f.continuum);
  const CentreOfGravityOptions o{630.25, f.pattern.g_eff, 0.012};
  for (auto _ : state) benchmark::DoNotOptimize(CentreOfGravityEstimate(f.spectra.View(), noise, o));
}
BENCHMARK(BM_CentreOfGravity);

void BM_FullSplitting(benchmark::State& state) {
  Fixture f(3000.0);
  const auto noise = EstimateContinuum(f.spectra.View(), f.continuum);
  SplittingOptions o;
  o.rest_wavelength_nm = 630.25;
  o.g_eff = f.pattern.g_eff;
  o.window_halfwidth_nm = 0.03;
  for (auto _ : state) benchmark::DoNotOptimize(FullSplittingEstimate(f.spectra.View(), noise, o));
}
BENCHMARK(BM_FullSplitting);

}  // namespace

BENCHMARK_MAIN();
