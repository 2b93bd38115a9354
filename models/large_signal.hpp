// The large-signal time response of a chain with limiting stages (docs/physics.md (large signals)), and the
// PRBS eye, level compression and AM-to-PM of its clipped waveform.
//
// Each gm cell isolates its input from its output, so a limited stage is its static pair curve
// (models/pair_curve.hpp) followed by its linear network, the stage's transfer from gm current
// to output voltage (the stage rational divided by gm). The path from the chain input to an
// output is cut at every limited stage into segments:
//   leading   the source network (r_source with c_in), the input edge, and every linear stage
//             ahead of the first limited stage: one linear block driven by the held symbols,
//             discretised exactly for held inputs (HoldSimulator, held);
//   limited   a stage's curve, then its network and every linear stage up to the next limited
//             stage: one linear block driven by the sampled current i[k] = f(v[k]), discretised
//             exactly for the cubic through each four samples (HoldSimulator, cubic), or for a
//             held current when the leading block is a pure gain (the current is then held).
// Linear blocks are exact; the only approximation is the cubic between current samples, which
// the automatic step controls.
//
// Conventions. [signal] swing is the differential peak-to-peak input; the half circuit is
// simulated (input +-swing/4) and every `_v` result is differential at the output (twice the
// half circuit), so a linear chain's height_v is swing * |gain| * the small-signal
// prbs_height, as the small-signal eye in volts. The thresholds are midway between the settled
// output levels (a long run of one symbol: the static curves through the networks' DC gains),
// as a receiver slicing the compressed levels would place them; the waveform is measured by the
// small-signal overlay code (models/eye_overlay.hpp) after mapping the settled levels to
// 0, 1/3, 2/3, 1 (PAM4) or 0, 1 (NRZ), piecewise linearly.
#pragma once

#include <functional>
#include <limits>
#include <vector>

#include "models/chain.hpp"
#include "models/eye.hpp"
#include "models/eye_traces.hpp"
#include "models/step_response.hpp"

namespace peakplan {

// One output's path as segments (see above). `linear` replaces every curve by its slope gm,
// the small-input limit through the same discretisation.
class LargeSignalPath {
 public:
  LargeSignalPath(const Chain& chain, int output, const Signal& signal, bool linear = false);

  // Half-circuit output volts for the half-circuit input held at input[s] over symbol s,
  // simulated from rest at dt = UI/steps_per_ui and returned at t = k*UI/output_steps
  // (a multiple of steps_per_ui; 0 = steps_per_ui), the last network's output interpolated
  // between simulated samples by the four-point cubic.
  std::vector<double> run(const std::vector<double>& input, int steps_per_ui, int output_steps = 0) const;
  // The settled half-circuit output for a half-circuit input held at v.
  double dc_output(double v) const;
  // The half-circuit input of every limited stage (path order) for a held chain input v.
  std::vector<double> stage_inputs(double v) const;
  // The differential chain input swing (peak to peak) at which limited stage j (path order)
  // compresses by 1 dB: its settled input reaches pair_compression_x * I_T / gm. NaN when
  // the stages ahead of it never drive it that far.
  double compression_swing(size_t j) const;
  // Chain indices of the limited stages, in path order.
  const std::vector<int>& limited_stages() const { return limited_; }
  double ui() const { return ui_; }

 private:
  struct Segment {
    std::optional<PairLimit> limit;  // none: the leading segment
    double gm = 0.0;
    StateSpace network;
    double dc_gain = 0.0;
  };
  double drive(const Segment& s, double v) const;
  std::vector<Segment> segments_;
  std::vector<int> limited_;
  double ui_ = 0.0;
  bool linear_ = false;
};

struct StageCompression {
  int stage = 0;  // chain stage index
  // The differential peak-to-peak chain input at which this stage's large-signal gain (output
  // over input of a settled level) is 1 dB below its small-signal gain; NaN when the stages
  // ahead of it limit first so that it never compresses by 1 dB.
  double input_v = std::numeric_limits<double>::quiet_NaN();
};

struct LargeSignalOptions {
  int min_steps_per_ui = 16;  // simulation steps; the eye is measured on at least 64 per UI
  int max_steps_per_ui = 1024;
  // Halving the step must change the eye height by less than this fraction of it (of 5 % of
  // the settled-level eye when the eye is nearly or fully closed), and the width by less than
  // this fraction of it (of 0.05 UI when nearly closed).
  double tolerance = 1e-3;
  // Keep the overlaid traces of the eye measured (LargeSignalEye::traces), for drawing it.
  bool keep_traces = false;
};

struct LargeSignalEye {
  Modulation modulation = Modulation::nrz;
  double input_swing_v = 0.0;   // differential peak to peak at the chain input
  int steps_per_ui = 0;         // the simulation step chosen: dt = UI / steps_per_ui
  double step_s = 0.0;
  int grid_steps_per_ui = 0;    // the grid the eye is measured on (the output interpolated)
  double step_change = 0.0;     // relative change of the height or width on halving the step
  bool converged = false;       // false: max_steps_per_ui reached without meeting the tolerance
  double height_v = 0.0;        // inner opening, differential; PAM4: the worst eye at one offset
  double width_ui = 0.0;        // at the thresholds between settled levels
  double ddj_pp_s = std::numeric_limits<double>::quiet_NaN();  // NRZ; NaN when closed or PAM4
  std::vector<double> levels_v;       // settled output level of each symbol, lowest symbol first
  std::vector<double> eye_heights_v;  // each eye at its own best offset, lower eye first
  // PAM4: the outer eyes' mean level spacing over the middle eye's (1 for a linear chain; a
  // limiting chain squeezes the outer eyes, < 1). NRZ: 1.
  double level_compression = 1.0;
  double delay_s = 0.0;         // 50 % crossing of a full-swing edge after the input edge
  double linear_delay_s = 0.0;  // the same in the small-input limit
  double delay_shift_s = 0.0;   // delay_s - linear_delay_s (AM-to-PM)
  std::vector<StageCompression> compression;  // every limited stage on the path
  PrbsEye eye;                  // the measured eye in the normalised units described above
  // The overlaid traces of that eye (models/eye_traces.hpp) in the same normalised units, built
  // from the overlay that was measured; with LargeSignalOptions::keep_traces. volts() turns
  // their samples, edges and thresholds into differential output volts.
  std::optional<EyeTraces> traces;

  // A normalised level (0 at the lowest symbol's settled level, 1 at the highest) in
  // differential output volts: the inverse of the piecewise-linear map through levels_v the
  // eye was measured in, so volts(upper) - volts(lower) of an NRZ eye's edges is its height_v.
  double volts(double level) const;
};

// The eye of one output at a fixed step from any simulation of its half circuit: `run` returns
// the half-circuit output at t = k*UI/steps_per_ui for the half-circuit input held at input[s]
// over symbol s, from rest (LargeSignalPath::run, or an outside simulator's transient of the
// netlist). Fills the eye fields, levels_v, level_compression and steps_per_ui/step_s; not the
// step search, the delays or the compression points.
using HalfCircuitRun = std::function<std::vector<double>(const std::vector<double>& input, int steps_per_ui)>;
// With keep_traces, also the overlaid traces (LargeSignalEye::traces).
LargeSignalEye large_signal_eye_at(const Chain& chain, int output, const Signal& signal, int steps_per_ui,
                                   const HalfCircuitRun& run, bool keep_traces = false);

// One simulation at a fixed step (dt = UI/steps_per_ui), measured on grid_steps_per_ui (a
// multiple of it): the eye fields and levels_v only, no step search, delays or compression
// points. What a search measuring thousands of candidates can afford; step_change is 0 and
// converged false, since nothing was compared.
LargeSignalEye large_signal_eye_fixed(const Chain& chain, int output, const Signal& signal, int steps_per_ui,
                                      int grid_steps_per_ui, bool keep_traces = false);

// Throws std::invalid_argument for a non-positive swing and what pulse_response throws for.
LargeSignalEye large_signal_eye(const Chain& chain, int output, const Signal& signal,
                                const LargeSignalOptions& options = {});

}  // namespace peakplan
