// Choosing the values a chain file leaves open ("auto", ranges, candidate kinds, counts) so the
// chain meets its [target] under its [limits], by the [target] objective.
//
// Method: every combination of the discrete choices (kind, count) is planned in turn; for each,
// a deterministic multi-start of NLopt's COBYLA (constraints handled natively, no derivatives)
// runs from closed-form seeds (maximally flat shunt peaking, the T-coil conditions, equal gain
// per stage) and from fixed-seed random points. Every limit of the returned plan is checked on
// the full chain response, never on an approximation.
#pragma once

#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "planner/chain_file.hpp"
#include "planner/chain_graph.hpp"

namespace peakplan {

struct PlanOptions {
  int max_evaluations = 60000;  // over all starts and combinations
  int starts = 6;               // per combination: the closed-form seed plus random points
  unsigned seed = 20261202;
};

// One target or limit of the plan, as checked on the final chain.
struct PlanCheck {
  std::string name;   // "gain", "bandwidth", "gain_bandwidth", "overshoot", "peaking", "group_delay_ripple"
  std::string unit;   // "dB", "Hz", "%", "s"
  double value = 0.0; // achieved
  double limit = 0.0; // required (a minimum for targets, a maximum for limits)
  bool is_minimum = true;
  double margin = 0.0;  // value - limit for minimums, limit - value for maximums (>= 0 is met)
  bool met = true;
};

// What the planner chose for one [[stage]] of the file.
struct PlannedStage {
  size_t spec = 0;
  LoadKind kind = LoadKind::plain;
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

// The checks of `spec`'s targets and limits against an analysed output.
std::vector<PlanCheck> check_targets(const ChainSpec& spec, const FrequencyMetrics& f, const StepMetrics& t);

}  // namespace peakplan
