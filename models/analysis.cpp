#include "models/analysis.hpp"

#include <cmath>
#include <numbers>

#include "models/eye_overlay.hpp"
#include "models/peaking_design.hpp"

namespace peakplan {
namespace {

std::complex<double> jw(double f_hz) { return {0.0, 2.0 * std::numbers::pi * f_hz}; }

ResponseSummary summarise_rational_only(const Cascade& cascade, const AnalysisOptions& options) {
  return summarise(cascade, {}, options);
}

}  // namespace

ResponseSummary summarise(const Cascade& cascade, const std::vector<const NodalSystem*>& exact,
                          const AnalysisOptions& options) {
  ResponseSummary r;
  r.frequency = frequency_metrics(cascade, options.ripple_band_hz);
  r.poles = cascade.poles();
  r.zeros = cascade.zeros();
  const auto axis = choose_time_axis(cascade, r.frequency.bandwidth_hz);
  auto wave = step_response(cascade, axis);
  r.step = step_metrics(wave);
  if (options.keep_waveforms) {
    r.step_wave = std::move(wave);
    const auto [f_lo, f_hi] = natural_span(cascade, 1.0);
    const auto grid = FrequencyGrid::log(f_lo, f_hi, std::max(2, options.points));
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
  std::vector<NodalSystem> systems;
  std::vector<Rational> rationals;
  systems.reserve(chain.stages.size());
  for (const auto& s : chain.stages) {
    systems.push_back(build_stage_system(s.circuit));
    rationals.push_back(systems.back().rational());
  }

  for (size_t i = 0; i < chain.stages.size(); ++i) {
    StageSummary stage;
    stage.stage = static_cast<int>(i);
    stage.alone = summarise(Cascade({rationals[i]}), {&systems[i]}, options);
    const auto& s = chain.stages[i];
    const auto& info = load_kind_info(s.circuit.kind);
    if (s.intent.kind != DesignIntent::Kind::none && info.ideal_response) {
      AnalysisOptions bare;
      bare.points = 2;
      bare.ripple_band_hz = options.ripple_band_hz;
      bare.keep_waveforms = false;
      const auto ideal = summarise_rational_only(
          Cascade({info.ideal_response(s.circuit)}),
          bare);
      DesignCheck check;
      check.label = s.intent.label;
      check.ideal_bandwidth_hz = ideal.frequency.bandwidth_hz;
      check.ideal_peaking_db = ideal.frequency.peaking_db;
      check.ideal_overshoot_pct = ideal.step.overshoot_pct;
      check.bandwidth_departure = stage.alone.frequency.bandwidth_hz / check.ideal_bandwidth_hz - 1.0;
      check.peaking_departure_db = stage.alone.frequency.peaking_db - check.ideal_peaking_db;
      check.input_impedance_error =
          input_impedance_error(s.circuit, 3.0 * check.ideal_bandwidth_hz);
      stage.design_check = check;
    }
    result.stages.push_back(std::move(stage));
  }

  NodalSystem source_system;
  const bool driven_through_source =
      chain.r_source > 0.0 && chain.stages[static_cast<size_t>(chain.input_stage())].c_in > 0.0;
  if (driven_through_source) {
    const int in = source_system.add_node("in");
    source_system.add_source(in, chain.r_source);
    source_system.add_capacitor(in, NodalSystem::ground,
                                chain.stages[static_cast<size_t>(chain.input_stage())].c_in);
    source_system.set_output(in);
  }
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
    for (int s : chain.path_to(out)) {
      cascade.append(rationals[static_cast<size_t>(s)]);
      exact.push_back(&systems[static_cast<size_t>(s)]);
    }
    OutputSummary summary{out, summarise(cascade, exact, options), std::nullopt, std::nullopt};
    if (options.signal) {
      const Signal& signal = *options.signal;
      EyeSummary eye;
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
      const ChainNoise noise(chain, out, options.noise);
      eye.noise = summarise_noise(noise);
      if (options.swing_given)
        eye.statistical = statistical_eye(eye.estimate.pulse, eye.estimate.prbs, signal, eye.noise.output_rms_v);
      summary.eye = std::move(eye);
      if (options.large_signal && options.swing_given && chain.has_limited_stage())
        summary.large_signal = large_signal_eye(chain, out, signal);
    }
    result.outputs.push_back(std::move(summary));
  }
  return result;
}

}  // namespace peakplan
