// One planning problem: a chain file with its discrete choices (kinds, counts) made, the
// continuous values it leaves open, and how a candidate is built and scored.
//
// A candidate lives in two coordinate systems. The full space has one coordinate per open
// element value (gm, Rd, L, L1, L2, k, Cb), in log units for magnitudes. The design space has a
// handful of coordinates a designer reasons in: one stage gain shared by every stage whose Rd is
// open, a device size and a taper along the chain for every open gm, and one normalised peaking
// parameter per load kind (m for shunt and series peaking, zeta for symmetric T-coils), each
// mapped to element values against the stage's actual load, and one tail current shared by
// every limiting stage whose tail current is open. The search explores the design
// space first and then refines every value in the full space.
#pragma once

#include <functional>
#include <limits>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "models/chain.hpp"
#include "models/frequency_response.hpp"
#include "models/large_signal.hpp"
#include "models/step_response.hpp"
#include "models/variation.hpp"
#include "planner/input/chain_file.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/requirements.hpp"

namespace peakplan {

// One open element value, searched in log space when it is a magnitude.
struct Variable {
  size_t table = 0;  // the [[stage]] table: an index into ChainSpec::stages
  std::string key;
  double lo = 0.0, hi = 0.0;
  bool log_scale = false;
  double to_value(double u) const;
  double to_unit(double v) const;
};

struct Combination {
  std::vector<LoadKind> kinds;  // per spec stage
  std::vector<int> counts;      // per spec stage
};

// Every combination of the file's kind candidates and counts, in a fixed order.
std::vector<Combination> combinations(const ChainSpec& spec);

// How finely a candidate is measured. The search uses a coarser frequency scan and a shorter,
// coarser step response; the final plan is always measured like `analyze` measures it.
enum class Fidelity { search, final };

struct Evaluation {
  FrequencyMetrics f;
  StepMetrics t;
  double total_gm = 0.0;  // S, every stage copy counted
  double min_stage_gain_db = 0.0;  // the smallest DC gain of a stage on the main path
  // The input-referred rms noise current, A, of a chain driven by a photocurrent when a target
  // or the objective needs it (needs_input_noise); NaN otherwise.
  double input_noise_rms_a = std::numeric_limits<double>::quiet_NaN();
  // The large-signal eye at the main output (a limiting chain with [target] output_swing or
  // [limits] ddj; see needs_large_signal): its height, V, and its DDJ, s (NaN when closed).
  // Unset when not measured.
  std::optional<double> eye_height_v;
  std::optional<double> ddj_pp_s;
  // With [limits] noise_rms or ber (needs_output_noise): the differential rms output noise, V,
  // and with ber the statistical eye's BER at the [signal] swing; NaN otherwise.
  double output_noise_rms_v = std::numeric_limits<double>::quiet_NaN();
  double ber = std::numeric_limits<double>::quiet_NaN();
  // A pole in the right half-plane: nothing else was measured, and the search refuses it.
  bool unstable = false;
};

// Whether a plan must measure the large-signal eye: [target] output_swing or [limits] ddj.
bool needs_large_signal(const ChainSpec& spec);

// The large-signal eye a plan measures (docs/physics.md (large signals), "Planning a limiting
// chain"). Final: large_signal_eye, as analyze computes it (the step halved until the eye moves
// by < 0.1 %). Search: one run at kSearchStepsPerUi, measured on kSearchGridPerUi, over at most
// a PRBS7 pattern (every 7-bit history but the all-zero one, so a chain whose memory is shorter
// than 7 UI shows the same worst case as a longer pattern).
inline constexpr int kSearchStepsPerUi = 16;
inline constexpr int kSearchGridPerUi = 64;  // the eye code's least grid (default_steps_per_ui)
LargeSignalEye plan_large_signal_eye(const Chain& chain, const Signal& signal, Fidelity fidelity);

// The bounds of an open tail current: "auto" searches kTailCurrentAuto, narrowed to [technology]
// current_budget; a range its own. Every candidate's tail current is then raised, when needed,
// to the least that gives its gm, 2 V_T gm (models/pair_curve.hpp).
inline constexpr std::pair<double, double> kTailCurrentAuto{0.1e-3, 40e-3};

// What the requirements read from a candidate (planner/requirements.hpp).
Measured as_measured(const Evaluation& e);
// A stage the planner chooses something of: an open value, a kind list or an open count.
bool is_planned(const StageSpec& stage);

// plan_for = "yield": the corners are the global extremes scaled by this factor (0 when the spec
// has no [variation] global spread or no yield). With c classes spread, each drawn independently,
// a chip whose every global offset lies within +-a of its spread's range holds with probability
// P^c; asking P^c = yield gives a, the box the plan must hold on (exact for a check monotone in
// each class, the corner method's assumption; local mismatch is left to the Monte Carlo check):
// gaussian, a = z/3 with z = Phi^-1((1 + yield^(1/c))/2) (the spread is 3 sigma); uniform,
// a = yield^(1/c) of the half-width (derived).
double yield_corner_scale(const ChainSpec& spec);

// The self-resonance rule for open coils (common practice: a coil is used well below its
// self-resonance). With [technology] coil_c_per_nh a coil of L carries C = c_per_l L and
// resonates at f_SR = 1/(2 pi sqrt(L C)) = 1/(2 pi L sqrt(c_per_l)); the planner keeps
// f_SR >= kCoilResonanceMultiple x the chain's band (target_band), which bounds every open
// inductance by 1/(2 pi kCoilResonanceMultiple band sqrt(c_per_l)). At a third of f_SR a lumped
// L || C acts as L/(1 - 1/9), 12.5 % above L (derived). +inf without coil_c_per_nh or a band.
inline constexpr double kCoilResonanceMultiple = 3.0;
// The band the targets ask for: [target] bandwidth, or gain_bandwidth / gain when both are
// given; +inf otherwise. A coil must serve it, and flattest weighs ripple against it.
double target_band(const ChainSpec& spec);
double coil_inductance_limit(const ChainSpec& spec);

// Whether a plan must measure the input-referred noise: a sensitivity target or "quietest".
bool needs_input_noise(const ChainSpec& spec);

class Problem {
 public:
  Problem(const ChainSpec& spec, Combination combo, std::vector<GraphStage> graph);

  const std::vector<Variable>& variables() const { return variables_; }
  const Combination& combination() const { return combo_; }
  const std::vector<GraphStage>& graph() const { return graph_; }

  Chain build(const std::vector<double>& u, Fidelity fidelity = Fidelity::final) const;
  // With [target] plan_for = "corners" the worst value of each metric over every corner
  // (lowest gain and bandwidth, highest overshoot, peaking and ripple, deepest sag), so that
  // meeting a check here means meeting it at every corner; otherwise the nominal chain's.
  Evaluation evaluate(const std::vector<double>& u, Fidelity fidelity) const;
  // The corners a plan for corners must hold at: nominal first, then the [variation]
  // extremes and named corners; empty when planning for nominal.
  const std::vector<Corner>& corners() const { return corners_; }
  // Each corner's evaluation (nominal first); just the nominal one when planning for nominal.
  std::vector<Evaluation> evaluate_corners(const std::vector<double>& u, Fidelity fidelity) const;
  // Every value from the published designs at an equal gain per stage (the design space's seed).
  std::vector<double> seed() const { return expand(design_seed()); }

  // The design space: its bounds, its seed and its map into the full space.
  size_t design_dimensions() const { return design_.size(); }
  const std::vector<double>& design_lower() const { return design_lo_; }
  const std::vector<double>& design_upper() const { return design_hi_; }
  std::vector<double> design_seed() const;
  std::vector<double> expand(const std::vector<double>& z) const;

  // The global phase's starts, independent of the closed-form seeds: a point of the unit cube
  // gives, per stage, its own gain (open Rd; the drawn gains scaled together so the chain makes
  // its gain target, in the drawn proportions), its device size (open gm) and its own normalised
  // peaking (m or zeta, for a kind with a design and open elements), each anywhere in its range,
  // and every open value none of those sets (a tia's Rf and Cf, a tail current) anywhere in its
  // range. With a transimpedance target instead of a gain, the drawn gains are shifted together
  // until the chain's DC transimpedance is the target.
  // Stage gains drawn unequal and peaking drawn per stage reach cross-stage equalisation, which
  // one shared gain and one factor per kind cannot.
  size_t start_dimensions() const;
  std::vector<double> start_point(const std::vector<double>& cube) const;

 private:
  // design: the normalised design factor of one kind (design_kind_ says which); tail: one tail
  // current (log) for every stage whose tail current is open.
  enum class Axis { stage_gain, size, taper, design, tail };
  double value(const std::vector<double>& u, size_t stage, std::string_view key, double fallback) const;
  // The chain with element values and node capacitances only (no designs, no Q losses).
  Chain assemble(const std::vector<double>& u) const;
  int variable_index(size_t stage, std::string_view key) const;
  int start_axes(size_t stage) const;
  // An open value the starts' stage axes do not set (not gm, Rd or an element a design sets).
  bool loose(const Variable& v) const;
  // Shifts the starts' drawn gains together (set_rd, in dB) until the DC transimpedance of the
  // chain with its designed elements (`designed`) meets the target.
  void meet_transimpedance(std::vector<double>& u, const std::function<void(double)>& set_rd,
                           const std::function<std::vector<double>(std::vector<double>)>& designed,
                           int free_copies) const;
  // u with every peaking element of a kind with a design set from factor(spec stage, kind).
  std::vector<double> with_designs(std::vector<double> u, const std::function<double(size_t, LoadKind)>& factor) const;
  Evaluation measure(const Chain& chain, Fidelity fidelity) const;
  void measure_output_noise(const Chain& chain, const Cascade& cascade, Fidelity fidelity, Evaluation& e) const;

  const ChainSpec& spec_;
  Combination combo_;
  std::vector<GraphStage> graph_;
  std::vector<Variable> variables_;
  std::vector<Variable> pinned_;  // open values whose bounds meet: each is its lo
  std::vector<Axis> design_;
  std::vector<std::optional<LoadKind>> design_kind_;  // per design axis; set for Axis::design only
  std::vector<double> design_lo_, design_hi_;
  std::vector<Corner> corners_;
  std::optional<Signal> large_signal_;  // the [signal] the large-signal eye is measured with
  int corner_threads_ = 1;  // default_thread_count(): the results do not depend on it
};

}  // namespace peakplan
