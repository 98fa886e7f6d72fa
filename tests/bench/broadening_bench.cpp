// broadening_bench -- cost of the line-broadening analyses (Google Benchmark): the budget of one line, the
// line-set model of three He I lines on 453 samples, and the whole width diagnosis (both fits, and the
// profile-likelihood limit when no field is required) on I, and on I with V.
#include <benchmark/benchmark.h>

#include <random>

#include "zeeline/atomic/level.hpp"
#include "zeeline/broadening/broadening_budget.hpp"
#include "zeeline/broadening/doppler_width.hpp"
#include "zeeline/broadening/width_diagnosis.hpp"

namespace {

using namespace zeeline;

struct Scene {
  WidthDiagnosisOptions options;
  Spectrum1D spectrum;
  std::vector<ModelLine> lines;

  Scene(double field_gauss, double temperature_K, bool with_v) {
    const struct { const char* name; double nm; const char* lo; const char* up; double area; } defs[] = {
        {"HeI_5016", 501.5678, "1S0", "1P1", 30.0}, {"HeI_6678", 667.8151, "1P1", "1D2", 45.0},
        {"HeI_7281", 728.1349, "1P1", "1S0", 20.0}};
    for (const auto& d : defs) {
      DiagnosisLine l;
      l.name = d.name;
      l.line.rest_wavelength_nm = d.nm;
      l.line.pattern = ComputeZeemanPattern(ParseLevel(d.lo), ParseLevel(d.up));
      options.lines.push_back(l);
      lines.push_back(l.line);
      for (int k = -75; k <= 75; ++k) spectrum.wavelength_nm.push_back(d.nm + 0.002 * k);
    }
    options.mass_u = 4.002602;
    options.instrument_fwhm_nm = 0.003;
    LineSetShape truth;
    truth.speed_kms = DopplerSpeed_kms(temperature_K, options.mass_u);
    truth.lorentz_hwhm_nm = 0.001;
    truth.field_gauss = field_gauss;
    truth.inclination_deg = 60.0;
    std::vector<std::vector<double>> pI, pV;
    LineSetProfiles(lines, truth, 0.003, spectrum.wavelength_nm, pI, pV);
    std::mt19937 rng(1);
    std::normal_distribution<double> noise(0.0, 4.0);
    spectrum.I.assign(spectrum.size(), 30.0);
    if (with_v) spectrum.V.assign(spectrum.size(), 0.0);
    for (std::size_t i = 0; i < 3; ++i)
      for (std::size_t k = 0; k < spectrum.size(); ++k) {
        spectrum.I[k] += defs[i].area * pI[i][k] + noise(rng);
        if (with_v) spectrum.V[k] += defs[i].area * pV[i][k] + noise(rng);
      }
    spectrum.source = "bench";
  }
};

void BM_Budget(benchmark::State& state) {
  BroadeningBudgetOptions o;
  o.wavelength_nm = 656.28;
  o.mass_u = 1.008;
  o.temperature_K = 1e4;
  o.pressure_Pa = 1e4;
  o.perturber_mass_u = 4.0;
  o.collision_diameter_nm = 0.3;
  o.electron_density_cm3 = 1e15;
  o.hydrogen_n_upper = 3;
  o.hydrogen_n_lower = 2;
  o.instrument_fwhm_nm = 0.003;
  for (auto _ : state) benchmark::DoNotOptimize(ComputeBroadeningBudget(o));
}
BENCHMARK(BM_Budget);

void BM_LineSetModel(benchmark::State& state) {
  Scene s(3500.0, 11604.5, true);
  LineSetShape shape;
  shape.speed_kms = 7.0;
  shape.field_gauss = 3500.0;
  std::vector<std::vector<double>> pI, pV;
  for (auto _ : state) {
    LineSetProfiles(s.lines, shape, 0.003, s.spectrum.wavelength_nm, pI, pV);
    benchmark::DoNotOptimize(pI.data());
  }
  state.counters["samples"] = static_cast<double>(s.spectrum.size());
}
BENCHMARK(BM_LineSetModel);

void BM_DiagnoseMagnetisedI(benchmark::State& state) {
  Scene s(3500.0, 11604.5, false);
  for (auto _ : state) benchmark::DoNotOptimize(DiagnoseWidths(s.spectrum, s.options));
}
BENCHMARK(BM_DiagnoseMagnetisedI)->Unit(benchmark::kMillisecond);

void BM_DiagnoseMagnetisedIV(benchmark::State& state) {
  Scene s(3500.0, 11604.5, true);
  for (auto _ : state) benchmark::DoNotOptimize(DiagnoseWidths(s.spectrum, s.options));
}
BENCHMARK(BM_DiagnoseMagnetisedIV)->Unit(benchmark::kMillisecond);

void BM_DiagnoseHotWithUpperLimit(benchmark::State& state) {
  Scene s(0.0, 3.0 * 11604.5, false);
  for (auto _ : state) benchmark::DoNotOptimize(DiagnoseWidths(s.spectrum, s.options));
}
BENCHMARK(BM_DiagnoseHotWithUpperLimit)->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
