// How long a plan takes: six stages of mixed kinds with every value left to the planner.
#include <benchmark/benchmark.h>

#include <string>

#include "planner/plan_problem.hpp"
#include "planner/planner.hpp"
#include "../six_open_stages.hpp"

namespace {


void plan_six_stages(benchmark::State& state) {
  peakplan::Diagnostics d("bench.toml");
  const auto spec = peakplan::parse_chain_spec(peakplan::test::kSixOpenStages, d);
  int evaluations = 0;
  for (auto _ : state) {
    peakplan::Diagnostics pd("bench.toml");
    const auto plan = peakplan::plan_chain(*spec, pd);
    evaluations = plan->evaluations;
    state.counters["met"] = plan->termination == peakplan::Plan::Termination::met ? 1 : 0;
  }
  state.counters["evaluations"] = evaluations;
  state.counters["evaluations_per_s"] = benchmark::Counter(evaluations * static_cast<double>(state.iterations()),
                                                           benchmark::Counter::kIsRate);
}
BENCHMARK(plan_six_stages)->Unit(benchmark::kMillisecond)->Iterations(3);

// One candidate of the same chain at its closed-form seed, measured as the search measures it
// and as the final plan is measured.
void evaluate_candidate(benchmark::State& state) {
  peakplan::Diagnostics d("bench.toml");
  const auto spec = peakplan::parse_chain_spec(peakplan::test::kSixOpenStages, d);
  const auto combo = peakplan::combinations(*spec).front();
  const auto graph = peakplan::build_stage_graph(*spec, d, &combo.counts);
  const peakplan::Problem problem(*spec, combo, *graph);
  const auto u = problem.seed();
  const auto fidelity = state.range(0) ? peakplan::Fidelity::final : peakplan::Fidelity::search;
  for (auto _ : state) benchmark::DoNotOptimize(problem.evaluate(u, fidelity));
  state.SetLabel(state.range(0) ? "final" : "search");
}
BENCHMARK(evaluate_candidate)->Arg(0)->Arg(1)->Unit(benchmark::kMicrosecond);

// The shipped receiver plan: a tia's Rf and core cell and two post-amplifier stages open, for
// the least input-referred noise under transimpedance, sensitivity and shape limits.
void plan_optical_receiver(benchmark::State& state) {
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_optical_receiver.toml";
  peakplan::Diagnostics d(path);
  const auto spec = peakplan::load_chain_spec(path, d);
  int evaluations = 0;
  for (auto _ : state) {
    peakplan::Diagnostics pd(path);
    const auto plan = peakplan::plan_chain(*spec, pd);
    evaluations = plan->evaluations;
    state.counters["met"] = plan->termination == peakplan::Plan::Termination::met ? 1 : 0;
  }
  state.counters["evaluations"] = evaluations;
}
BENCHMARK(plan_optical_receiver)->Unit(benchmark::kMillisecond)->Iterations(3);

}  // namespace

BENCHMARK_MAIN();
