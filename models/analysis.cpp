#include "models/analysis.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "models/eye_overlay.hpp"
#include "models/parallel.hpp"
#include "models/peaking_design.hpp"

namespace peakplan {
namespace {

std::complex<double> jw(double f_hz) { return {0.0, 2.0 * std::numbers::pi * f_hz}; }

ResponseSummary summarise_rational_only(const Cascade& cascade, const AnalysisOptions& options) {
  return summarise(cascade, {}, options);
}

ReceiverSummary receiver_summary(const Chain& chain, const ChainNoise& noise, const NoiseSummary& totals,
                                 const AnalysisOptions& options, std::optional<std::pair<double, double>> span) {
  ReceiverSummary r;
  r.transimpedance_ohm = std::fabs(noise.dc_gain());
  r.input_rms_a = totals.output_rms_v / r.transimpedance_ohm;
  r.noise_bandwidth_hz = totals.noise_bandwidth_hz;
  r.input_density_avg = totals.equivalent_input_density;
  if (options.keep_waveforms) {
    const auto [lo, hi] = span ? *span : natural_span(noise.cascade(), 1.0);
    r.spectrum = noise_spectrum(noise, FrequencyGrid::log(lo, hi, std::max(2, options.points)));
  }
  if (chain.photodiode && options.signal && r.input_rms_a > 0.0 && std::isfinite(r.input_rms_a))
    r.sensitivity = optical_sensitivity(r.input_rms_a, chain.photodiode->responsivity,
                                        q_from_ber(options.signal->target_ber), options.signal->extinction_ratio,
                                        options.signal->modulation);
  return r;
}

// For each stage, the first stage with the same circuit (itself when none comes before it).
std::vector<size_t> first_alike(const Chain& chain) {
  std::vector<size_t> first(chain.stages.size());
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    first[i] = i;
    for (size_t j = 0; j < i && first[i] == i; ++j)
      if (chain.stages[j].circuit == chain.stages[i].circuit) first[i] = j;
  }
  return first;
}

// A stage resolved from a closed-form design against what the design promises; none without one.
std::optional<DesignCheck> design_check(const ChainStage& s, const ResponseSummary& alone, const AnalysisOptions& options) {
  const auto& info = load_kind_info(s.circuit.kind);
  if (s.intent.kind == DesignIntent::Kind::none || !info.ideal_response) return std::nullopt;
  AnalysisOptions bare;
  bare.points = 2;
  bare.ripple_band_hz = options.ripple_band_hz;
  bare.keep_waveforms = false;
  const auto ideal = summarise_rational_only(Cascade({info.ideal_response(s.circuit)}), bare);
  DesignCheck check;
  check.label = s.intent.label;
  check.ideal_bandwidth_hz = ideal.frequency.bandwidth_hz;
  check.ideal_peaking_db = ideal.frequency.peaking_db;
  check.ideal_overshoot_pct = ideal.step.overshoot_pct;
  check.bandwidth_departure = alone.frequency.bandwidth_hz / check.ideal_bandwidth_hz - 1.0;
  check.peaking_departure_db = alone.frequency.peaking_db - check.ideal_peaking_db;
  check.input_impedance_error = input_impedance_error(s.circuit, 3.0 * check.ideal_bandwidth_hz);
  return check;
}

}  // namespace

ResponseSummary summarise(const Cascade& cascade, const std::vector<const NodalSystem*>& exact,
                          const AnalysisOptions& options, std::optional<std::pair<double, double>> span,
                          const SampledResponse* presampled) {
  ResponseSummary r;
  r.frequency = frequency_metrics(cascade, options.ripple_band_hz);
  r.poles = cascade.poles();
  r.zeros = cascade.zeros();
  const auto axis = choose_time_axis(cascade, r.frequency.bandwidth_hz);
  auto wave = step_response(cascade, axis);
  r.step = step_metrics(wave);
  if (options.keep_waveforms) {
    r.step_wave = std::move(wave);
    const auto [f_lo, f_hi] = span ? *span : natural_span(cascade, 1.0);
    const auto grid = FrequencyGrid::log(f_lo, f_hi, std::max(2, options.points));
    if (presampled && presampled->frequency_hz == grid.hz())
      r.sampled = *presampled;
    else
      r.sampled = exact.empty() ? sample_rational(cascade, grid) : sample_nodal(exact, grid);
  }
  return r;
}

double input_impedance_error(const StageCircuit& stage, double f_max_hz) {
  StageCircuit bare = stage;
  bare.c_out = 0.0;
  const auto system = build_stage_system(bare);
  double worst = 0.0;
  const auto grid = FrequencyGrid::log(f_max_hz * 1e-4, f_max_hz, 400);
  for (double f : grid.hz())
    worst = std::max(worst, std::abs(system.impedance(drain_node, jw(f)) / stage.rd - 1.0));
  return worst;
}

namespace {

// What every output's analysis shares: each stage's system and transfer function, the source
// network when the chain is driven through one, and the one span every response is sampled on.
// The outputs point into it: it is built once and not moved after.
struct SharedBlocks {
  std::vector<size_t> alike;  // first_alike(chain)
  std::vector<NodalSystem> systems;
  std::vector<Rational> rationals;
  bool driven_through_source = false;
  NodalSystem source_system;
  std::optional<std::pair<double, double>> span;
  std::optional<SampledResponse> source_sampled;
};

// Stages with the same circuit (count = N copies, a cell repeated down the chain) have the same
// system, transfer function and response alone: each distinct circuit is built once.
void build_stage_blocks(const Chain& chain, SharedBlocks& blocks) {
  const auto& alike = blocks.alike;
  blocks.systems.reserve(chain.stages.size());
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    blocks.systems.push_back(alike[i] == i ? build_stage_system(chain.stages[i].circuit) : blocks.systems[alike[i]]);
    blocks.rationals.push_back(alike[i] == i ? blocks.systems.back().rational() : blocks.rationals[alike[i]]);
  }
}

void build_source_block(const Chain& chain, SharedBlocks& blocks) {
  blocks.driven_through_source = has_source_network(chain);
  if (!blocks.driven_through_source) return;
  auto& source = blocks.source_system;
  const int in = source.add_node("in");
  source.add_source(in, chain.r_source);
  source.add_capacitor(in, NodalSystem::ground, chain.stages[static_cast<size_t>(chain.input_stage())].c_in);
  source.set_output(in);
}

// One span for every sampled response: the caller's, or the union of the stages' and the
// source's natural spans, which holds every cascade's poles and zeros.
std::optional<std::pair<double, double>> common_span(const SharedBlocks& blocks, const AnalysisOptions& options) {
  if (!options.keep_waveforms) return std::nullopt;
  if (options.frequency_span) return options.frequency_span;
  std::pair<double, double> all{std::numeric_limits<double>::infinity(), 0.0};
  auto include = [&](const Rational& r) {
    const auto [lo, hi] = natural_span(Cascade({r}), 1.0);
    all = {std::min(all.first, lo), std::max(all.second, hi)};
  };
  for (const auto& r : blocks.rationals) include(r);
  if (blocks.driven_through_source) include(blocks.source_system.rational());
  if (all.first < all.second) return all;
  return std::nullopt;
}

void build_shared_blocks(const Chain& chain, const AnalysisOptions& options, SharedBlocks& blocks) {
  blocks.alike = first_alike(chain);
  build_stage_blocks(chain, blocks);
  build_source_block(chain, blocks);
  blocks.span = common_span(blocks, options);
  if (blocks.driven_through_source && blocks.span) {
    const auto [lo, hi] = *blocks.span;
    blocks.source_sampled = sample_nodal({&blocks.source_system}, FrequencyGrid::log(lo, hi, std::max(2, options.points)));
  }
}

// Each stage alone, its design check and the frequency metrics from the input to its output.
std::vector<StageSummary> stage_summaries(const Chain& chain, const SharedBlocks& blocks,
                                          const AnalysisOptions& options) {
  const auto& alike = blocks.alike;
  std::vector<StageSummary> stages(chain.stages.size());
  // Every stage alone is independent of the others: in parallel, each into its own slot, so the
  // result does not depend on the thread count. A repeated circuit copies its first's summary.
  parallel_for(chain.stages.size(), options.threads, [&](size_t i) {
    if (alike[i] == i)
      stages[i].alone = summarise(Cascade({blocks.rationals[i]}), {&blocks.systems[i]}, options, blocks.span);
  });
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    stages[i].stage = static_cast<int>(i);
    if (alike[i] != i) stages[i].alone = stages[alike[i]].alone;
  }
  parallel_for(chain.stages.size(), options.threads, [&](size_t i) {
    stages[i].design_check = design_check(chain.stages[i], stages[i].alone, options);
  });

  for (size_t i = 0; i < chain.stages.size(); ++i) {
    Cascade cascade;
    if (blocks.driven_through_source) cascade.append(blocks.source_system.rational());
    for (int s : chain.path_to(static_cast<int>(i))) cascade.append(blocks.rationals[static_cast<size_t>(s)]);
    stages[i].cumulative.frequency = frequency_metrics(cascade, options.ripple_band_hz);
  }
  return stages;
}

// The blocks from the input to one output, as rationals and as the exact systems, and (with a
// common span) the cascade's sample as the product of the blocks' samples on that grid.
struct OutputPath {
  Cascade cascade;
  std::vector<const NodalSystem*> exact;
  std::optional<SampledResponse> presampled;
};

OutputPath output_path(const Chain& chain, int out, const SharedBlocks& blocks, const std::vector<StageSummary>& stages,
                       const AnalysisOptions& options) {
  OutputPath path;
  if (blocks.driven_through_source) {
    path.cascade.append(blocks.source_system.rational());
    path.exact.push_back(&blocks.source_system);
  }
  std::vector<const SampledResponse*> samples;
  if (blocks.driven_through_source && options.keep_waveforms) samples.push_back(&*blocks.source_sampled);
  for (int s : chain.path_to(out)) {
    path.cascade.append(blocks.rationals[static_cast<size_t>(s)]);
    path.exact.push_back(&blocks.systems[static_cast<size_t>(s)]);
    samples.push_back(&stages[static_cast<size_t>(s)].alone.sampled);
  }
  if (options.keep_waveforms && blocks.span) path.presampled = in_series(samples);
  return path;
}

// The linear eye of a cascade: with waveforms kept, measured and drawn from one overlay.
EyeEstimate linear_eye(const Cascade& cascade, const Signal& signal, bool keep_waveforms,
                       std::optional<EyeTraces>& traces) {
  if (!keep_waveforms) return estimate_eye(cascade, signal);
  EyeEstimate estimate;
  estimate.pulse = pulse_response(cascade, signal);
  const EyeOverlay built(estimate.pulse, signal);
  estimate.pda = built.pda;
  estimate.prbs = prbs_eye(estimate.pulse, signal, built);
  traces = eye_traces(estimate.pulse, estimate.prbs, signal, built);
  return estimate;
}

// The parts that need the eye and the noise together: the statistical eye (with a given swing)
// and the limiting (large-signal) eye.
void finish_signal_parts(const Chain& chain, int out, const AnalysisOptions& options, EyeSummary eye,
                         OutputSummary& summary) {
  const Signal& signal = *options.signal;
  if (options.swing_given)
    eye.statistical = statistical_eye(eye.estimate.pulse, eye.estimate.prbs, signal, eye.noise.differential_rms_v);
  summary.eye = std::move(eye);
  if (options.large_signal && options.swing_given && chain.has_limited_stage()) {
    LargeSignalOptions large;
    large.keep_traces = options.keep_waveforms;  // the clipped eye is drawn beside the linear one
    summary.large_signal = large_signal_eye(chain, out, signal, large);
  }
}

OutputSummary output_summary(const Chain& chain, int out, const SharedBlocks& blocks,
                             const std::vector<StageSummary>& stages, const AnalysisOptions& options) {
  const OutputPath path = output_path(chain, out, blocks, stages, options);
  OutputSummary summary{out, {}, std::nullopt, std::nullopt, std::nullopt};
  EyeSummary eye;
  // A photocurrent-driven chain is signed off on its noise, signal or not.
  const bool receiver = chain.current_input();
  // Three independent parts, each into its own slot: the response, the eye and the noise.
  parallel_for(options.signal ? 3 : (receiver ? 2 : 1), options.threads, [&](size_t part) {
    if (part == 0) {
      summary.response = summarise(path.cascade, path.exact, options, blocks.span,
                                   path.presampled ? &*path.presampled : nullptr);
    } else if (part == 1 && options.signal) {
      eye.estimate = linear_eye(path.cascade, *options.signal, options.keep_waveforms, eye.traces);
    } else {
      const ChainNoise noise(chain, out, options.noise);
      eye.noise = summarise_noise(noise);
      if (receiver) summary.receiver = receiver_summary(chain, noise, eye.noise, options, blocks.span);
    }
  });
  if (options.signal) finish_signal_parts(chain, out, options, std::move(eye), summary);
  return summary;
}

}  // namespace

ChainAnalysis analyze_chain(const Chain& chain, const AnalysisOptions& options) {
  ChainAnalysis result;
  result.signal = options.signal;
  SharedBlocks blocks;
  build_shared_blocks(chain, options, blocks);
  result.stages = stage_summaries(chain, blocks, options);
  for (int out : chain.outputs()) result.outputs.push_back(output_summary(chain, out, blocks, result.stages, options));
  return result;
}

}  // namespace peakplan
