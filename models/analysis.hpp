// The analysis of a chain as written: every stage alone (driving its actual load) and every
// output node of the cascade, in the metrics of docs/physics.md (metrics).
#pragma once

#include <complex>
#include <optional>
#include <utility>
#include <vector>

#include "models/chain.hpp"
#include "models/eye.hpp"
#include "models/eye_traces.hpp"
#include "models/large_signal.hpp"
#include "models/noise.hpp"
#include "models/receiver.hpp"
#include "models/frequency_response.hpp"
#include "models/step_response.hpp"

namespace peakplan {

struct AnalysisOptions {
  int points = 201;                      // samples of the reported frequency response
  // Where the kept frequency responses are sampled (Hz, lo and hi); by default the chain's own
  // natural span. A corner envelope gives every corner the nominal chain's span, so that each
  // corner is sampled on the nominal grid itself (planner/corner_envelope).
  std::optional<std::pair<double, double>> frequency_span;
  double ripple_band_hz = not_found;     // group-delay ripple band; NaN = up to the bandwidth
  bool keep_waveforms = true;            // keep sampled responses and the step waveform
  // With a signal, every output also gets its eye, its noise and (when the signal has a swing)
  // a bit-error estimate.
  std::optional<Signal> signal;
  bool swing_given = false;
  // With a signal, a swing and a limited stage on the path: the large-signal eye per output.
  bool large_signal = true;
  NoiseOptions noise;
  // Threads for the independent parts (the stages alone, an output's eye beside its noise); the
  // results are the same for every count. 1 inside loops that are parallel already.
  int threads = 1;
};

struct EyeSummary {
  EyeEstimate estimate;
  NoiseSummary noise;
  std::optional<StatisticalEye> statistical;  // needs the input swing
  std::optional<EyeTraces> traces;            // the overlay for drawing; with keep_waveforms
};

struct ResponseSummary {
  FrequencyMetrics frequency;
  StepMetrics step;
  std::vector<std::complex<double>> poles;  // rad/s
  std::vector<std::complex<double>> zeros;  // rad/s, finite zeros after pole-zero cancellation
  SampledResponse sampled;                  // exact nodal solve on a log grid
  StepResponse step_wave;
};

// How far a stage resolved from a closed-form design departs from what the design promises.
struct DesignCheck {
  std::string label;
  double ideal_bandwidth_hz = not_found;
  double ideal_peaking_db = 0.0;
  double ideal_overshoot_pct = 0.0;
  double bandwidth_departure = 0.0;       // actual / ideal - 1
  double peaking_departure_db = 0.0;      // actual - ideal
  double input_impedance_error = 0.0;     // max |Z_in/Rd - 1| of the load, DC .. 3x bandwidth
};

// The chain from its input (source network included) to one stage's output node: what a
// budget table calls the cumulative gain, bandwidth and group delay at that node.
struct NodeMetrics {
  FrequencyMetrics frequency;
};

struct StageSummary {
  int stage = 0;
  ResponseSummary alone;
  NodeMetrics cumulative;
  std::optional<DesignCheck> design_check;
};

struct OutputSummary {
  int stage = 0;  // the stage whose output node this is
  ResponseSummary response;
  std::optional<EyeSummary> eye;
  std::optional<LargeSignalEye> large_signal;  // docs/physics.md (large signals)
  std::optional<ReceiverSummary> receiver;     // a chain driven by a photocurrent (models/receiver.hpp)
};

struct ChainAnalysis {
  std::vector<StageSummary> stages;   // file order
  std::vector<OutputSummary> outputs; // main output last
  std::optional<Signal> signal;       // what the eyes were computed for (AnalysisOptions::signal)
};

// `span` (Hz, lo and hi) is where the kept frequency response is sampled; by default the
// cascade's own natural span. analyze_chain gives every response of a chain one span, so that
// plots overlay them from edge to edge. `presampled`, when given, is that sampled response
// already (the product of the blocks' own samples on the same grid), and nothing is solved again.
ResponseSummary summarise(const Cascade& cascade, const std::vector<const NodalSystem*>& exact,
                          const AnalysisOptions& options,
                          std::optional<std::pair<double, double>> span = std::nullopt,
                          const SampledResponse* presampled = nullptr);
ChainAnalysis analyze_chain(const Chain& chain, const AnalysisOptions& options = {});

// Max |Z_in / Rd - 1| of a stage's load seen from the drain without c_out, up to f_max.
double input_impedance_error(const StageCircuit& stage, double f_max_hz);

}  // namespace peakplan
