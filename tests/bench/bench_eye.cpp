// Eye and noise estimates of a six-stage post-amplifier (invented: two T-coil, two shunt-peaked
// and two plain stages at 56 Gb/s), the size the planner evaluates in its inner loop.
#include <benchmark/benchmark.h>

#include <numbers>

#include "models/chain.hpp"
#include "models/eye.hpp"
#include "models/noise.hpp"
#include "models/peaking_design.hpp"

namespace {

using namespace peakplan;

Chain six_stages() {
  Chain chain;
  chain.name = "bench six-stage";
  chain.r_source = 50.0;
  const LoadKind kinds[] = {LoadKind::tcoil, LoadKind::shunt, LoadKind::plain,
                            LoadKind::shunt, LoadKind::plain, LoadKind::tcoil};
  for (int i = 0; i < 6; ++i) {
    ChainStage s;
    s.id = "a" + std::to_string(i + 1);
    s.driver = i - 1;
    s.c_in = 25e-15;
    s.circuit.kind = kinds[i];
    s.circuit.gm = 0.03;
    s.circuit.rd = 90.0;
    s.circuit.c_out = 10e-15;
    s.c_load = i == 5 ? 40e-15 : 0.0;
    chain.stages.push_back(s);
  }
  fill_node_capacitances(chain);
  for (auto& s : chain.stages) {
    auto& c = s.circuit;
    if (c.kind == LoadKind::shunt) {
      c.l = inductance_for_m(0.35, c.rd, c.c_out + c.c_node);
    } else if (c.kind == LoadKind::tcoil) {
      const auto d = tcoil_for_zeta(0.8, c.rd, c.c_node);
      c.l1 = c.l2 = d.l_half;
      c.k = d.k;
      c.cb = d.cb;
    }
  }
  return chain;
}

Signal signal(PrbsKind pattern, Modulation modulation) {
  Signal s;
  s.bit_rate = 56e9;
  s.pattern = pattern;
  s.modulation = modulation;
  s.input_rise = 6e-12;
  return s;
}

void bm_prbs15_eye_six_stages(benchmark::State& state) {
  const Chain chain = six_stages();
  const Cascade cascade = output_cascade(chain, 5);
  const auto sig = signal(PrbsKind::prbs15, Modulation::nrz);
  for (auto _ : state) benchmark::DoNotOptimize(estimate_eye(cascade, sig));
}
BENCHMARK(bm_prbs15_eye_six_stages)->Unit(benchmark::kMillisecond);

void bm_prbs15_pam4_eye_six_stages(benchmark::State& state) {
  const Cascade cascade = output_cascade(six_stages(), 5);
  const auto sig = signal(PrbsKind::prbs15, Modulation::pam4);
  for (auto _ : state) benchmark::DoNotOptimize(estimate_eye(cascade, sig));
}
BENCHMARK(bm_prbs15_pam4_eye_six_stages)->Unit(benchmark::kMillisecond);

void bm_prbs7_eye_six_stages(benchmark::State& state) {
  const Cascade cascade = output_cascade(six_stages(), 5);
  const auto sig = signal(PrbsKind::prbs7, Modulation::nrz);
  for (auto _ : state) benchmark::DoNotOptimize(estimate_eye(cascade, sig));
}
BENCHMARK(bm_prbs7_eye_six_stages)->Unit(benchmark::kMillisecond);

void bm_statistical_eye_six_stages(benchmark::State& state) {
  const Cascade cascade = output_cascade(six_stages(), 5);
  const auto sig = signal(PrbsKind::prbs7, Modulation::nrz);
  const auto eye = estimate_eye(cascade, sig);
  for (auto _ : state) benchmark::DoNotOptimize(statistical_eye(eye.pulse, eye.prbs, sig, 2e-3));
}
BENCHMARK(bm_statistical_eye_six_stages)->Unit(benchmark::kMillisecond);

void bm_noise_summary_six_stages(benchmark::State& state) {
  const Chain chain = six_stages();
  for (auto _ : state) {
    const ChainNoise noise(chain, 5);
    benchmark::DoNotOptimize(summarise_noise(noise));
  }
}
BENCHMARK(bm_noise_summary_six_stages)->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
