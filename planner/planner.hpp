// Choosing the values a chain file leaves open ("auto", ranges, candidate kinds, counts) so the
// chain meets its [target] under its [limits], by the [target] objective.
//
// Method (deterministic for a given file; NLopt's COBYLA, derivative-free, throughout):
//  1. global stage: for every combination of the discrete choices (kind, count), a multi-start
//     in the low-dimensional design space of plan_problem.hpp (stage gain, device size and
//     taper, m and zeta), from the closed-form seed (equal gain per stage, maximally flat shunt
//     peaking, the T-coil conditions) and from fixed-seed random points;
//  2. local stage: the best combinations refined in the full space of every open value, and
//     polished with small steps;
//  3. the final plan measured like analyze measures it; should a limit the search only just
//     met be missed there, a short repair run at full fidelity follows.
// COBYLA handles the targets and limits as constraints; when they cannot all be met, its merit
// function still reduces the violation, so an infeasible target yields its best try.
// Every limit of the returned plan is checked on the full chain response, never on an
// approximation.
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "models/large_signal.hpp"
#include "planner/chain_file.hpp"
#include "planner/chain_graph.hpp"

namespace peakplan {

// Where a running plan is, for a progress display.
struct PlanProgress {
  int evaluations = 0;
  double seconds = 0.0;
  std::string stage;          // "design space", "full space", "repair"
  bool feasible = false;      // the best so far meets every target and limit (as searched)
  double objective = 0.0;     // of the best so far
};

struct PlanOptions {
  int starts = 4;             // per combination in the design space: the seed plus random points
  int refined = 2;            // combinations refined in the full space
  unsigned seed = 20261202;
  // Called every `progress_every` evaluations and once at the end; may be empty.
  std::function<void(const PlanProgress&)> progress;
  int progress_every = 250;
  // Asked before every evaluation; when it returns true the plan stops at once by throwing
  // PlanStopped (a SIGINT or SIGTERM from the user). May be empty.
  std::function<bool()> stop;
};

// Thrown by plan_chain when PlanOptions::stop asked it to stop: not an error, so not derived
// from std::exception (which the search's own error handling catches).
struct PlanStopped {};

// One target or limit of the plan, as checked on the final chain.
struct PlanCheck {
  std::string name;   // "gain", "bandwidth", "gain_bandwidth", "overshoot", "peaking", "group_delay_ripple", "current"
  std::string unit;   // "dB", "Hz", "%", "s", "A"
  double value = 0.0; // achieved
  double limit = 0.0; // required (a minimum for targets, a maximum for limits)
  bool is_minimum = true;
  double margin = 0.0;  // value - limit for minimums, limit - value for maximums (>= 0 is met)
  bool met = true;
};

// What the planner chose for one [[stage]] of the file.
struct PlannedStage {
  size_t spec = 0;
  LoadKind kind{};  // set by whoever fills it
  int count = 1;
};

struct Plan {
  enum class Termination { met, not_met } termination = Termination::not_met;
  std::string message;
  Chain chain;  // the planned chain, fully resolved
  std::vector<PlannedStage> stages;
  std::vector<GraphStage> graph;
  std::vector<PlanCheck> checks;
  std::string binding;  // the check with the least margin
  // [target] plan_for = "corners": `checks` hold each check's worst value over the corners,
  // `check_corners` the corner each comes from, `nominal_checks` the nominal chain's checks.
  bool for_corners = false;
  int corner_count = 0;  // corners checked, nominal included
  std::vector<PlanCheck> nominal_checks;
  std::vector<std::string> check_corners;
  std::string binding_corner;
  double objective = 0.0;
  int evaluations = 0;
  double seconds = 0.0;
  std::string brief() const;
};

// Throws nothing for bad input: input errors go to `diagnostics` and the result is nullopt.
std::optional<Plan> plan_chain(const ChainSpec& spec, Diagnostics& diagnostics, const PlanOptions& options = {});

// A complete chain file with every planned value written out, so that analyzing it
// reproduces the plan exactly.
std::string planned_chain_toml(const ChainSpec& spec, const Plan& plan);

// The checks of `spec`'s targets and limits against an analysed output. `total_gm` (every stage
// copy of the chain) adds the supply-current check when [technology] gives gm_over_id and a
// current_budget.
// `input_noise_rms_a` (a chain driven by a photocurrent) adds the sensitivity check.
// `large_signal` (the main output's large-signal eye) adds the output_swing and ddj checks.
std::vector<PlanCheck> check_targets(const ChainSpec& spec, const FrequencyMetrics& f, const StepMetrics& t,
                                     std::optional<double> total_gm = std::nullopt,
                                     std::optional<double> input_noise_rms_a = std::nullopt,
                                     const LargeSignalEye* large_signal = nullptr);
// The average optical power the receiver needs at the target BER for that input noise
// (models/receiver.hpp), W; NaN without a photodiode, a signal or a finite noise.
double sensitivity_power(const ChainSpec& spec, double input_noise_rms_a);
// Sum of gm over every stage of a chain (copies counted), S.
double total_gm(const Chain& chain);

}  // namespace peakplan
