// Google Benchmark for the line-formation hot paths. Target (not asserted): one Milne-Eddington synthesis
// with the full Jacobian, 1 line, 60 wavelengths, 3-component pattern, <= 20 us on one core.
#include <benchmark/benchmark.h>

#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"
#include "zeeline/synth/unno_rachkovsky.hpp"
#include "zeeline/synth/voigt.hpp"

namespace {

using namespace zeeline;

MeLine TripletLine() {
  // Fe I 630.25 nm, 5P1 - 5D0: three components.
  MeLine line;
  line.wavelength_nm = 630.2494;
  line.pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  return line;
}

MeParameters Params() {
  MeParameters p;
  p.field_gauss = 1200.0;
  p.inclination_deg = 40.0;
  p.azimuth_deg = 20.0;
  p.vlos_kms = 0.5;
  p.doppler_width_nm = 3e-3;
  p.damping = 0.1;
  p.eta0 = 8.0;
  p.fill = 0.9;
  return p;
}

void BM_SynthesisWithJacobian_1Line60Wavelengths(benchmark::State& state) {
  const MilneEddingtonModel model({TripletLine()});
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2494, 0.06, 60);
  const MeParameters p = Params();
  StokesArray s;
  StokesJacobian j;
  for (auto _ : state) {
    model.Synthesize(w, p, s, &j);
    benchmark::DoNotOptimize(s.data());
    benchmark::DoNotOptimize(j.d[0].data());
  }
  state.SetLabel("3 components, fast Voigt, all 10 derivatives");
}
BENCHMARK(BM_SynthesisWithJacobian_1Line60Wavelengths);

void BM_SynthesisOnly_1Line60Wavelengths(benchmark::State& state) {
  const MilneEddingtonModel model({TripletLine()});
  const Eigen::ArrayXd w = UniformWavelengthGrid(630.2494, 0.06, 60);
  const MeParameters p = Params();
  StokesArray s;
  for (auto _ : state) {
    model.Synthesize(w, p, s);
    benchmark::DoNotOptimize(s.data());
  }
}
BENCHMARK(BM_SynthesisOnly_1Line60Wavelengths);

void BM_SynthesisWithJacobianAndInstrument_1Line60Wavelengths(benchmark::State& state) {
  SynthesisOptions o;
  o.instrument.gaussian_fwhm_nm = 2.5e-3;
  StokesSynthesizer synth({TripletLine()}, UniformWavelengthGrid(630.2494, 0.06, 60), o);
  const MeParameters p = Params();
  StokesArray s;
  StokesJacobian j;
  for (auto _ : state) {
    synth.Synthesize(p, s, &j);
    benchmark::DoNotOptimize(s.data());
  }
  state.SetLabel("plus FFT convolution of 4 + 40 spectra");
}
BENCHMARK(BM_SynthesisWithJacobianAndInstrument_1Line60Wavelengths);

template <FaddeevaValue (*Fn)(double, double)>
void BM_Faddeeva(benchmark::State& state) {
  double v = -10.0, a = 0.05, acc = 0.0;
  for (auto _ : state) {
    const FaddeevaValue w = Fn(a, v);
    acc += w.w_re + w.dw_im;
    v += 0.013;
    if (v > 10.0) v = -10.0;
  }
  benchmark::DoNotOptimize(acc);
  state.SetLabel("w and w' per evaluation, |v| <= 10, a = 0.05");
}
BENCHMARK(BM_Faddeeva<&FaddeevaFast>)->Name("BM_VoigtFast");
BENCHMARK(BM_Faddeeva<&FaddeevaReference>)->Name("BM_VoigtReference");

}  // namespace

BENCHMARK_MAIN();
