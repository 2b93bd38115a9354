// How long process variation takes: 10,000 Monte Carlo samples of a six-stage mixed chain (the
// planning benchmark's chain, planned once outside the timing), each measured with its frequency
// scan, step overshoot and PRBS7 eye, on 1 and 2 threads; one case alone; and a corner plan.
#include <benchmark/benchmark.h>

#include <fstream>
#include <sstream>
#include <string>

#include "models/monte_carlo.hpp"
#include "planner/input/chain_graph.hpp"
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
  peakplan::Variation v;  // the spreads of docs/physics.md (process variation)'s example
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
// The CPU column is the whole process's (every worker thread's) CPU time: on a machine shared
// with other jobs the wall time stretches, but CPU time / threads is what an idle machine gives.
BENCHMARK(monte_carlo_six_stages)
    ->Arg(1)
    ->Arg(2)
    ->Unit(benchmark::kMillisecond)
    ->Iterations(1)
    ->MeasureProcessCPUTime()
    ->UseRealTime();

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

// The corner plan of chains/plan_post_tia.toml: the shipped file with plan_for = "corners" and
// the moderate spreads of chains/variation_post_amp.toml (2^3 extremes, nominal: 9 corners).
void corner_plan_post_tia(benchmark::State& state) {
  std::ifstream in(std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_post_tia.toml");
  std::stringstream text;
  text << in.rdbuf();
  std::string file = text.str();
  const std::string objective = "objective = \"flattest\"";
  file.replace(file.find(objective), objective.size(), objective + "\nplan_for = \"corners\"");
  file.insert(file.find("[[stage]]"), R"([variation]
gm          = { global = "8 %", local = "2 %" }
capacitance = { global = "6 %", local = "1 %" }
inductance  = { local = "2 %" }
resistance  = { global = "10 %", local = "1 %" }
coupling    = { local = 0.01 }

)");
  peakplan::Diagnostics d("plan_post_tia.toml");
  const auto spec = peakplan::parse_chain_spec(file, d);
  if (!spec) {
    state.SkipWithError(d.format().c_str());
    return;
  }
  for (auto _ : state) {
    peakplan::Diagnostics pd("plan_post_tia.toml");
    const auto plan = peakplan::plan_chain(*spec, pd);
    state.counters["met"] = plan->termination == peakplan::Plan::Termination::met ? 1 : 0;
    state.counters["corners"] = plan->corner_count;
    state.counters["evaluations"] = plan->evaluations;
  }
}
BENCHMARK(corner_plan_post_tia)->Unit(benchmark::kMillisecond)->Iterations(1)->MeasureProcessCPUTime()->UseRealTime();

}  // namespace

BENCHMARK_MAIN();
