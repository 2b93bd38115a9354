// How long the analysis of a typical chain takes: the figures the planner's budget rests on.
#include <benchmark/benchmark.h>

#include <numbers>

#include "models/analysis.hpp"
#include "planner/input/chain_graph.hpp"

namespace {

// A six-stage chain mixing every kind, from the shipped demo scenario's values.
peakplan::Chain six_stage_chain() {
  using namespace peakplan;
  Chain chain;
  chain.name = "bench";
  chain.r_source = 50.0;
  const LoadKind kinds[] = {LoadKind::tcoil, LoadKind::shunt, LoadKind::series,
                            LoadKind::shunt, LoadKind::tcoil, LoadKind::plain};
  for (int i = 0; i < 6; ++i) {
    ChainStage s;
    s.id = "s" + std::to_string(i + 1);
    s.driver = i - 1;
    s.c_in = 25e-15;
    auto& c = s.circuit;
    c.kind = kinds[i];
    c.gm = 0.04;
    c.rd = 95.0;
    c.c_out = 14e-15;
    c.l = 130e-12;
    c.r_l = 4.0;
    c.l1 = 110e-12;
    c.l2 = 120e-12;
    c.k = 0.45;
    c.cb = 4e-15;
    c.r_l1 = c.r_l2 = 3.0;
    chain.stages.push_back(s);
  }
  chain.stages.back().c_load = 20e-15;
  fill_node_capacitances(chain);
  return chain;
}

// analyze as the CLI runs it: 2000 frequency points by exact nodal solves, step response, metrics.
void full_analysis(benchmark::State& state) {
  const auto chain = six_stage_chain();
  peakplan::AnalysisOptions options;
  options.points = 2000;
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::analyze_chain(chain, options));
}
BENCHMARK(full_analysis)->Unit(benchmark::kMillisecond);

// The same chain behind a photodiode and a one-cell tia (the first stage replaced): the tia is
// one nodal circuit of two nodes, and a current-driven chain adds its noise and receiver figures
// even without a [signal]. Argument: 0 without a signal, 1 with a 25.78 Gb/s NRZ PRBS7 signal.
void full_analysis_receiver(benchmark::State& state) {
  auto chain = six_stage_chain();
  chain.r_source = 0.0;
  chain.photodiode = peakplan::Photodiode{150e-15, 0.8, 10e-9};
  auto& tia = chain.stages.front().circuit;
  tia.kind = peakplan::LoadKind::tia;
  tia.rf = 600.0;
  tia.rd = 200.0;
  peakplan::fill_node_capacitances(chain);
  peakplan::AnalysisOptions options;
  options.points = 2000;
  if (state.range(0)) {
    peakplan::Signal signal;
    signal.bit_rate = 25.78125e9;
    options.signal = signal;
  }
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::analyze_chain(chain, options));
}
BENCHMARK(full_analysis_receiver)->Arg(0)->Arg(1)->Unit(benchmark::kMillisecond);

// The same with a 56 Gb/s NRZ PRBS7 eye, its noise and a swing (Q, BER, eye at the BER): what
// `analyze --json --points 2000` of a six-stage chain with a [signal] does in the process.
void full_analysis_prbs7(benchmark::State& state) {
  const auto chain = six_stage_chain();
  peakplan::AnalysisOptions options;
  options.points = 2000;
  peakplan::Signal signal;
  signal.bit_rate = 56e9;
  signal.swing = 0.02;
  options.signal = signal;
  options.swing_given = true;
  options.threads = static_cast<int>(state.range(0));
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::analyze_chain(chain, options));
}
// Argument: threads (analyze uses every core).
BENCHMARK(full_analysis_prbs7)->Arg(1)->Arg(2)->Unit(benchmark::kMillisecond)->UseRealTime();

// The eye and its noise without a swing: no Q, BER or eye at the BER (the statistical eye).
void full_analysis_prbs7_no_swing(benchmark::State& state) {
  const auto chain = six_stage_chain();
  peakplan::AnalysisOptions options;
  options.points = 2000;
  peakplan::Signal signal;
  signal.bit_rate = 56e9;
  options.signal = signal;
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::analyze_chain(chain, options));
}
BENCHMARK(full_analysis_prbs7_no_swing)->Unit(benchmark::kMillisecond);

// Deriving the six stages' rational transfer functions from their nodal systems.
void stage_rationals(benchmark::State& state) {
  const auto chain = six_stage_chain();
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::output_cascade(chain, 5));
}
BENCHMARK(stage_rationals)->Unit(benchmark::kMicrosecond);

// One six-stage frequency response of 500 points from the rational form: the planner's inner loop.
void response_500_points(benchmark::State& state) {
  const auto cascade = peakplan::output_cascade(six_stage_chain(), 5);
  const auto grid = peakplan::FrequencyGrid::log(1e8, 1e12, 500);
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::sample_rational(cascade, grid));
}
BENCHMARK(response_500_points)->Unit(benchmark::kMicrosecond);

// The frequency-domain metrics (bandwidth, peaking, group-delay ripple, refined).
void frequency_metrics(benchmark::State& state) {
  const auto cascade = peakplan::output_cascade(six_stage_chain(), 5);
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::frequency_metrics(cascade));
}
BENCHMARK(frequency_metrics)->Unit(benchmark::kMicrosecond);

// The exact step response and its metrics.
void step_response(benchmark::State& state) {
  const auto cascade = peakplan::output_cascade(six_stage_chain(), 5);
  const double bw = peakplan::frequency_metrics(cascade).bandwidth_hz;
  for (auto _ : state) {
    const auto step = peakplan::step_response(cascade, peakplan::choose_time_axis(cascade, bw));
    benchmark::DoNotOptimize(peakplan::step_metrics(step));
  }
}
BENCHMARK(step_response)->Unit(benchmark::kMicrosecond);

}  // namespace

BENCHMARK_MAIN();
