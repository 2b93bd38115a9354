// Choosing the values a chain file leaves open ("auto", ranges, candidate kinds, counts) so the
// chain meets its [target] under its [limits], by the [target] objective.
//
// Method (deterministic for a given file, whatever the thread count; NLopt's COBYLA,
// derivative-free, with the targets and limits as its constraints, throughout):
//  1. combination search: for every combination of the discrete choices (kind, count), a
//     multi-start in the low-dimensional design space of plan_problem.hpp (stage gain, device
//     size and taper, m and zeta), from the closed-form seed (equal gain per stage, maximally
//     flat shunt peaking, the T-coil conditions), then fixed-seed random design-space starts for
//     the three most promising combinations;
//  2. global phase: over the full space of every open value of the most promising combination
//     (up to 12 values; past that the design space carries the search): a Latin hypercube of
//     12 + n starts (fixed seed), half drawn per stage independently of the closed forms (each
//     stage's own gain and peaking anywhere in range), half around the design-space optimum; each
//     a short COBYLA run, then successive halving (the best quarter continue, then the best half
//     of those); while fewer than three starts agree on the best, another batch follows, twice
//     then three times the first's size (three batches at most). It finds optima no closed-form design is near: unequal stage gains with
//     one stage peaking hard to equalise another's pole, an asymmetric T-coil;
//  3. refinement: the best combinations' design-space optima in the full space, ranked with the
//     global phase's best few starts; the first by the tie-break towards fewer stages and less current when
//     the objectives are equal within a tolerance (plan_search.hpp) is polished with small steps;
//  4. final check: the plan measured like analyze measures it; should a limit the search only
//     just met be missed there, a short repair run at full fidelity follows, and failing that
//     the next that meets every check (the global phase's other best starts among them).
// The spread of the global phase's starts (PlanSpread) says how sure the plan is.
// Independent pieces (combinations, starts) run on every thread (PEAKPLAN_THREADS) and merge in
// index order (plan_phases.hpp). When the constraints cannot all be met, COBYLA's merit function
// still reduces the violation, so an infeasible target yields its best try. Every limit of the
// returned plan is checked on the full chain response, never on an approximation.
#pragma once

#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "planner/input/chain_file.hpp"
#include "planner/input/chain_graph.hpp"

namespace peakplan {

// Where a running plan is, for a progress display.
struct PlanProgress {
  int evaluations = 0;
  double seconds = 0.0;
  std::string phase;          // of the search: "design space", "global", "full space", "repair"
  bool feasible = false;      // the best so far meets every target and limit (as searched)
  double objective = 0.0;     // of the best so far
};

// The global phase's method (step 2 above). halving: the multi-start with successive halving, the
// planner's own; isres, mlsl, crs2: NLopt's global algorithms (planner/plan_global_nlopt.hpp), kept
// for measuring against it and for independent reference runs (tests/planning), set in code only;
// halving_crs2: the multi-start, then two CRS2 runs from its best starts, which `plan --effort N`
// sets from N = 2 (with_effort).
enum class GlobalMethod { halving, isres, mlsl, crs2, halving_crs2 };

struct PlanOptions {
  int starts = 4;             // per combination in the design space: the seed plus random points
  int refined = 2;            // combinations refined in the full space
  int threads = 0;            // 0: PEAKPLAN_THREADS, else every core; the plan does not depend on it
  int effort = 1;             // multiplies the global phase's starts (plan --effort; reference runs use 25)
  unsigned seed = 20261202;
  GlobalMethod global_method = GlobalMethod::halving;
  // Called every `progress_every` evaluations and once at the end; may be empty.
  std::function<void(const PlanProgress&)> progress;
  int progress_every = 250;
  // Asked before every evaluation; when it returns true the plan stops at once by throwing
  // PlanStopped (a SIGINT or SIGTERM from the user). May be empty.
  std::function<bool()> stop;
};

// The options of `plan --effort N`: the global phase's starts times N, and from N = 2 the
// multi-start followed by CRS2 (GlobalMethod::halving_crs2). Effort 1 is the default plan.
PlanOptions with_effort(PlanOptions options, int effort);

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

// How sure the plan is: the global phase's starts, each run to its own optimum. `best` and
// `median` are the objective over the starts that met every target and limit, in the objective's
// SI terms (widest: bandwidth, Hz; leanest: total gm, S; quietest: input noise, A; flattest: the
// dimensionless flatness); NaN when none did. Many starts near the best mean a landscape with one
// clear optimum; few mean the best was hard to find and a longer run might do better.
struct PlanSpread {
  int starts = 0;     // 0: no global phase (nothing open, or more than 12 values)
  int feasible = 0;   // starts that met every target and limit
  int near_best = 0;  // feasible starts within 1 % of the best (flatness: within 0.05)
  double best = std::numeric_limits<double>::quiet_NaN();
  double median = std::numeric_limits<double>::quiet_NaN();
  int effort = 1;     // PlanOptions::effort (plan --effort)
  int crs2_runs = 0;  // CRS2 runs after the starts (effort 2 and up), and the best they met every check with
  double crs2_best = std::numeric_limits<double>::quiet_NaN();
};

// What the planner chose for one [[stage]] of the file.
struct PlannedStage {
  size_t table = 0;  // the [[stage]] table: an index into ChainSpec::stages
  LoadKind kind{};  // set by whoever fills it
  int count = 1;
};

inline constexpr double kBindsWithin = 0.01;  // of the limit

struct Plan {
  enum class Termination { met, not_met } termination = Termination::not_met;
  std::string message;
  Chain chain;  // the planned chain, fully resolved
  std::vector<PlannedStage> stages;
  std::vector<GraphStage> graph;
  std::vector<PlanCheck> checks;
  std::string binding;  // the check with the least margin
  // That margin is within kBindsWithin of its limit: the check holds the plan back. Otherwise
  // every check has room, and the text says which has least rather than that it binds.
  bool binds = false;
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
  PlanSpread spread;
  // What the file leaves ideal that the plan may have exploited (a T-coil's drain with no
  // capacitance), one sentence each; `plan` prints them on stderr as notes.
  std::vector<std::string> notes;
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
// `input_noise_rms_a` (a chain driven by a photocurrent) adds the sensitivity check. A whole
// analysed output (its eye, noise and large-signal eye too) is checked by analysis_checks
// (planner/requirements.hpp).
std::vector<PlanCheck> check_targets(const ChainSpec& spec, const FrequencyMetrics& f, const StepMetrics& t,
                                     std::optional<double> total_gm = std::nullopt,
                                     std::optional<double> input_noise_rms_a = std::nullopt);
// The average optical power the receiver needs at the target BER for that input noise
// (models/receiver.hpp), W; NaN without a photodiode, a signal or a finite noise.
double sensitivity_power(const ChainSpec& spec, double input_noise_rms_a);
// Sum of gm over every stage of a chain (copies counted), S.
double total_gm(const Chain& chain);

}  // namespace peakplan
