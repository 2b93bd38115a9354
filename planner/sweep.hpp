// peakplan sweep: the chain's main-output metrics against one value, stepped linearly (or
// geometrically with --log: START and STOP nonzero and of one sign).
//
//   --vary ID.KEY=START:STOP:N   2 <= N <= kMaxSweepPoints points from START to STOP inclusive; START and STOP
//                                as the chain file would write the key (80ohm, "0.2 nH", 5%)
//                                or plain numbers in the key's plain unit (SI; dB for gains).
//   --vary ID.KEY=A,B,...        the listed points in their order (at least 2), each as the file
//                                would write it: values, or words for a word key (a T-coil's
//                                response: --vary a1.response=butterworth,bessel,critical).
//
// Each point is applied as an override of ID.KEY (planner/input/overrides.hpp), so every check of
// the chain-file reader applies to it, and the chain is analysed exactly as `peakplan analyze
// --set ID.KEY=<point>` would. A gm the file leaves open sizes its device: each point of it
// also sets that stage's c_in = gm/(2 pi ft) and c_out = c_out_ratio c_in ([technology]), as the
// planner would. Without replanning, a file with open values is planned once
// (at its own value of the key) and every other value is held at that plan while the key
// varies. With replanning, each point is planned afresh with the key fixed at the point, and
// the row carries the plan's status and its choice for every value the file leaves open.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "planner/input/chain_file.hpp"
#include "planner/planner.hpp"

namespace peakplan {

inline constexpr int kMaxSweepPoints = 1000;  // a bound on the work one command asks for

struct SweepRequest {
  std::string chain;              // the chain file
  // Its text when the caller holds it already (standard input read once, a planned chain):
  // `chain` then only names it.
  std::optional<std::string> chain_text;
  std::vector<std::string> sets;  // --set texts, applied before the varied value
  std::string vary;               // "ID.KEY=START:STOP:N"
  bool replan = false;
  bool log = false;  // geometric spacing
  bool variation = true;  // false: the rows leave a [variation] table out (no corners, no Monte Carlo)
  PlanOptions plan_options;
};

// One value the file leaves to the planner, reported per row with --replan.
struct OpenValue {
  std::string stage;  // [[stage]] id
  std::string key;    // an element key, "kind" or "count"
  std::string unit;   // display unit symbol; empty for kind, count and plain numbers
};

// What the planner chose for an OpenValue: a number (NaN when the chosen kind has no such
// element) or, for "kind", a name.
struct ChosenValue {
  double number = 0.0;
  std::string text;
};

struct SweepRow {
  double value = 0.0;  // the varied key, SI (dB for decibel keys, a fraction for percentages); NaN for a word
  std::string word;    // the point when the key is a word (a T-coil response), empty otherwise
  // The main output (docs/physics.md (metrics) metrics); NaN where a metric does not exist.
  double gain_db = 0.0;
  double bandwidth_hz = 0.0;
  double peaking_db = 0.0;
  double overshoot_pct = 0.0;
  double group_delay_ripple_s = 0.0;
  std::optional<double> eye_height;  // PRBS eye height (fraction of ideal) when [signal]
  // The main output's large-signal eye (docs/physics.md (large signals)) when the chain has a limited stage
  // and [signal] a swing: differential volts, UI, seconds.
  struct LargeSignal {
    double height_v = 0.0, width_ui = 0.0, ddj_pp_s = 0.0, delay_shift_s = 0.0;
  };
  std::optional<LargeSignal> large_signal;
  // A chain driven by a photocurrent (models/receiver.hpp): its input-referred rms noise current
  // and, with a photodiode and a signal, the average optical power needed at the target BER.
  struct Receiver {
    double input_noise_rms_a = 0.0;
    std::optional<double> sensitivity_dbm;
  };
  std::optional<Receiver> receiver;
  // With [variation] (docs/physics.md (process variation)): each metric above at its worst corner (the lowest
  // gain, bandwidth and eye height, the highest overshoot and ripple) and the Monte Carlo yield of
  // every target and limit together, as `analyze` of the point reports them.
  struct Variation {
    double gain_db = 0.0, bandwidth_hz = 0.0, overshoot_pct = 0.0, group_delay_ripple_s = 0.0;
    std::optional<double> eye_height;
    int corners = 0;
    double overall_yield = 1.0;
    double yield_lo = 0.0, yield_hi = 1.0;  // Wilson 95 % interval
  };
  std::optional<Variation> variation;
  std::optional<Plan::Termination> status;  // with replanning
  std::vector<ChosenValue> chosen;          // with replanning, one per SweepResult::open
};

struct SweepResult {
  std::string chain_name;
  std::string target, key;  // the varied ID and KEY
  std::string unit;         // display unit of the key ("ohm", "H", "dB", "%" for fractions, "")
  bool replan = false;
  // Without replanning: set when the file had open values and the sweep holds them at the
  // plan of the file (with --set), whose status this is.
  std::optional<Plan::Termination> held_plan;
  bool has_signal = false;
  bool has_large_signal = false;  // some row has large_signal
  bool has_receiver = false;      // some row has receiver
  bool has_variation = false;     // the file has [variation]: every row has variation
  bool log = false;
  std::vector<OpenValue> open;
  std::vector<SweepRow> rows;
};

// Nullopt with diagnostics on bad input: a malformed --vary (named by its text, exit 2), a
// key that is not a number, or a point the chain-file reader rejects.
std::optional<SweepResult> run_sweep(const SweepRequest& request, Diagnostics& diagnostics);

}  // namespace peakplan
