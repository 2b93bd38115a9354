// How long the large-signal eye takes (issue 10's speed targets): the PRBS15 eye of a six-stage
// limiting chain (chains/limiting_dynamic_range.toml with six stages instead of four), with the
// automatic step search, the two delay runs and the compression points, as analyze computes it;
// and a 20-point swing sweep of the shipped four-stage chain as `peakplan sweep
// chains/limiting_dynamic_range.toml --vary signal.swing=2mV:800mV:20 --log` runs it (each point
// a whole analysis: frequency scan, step, small-signal eye, noise and the large-signal eye).
#include <benchmark/benchmark.h>

#include <string>

#include "models/large_signal.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/input/overrides.hpp"
#include "planner/sweep.hpp"
#include "planner/input/chain_input.hpp"

namespace {

const std::string kChainFile = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/limiting_dynamic_range.toml";

void six_stage_prbs15_eye(benchmark::State& state) {
  peakplan::Diagnostics d(kChainFile);
  const auto text = peakplan::read_chain_text(kChainFile, d);
  const auto sets = text ? peakplan::parse_overrides({"la.count=6", "signal.pattern=prbs15", "signal.swing=200mV"}, d)
                         : std::nullopt;
  const auto spec = sets ? peakplan::parse_chain_spec(*text, *sets, d) : std::nullopt;
  const auto chain = spec ? peakplan::resolve_chain(*spec, d) : std::nullopt;
  if (!chain) {
    state.SkipWithError(d.format().c_str());
    return;
  }
  const auto signal = peakplan::analysis_options(*spec).signal.value();
  const int output = static_cast<int>(chain->stages.size()) - 1;
  peakplan::LargeSignalEye eye;
  for (auto _ : state) {
    eye = peakplan::large_signal_eye(*chain, output, signal);
    benchmark::DoNotOptimize(eye.height_v);
  }
  state.counters["height_mV"] = 1e3 * eye.height_v;
  state.counters["ddj_fs"] = 1e15 * eye.ddj_pp_s;
  state.counters["steps_per_ui"] = eye.steps_per_ui;
  state.counters["step_change"] = eye.step_change;
}
BENCHMARK(six_stage_prbs15_eye)->Unit(benchmark::kMillisecond)->UseRealTime();

void swing_sweep_20_points(benchmark::State& state) {
  peakplan::SweepRequest request;
  request.chain = kChainFile;
  request.vary = "signal.swing=2mV:800mV:20";
  request.log = true;
  double last_height = 0.0;
  for (auto _ : state) {
    peakplan::Diagnostics d(kChainFile);
    const auto result = peakplan::run_sweep(request, d);
    if (!result) {
      state.SkipWithError(d.format().c_str());
      return;
    }
    last_height = result->rows.back().large_signal->height_v;
  }
  state.counters["last_height_mV"] = 1e3 * last_height;
}
BENCHMARK(swing_sweep_20_points)->Unit(benchmark::kMillisecond)->UseRealTime();

}  // namespace

BENCHMARK_MAIN();
