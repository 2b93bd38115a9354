// How long a Monte Carlo run takes: 10,000 samples of a six-stage mixed chain (the planning
// benchmark's chain, planned once outside the timing), each measured with its frequency scan,
// step overshoot and PRBS7 eye, on 1 and 2 threads.
#include <benchmark/benchmark.h>

#include "models/monte_carlo.hpp"
#include "planner/chain_graph.hpp"
#include "planner/planner.hpp"
#include "../six_open_stages.hpp"

namespace {

const peakplan::Chain& planned_chain() {
  static const peakplan::Chain chain = [] {
    peakplan::Diagnostics d("bench.toml");
    const auto spec = peakplan::parse_chain_spec(peakplan::test::kSixOpenStages, d);
    return peakplan::plan_chain(*spec, d)->chain;
  }();
  return chain;
}

peakplan::Variation spreads() {
  using peakplan::VariationClass;
  peakplan::Variation v;  // the spreads of DESIGN.md section 6's example
  v.spread(VariationClass::gm) = {0.10, 0.02};
  v.spread(VariationClass::capacitance) = {0.08, 0.01};
  v.spread(VariationClass::inductance) = {0.04, 0.0};
  v.spread(VariationClass::resistance) = {0.15, 0.01};
  v.spread(VariationClass::coupling) = {0.02, 0.0};
  return v;
}

void monte_carlo_six_stages(benchmark::State& state) {
  const auto& chain = planned_chain();
  peakplan::CaseOptions cases;
  peakplan::Signal signal;
  signal.bit_rate = 50e9;  // NRZ PRBS7
  cases.signal = signal;
  cases.short_step = true;  // as analyze measures its samples
  peakplan::MonteCarloOptions options;
  options.samples = 10000;
  options.seed = 1;
  options.threads = static_cast<int>(state.range(0));
  double yield_proxy = 0.0;
  for (auto _ : state) {
    const auto results = peakplan::run_monte_carlo(chain, spreads(), cases, options);
    yield_proxy = results.back().eye_height;
    benchmark::DoNotOptimize(results.data());
  }
  state.counters["samples_per_s"] = benchmark::Counter(options.samples * static_cast<double>(state.iterations()),
                                                       benchmark::Counter::kIsRate);
  state.counters["last_eye_height"] = yield_proxy;
}
BENCHMARK(monte_carlo_six_stages)->Arg(1)->Arg(2)->Unit(benchmark::kMillisecond)->Iterations(1)->UseRealTime();

// One sample of the same chain, for the per-case cost.
void one_case(benchmark::State& state) {
  const auto& chain = planned_chain();
  peakplan::CaseOptions cases;
  peakplan::Signal signal;
  signal.bit_rate = 50e9;
  cases.signal = signal;
  cases.short_step = state.range(0) == 1;
  for (auto _ : state) benchmark::DoNotOptimize(peakplan::measure_case(chain, cases));
}
BENCHMARK(one_case)->Arg(0)->Arg(1)->Unit(benchmark::kMicrosecond);

}  // namespace

BENCHMARK_MAIN();
