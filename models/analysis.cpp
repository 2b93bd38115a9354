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

ChainAnalysis analyze_chain(const Chain& chain, const AnalysisOptions& options) {
  ChainAnalysis result;
  result.signal = options.signal;
  // Stages with the same circuit (count = N copies, a cell repeated down the chain) have the same
  // system, transfer function and response alone: each distinct circuit is analysed once.
  const auto alike = first_alike(chain);
  std::vector<NodalSystem> systems;
  std::vector<Rational> rationals;
  systems.reserve(chain.stages.size());
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    systems.push_back(alike[i] == i ? build_stage_system(chain.stages[i].circuit) : systems[alike[i]]);
    rationals.push_back(alike[i] == i ? systems.back().rational() : rationals[alike[i]]);
  }

  NodalSystem source_system;
  const bool driven_through_source = has_source_network(chain);
  if (driven_through_source) {
    const int in = source_system.add_node("in");
    source_system.add_source(in, chain.r_source);
    source_system.add_capacitor(in, NodalSystem::ground,
                                chain.stages[static_cast<size_t>(chain.input_stage())].c_in);
    source_system.set_output(in);
  }
  // One span for every sampled response: the caller's, or the union of the stages' and the
  // source's natural spans, which holds every cascade's poles and zeros.
  std::optional<std::pair<double, double>> span;
  if (options.keep_waveforms && options.frequency_span) {
    span = options.frequency_span;
  } else if (options.keep_waveforms) {
    std::pair<double, double> all{std::numeric_limits<double>::infinity(), 0.0};
    auto include = [&](const Rational& r) {
      const auto [lo, hi] = natural_span(Cascade({r}), 1.0);
      all = {std::min(all.first, lo), std::max(all.second, hi)};
    };
    for (const auto& r : rationals) include(r);
    if (driven_through_source) include(source_system.rational());
    if (all.first < all.second) span = all;
  }
  std::optional<SampledResponse> source_sampled;
  if (driven_through_source && span)
    source_sampled = sample_nodal({&source_system}, FrequencyGrid::log(span->first, span->second, std::max(2, options.points)));

  // Every stage alone is independent of the others: in parallel, each into its own slot, so the
  // result does not depend on the thread count.
  result.stages.resize(chain.stages.size());
  parallel_for(chain.stages.size(), options.threads, [&](size_t i) {
    if (alike[i] == i) result.stages[i].alone = summarise(Cascade({rationals[i]}), {&systems[i]}, options, span);
  });
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    result.stages[i].stage = static_cast<int>(i);
    if (alike[i] != i) result.stages[i].alone = result.stages[alike[i]].alone;
  }
  parallel_for(chain.stages.size(), options.threads, [&](size_t i) {
    result.stages[i].design_check = design_check(chain.stages[i], result.stages[i].alone, options);
  });

  for (size_t i = 0; i < chain.stages.size(); ++i) {
    Cascade cascade;
    if (driven_through_source) cascade.append(source_system.rational());
    for (int s : chain.path_to(static_cast<int>(i))) cascade.append(rationals[static_cast<size_t>(s)]);
    result.stages[i].cumulative.frequency = frequency_metrics(cascade, options.ripple_band_hz);
  }

  for (int out : chain.outputs()) {
    Cascade cascade;
    std::vector<const NodalSystem*> exact;
    if (driven_through_source) {
      cascade.append(source_system.rational());
      exact.push_back(&source_system);
    }
    // The stages alone were sampled on the same grid: their product is the cascade's sample.
    std::vector<const SampledResponse*> samples;
    if (driven_through_source && options.keep_waveforms) samples.push_back(&*source_sampled);
    for (int s : chain.path_to(out)) {
      cascade.append(rationals[static_cast<size_t>(s)]);
      exact.push_back(&systems[static_cast<size_t>(s)]);
      samples.push_back(&result.stages[static_cast<size_t>(s)].alone.sampled);
    }
    const auto presampled = options.keep_waveforms && span ? std::optional(in_series(samples)) : std::nullopt;
    OutputSummary summary{out, {}, std::nullopt, std::nullopt, std::nullopt};
    EyeSummary eye;
    // A photocurrent-driven chain is signed off on its noise, signal or not.
    const bool receiver = chain.current_input();
    // Three independent parts, each into its own slot: the response, the eye and the noise.
    parallel_for(options.signal ? 3 : (receiver ? 2 : 1), options.threads, [&](size_t part) {
      if (part == 0) {
        summary.response = summarise(cascade, exact, options, span, presampled ? &*presampled : nullptr);
      } else if (part == 1 && options.signal) {
        const Signal& signal = *options.signal;
        if (options.keep_waveforms) {
          // Measure and draw the eye from one overlay.
          eye.estimate.pulse = pulse_response(cascade, signal);
          const EyeOverlay built(eye.estimate.pulse, signal);
          eye.estimate.pda = built.pda;
          eye.estimate.prbs = prbs_eye(eye.estimate.pulse, signal, built);
          eye.traces = eye_traces(eye.estimate.pulse, eye.estimate.prbs, signal, built);
        } else {
          eye.estimate = estimate_eye(cascade, signal);
        }
      } else {
        const ChainNoise noise(chain, out, options.noise);
        eye.noise = summarise_noise(noise);
        if (receiver) summary.receiver = receiver_summary(chain, noise, eye.noise, options, span);
      }
    });
    if (options.signal) {
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
    result.outputs.push_back(std::move(summary));
  }
  return result;
}

}  // namespace peakplan
