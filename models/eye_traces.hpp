// The overlaid symbol traces of a PRBS eye, for drawing it.
//
// The waveform is the one prbs_eye measures, built by the same PatternOverlay
// (models/eye_overlay.hpp), so a trace sample equals the overlay's sample bit for bit.
//
// The markers need the envelope of every trace at every offset, not only at the best one, and
// which symbol set it; pass the EyeOverlay prbs_eye used to avoid building it twice.
//
// Symbol k's trace is the output at offsets within +-1 UI of its sampling instant
// (pda.sample_time_s + k*UI after the start of symbol 0's pulse), the convention of prbs_eye.
// Only a bounded number of traces is kept, and each on a decimated grid of offsets that contains
// the best offset prbs.eye.best_offset_s exactly; the kept traces always include, for every eye,
// the highest trace of its lower level and the lowest trace of its upper level at the common
// best offset and at that eye's own best offset, so the inner edges drawn are the ones measured.
#pragma once

#include <cstdint>
#include <vector>

#include "models/eye.hpp"

namespace peakplan {

struct EyeTrace {
  std::uint64_t symbol = 0;  // position in the overlaid pattern, 0 .. symbols_overlaid-1
  int level = 0;             // the symbol's level index: 0..1 (NRZ), 0..3 (PAM4)
  std::vector<double> y;     // at EyeTraces::offset_s; divided by the signed DC gain
};

// The inner opening of one eye at one offset: the highest trace of the lower level and the
// lowest of the upper level (upper_bottom - lower_top is the opening, in level units 0..1).
struct EyeInnerEdges {
  double offset_s = 0.0;
  double lower_top = 0.0;
  double upper_bottom = 0.0;
};

// Where one eye's markers go: its inner edges at its own best offset, and the ends of the open
// span at its decision threshold (width_right_s - width_left_s = width_ui * UI; both equal to
// the best offset when the eye is closed at the threshold).
struct EyeMarkers {
  EyeInnerEdges edges;
  double width_left_s = 0.0, width_right_s = 0.0;
};

struct EyeTraces {
  Modulation modulation = Modulation::nrz;
  PrbsKind pattern = PrbsKind::prbs7;
  double ui_s = 0.0;
  double reference_time_s = 0.0;  // the sampling instant offset 0 stands for (peak distortion's)
  std::vector<double> offset_s;   // common time axis of every trace, increasing, within +-UI
  std::vector<EyeTrace> traces;   // ordered by symbol
  // Over every overlaid symbol, not only the kept ones; one entry per eye (lower eye first).
  std::vector<EyeInnerEdges> common_edges;  // at prbs.eye.best_offset_s, the one sampling phase
  std::vector<EyeMarkers> eyes;             // each eye at prbs.eyes[e].best_offset_s
  std::uint64_t symbols_overlaid = 0;

  int eye_count() const { return modulation == Modulation::pam4 ? 3 : 1; }
  // Decision threshold of eye e in level units: (2e + 1) / (2 * eye_count).
  double threshold(int eye) const { return (2.0 * eye + 1.0) / (2.0 * eye_count()); }
};

struct EyeTraceLimits {
  int max_traces = 512;    // kept traces; the edge-setting ones are kept even beyond it
  int points_per_ui = 24;  // at most this many samples per UI, every k-th of the pulse grid
};

// prbs must be prbs_eye(pulse, signal). Throws std::invalid_argument for limits below 1 or a
// pulse/prbs pair that do not belong together (different modulation or sampling reference).
EyeTraces eye_traces(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                     const EyeTraceLimits& limits = {});

// The same on an overlay already built for `pulse` and `signal` (models/eye_overlay.hpp), so
// that measuring and drawing an eye build it once.
struct EyeOverlay;
EyeTraces eye_traces(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                     const EyeOverlay& built, const EyeTraceLimits& limits = {});

}  // namespace peakplan
