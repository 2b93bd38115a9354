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

// A shipped chain's plan, timed whole, with its evaluation count and whether it met.
void plan_shipped(benchmark::State& state, const std::string& file) {
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/" + file;
  peakplan::Diagnostics d(path);
  const auto spec = peakplan::read_chain_spec(path, d);
  int evaluations = 0;
  for (auto _ : state) {
    peakplan::Diagnostics pd(path);
    const auto plan = peakplan::plan_chain(*spec, pd);
    evaluations = plan->evaluations;
    state.counters["met"] = plan->termination == peakplan::Plan::Termination::met ? 1 : 0;
  }
  state.counters["evaluations"] = evaluations;
}

// The shipped receiver plan: a tia's Rf and core cell and two post-amplifier stages open, for
// the least input-referred noise under transimpedance, sensitivity and shape limits.
void plan_optical_receiver(benchmark::State& state) { plan_shipped(state, "plan_optical_receiver.toml"); }
BENCHMARK(plan_optical_receiver)->Unit(benchmark::kMillisecond)->Iterations(3);

// The shipped limiting-amplifier plan: two tail currents open for [target] output_swing and
// [limits] ddj on the large-signal eye (the search's short, coarse eye; the full one at the end).
void plan_tail_currents(benchmark::State& state) { plan_shipped(state, "plan_tail_currents.toml"); }
BENCHMARK(plan_tail_currents)->Unit(benchmark::kMillisecond)->Iterations(3);

// One candidate of that chain at its seed (the large-signal eye most of its cost) as the search
// measures it (arg 0 = 0) and as the final check does (1), with the file's PRBS7 (arg 1 = 7) or
// PRBS15 (15): the search's eye stays at PRBS7 and 16 steps per UI.
void limiting_candidate(benchmark::State& state) {
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_tail_currents.toml";
  peakplan::Diagnostics d(path);
  auto spec = peakplan::read_chain_spec(path, d);
  spec->signal->pattern = "prbs" + std::to_string(state.range(1));
  const auto combo = peakplan::combinations(*spec).front();
  const auto graph = peakplan::build_stage_graph(*spec, d, &combo.counts);
  const peakplan::Problem problem(*spec, combo, *graph);
  const auto u = problem.seed();
  const auto fidelity = state.range(0) ? peakplan::Fidelity::final : peakplan::Fidelity::search;
  peakplan::Evaluation e;
  for (auto _ : state) e = problem.evaluate(u, fidelity);
  state.counters["height_mV"] = 1e3 * e.eye_height_v.value_or(0.0);
  state.counters["ddj_fs"] = 1e15 * e.ddj_pp_s.value_or(0.0);
  state.SetLabel(state.range(0) ? "final" : "search");
}
BENCHMARK(limiting_candidate)->Args({0, 7})->Args({1, 7})->Args({0, 15})->Args({1, 15})->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
