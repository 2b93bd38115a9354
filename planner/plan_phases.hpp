// The phases of a plan (planner.hpp has the method as a whole). Each phase runs its independent
// pieces (combinations, starts) on every thread through parallel_for and merges them in index
// order, so its result and its evaluation count do not depend on the thread count; each adds
// what it spent to `evaluations`.
#pragma once

#include <vector>

#include "planner/plan_problem.hpp"
#include "planner/plan_search.hpp"

namespace peakplan {

// 1. Combination search: every combination from its closed-form design-space seed, then
//    fixed-seed random design-space starts for the three most promising (successive halving).
//    Returns one candidate per combination, best first.
std::vector<Candidate> search_combinations(SearchContext& context, const std::vector<Problem>& problems,
                                           int& evaluations);

// 2. Global phase over the full space of one combination's open values (up to 12; planner.cpp): a Latin hypercube of
//    starts, each a short COBYLA run with the targets and limits as constraints, then successive
//    halving (the best quarter continue with a smaller step and a larger budget, then the best
//    half of those). Even starts are independent of the closed-form designs (per-stage gains and
//    peaking drawn anywhere, Problem::start_point); odd ones lie halfway between a full-space
//    point and `around` (the combination's design-space optimum), when given. `finals`
//    receives each start's best score, for the plan's spread. Returns the best kGlobalKept
//    starts that ran every round, best first.
std::vector<Candidate> global_phase(SearchContext& context, const Problem& p, size_t index,
                                    const std::vector<double>* around, int& evaluations, std::vector<Score>& finals);

// 3. Refinement: the most promising combinations' design-space optima in the full space, one per
//    thread. Returns them and the global phase's starts ranked: first the best by the
//    stage-count tie-break, polished, then the rest by score.
std::vector<Candidate> refine(SearchContext& context, const std::vector<Problem>& problems,
                              const std::vector<Candidate>& explored, const std::vector<Candidate>& global,
                              int& evaluations);

// Past this many open values the design space carries the search: the global phase's starts and
// the final phase's full-fidelity polish would cost more than the whole plan (measured on
// tests/bench/bench_plan.cpp: 20 values, 164 ms without the polish, 326 ms with it).
inline constexpr size_t kGlobalValues = 12;
// How many of the global phase's best long-run starts go on to the final phase, where a plan the
// search's coarser measurement passed may fail the full one and the next is checked: measured on
// tests/planning/p07 (seed 1000), the search's best (126.2 GHz) sags 2.9 dB at full fidelity and
// the runners-up were a 109.5 GHz combination; the global phase's second start gives 122.5 GHz.
inline constexpr size_t kGlobalKept = 4;
// Whether a combination gets the global phase and the full-fidelity polish: 1 to kGlobalValues
// open values.
inline bool global_sized(const Problem& p) {
  return !p.variables().empty() && p.variables().size() <= kGlobalValues;
}

// 4. Final check: the plan measured like analyze measures it, at every corner it is planned for.
struct FinalChecks {
  std::vector<PlanCheck> worst, nominal;
  std::vector<std::string> corners;  // per check, where its worst value is
  Evaluation nominal_evaluation;
  bool all_met() const;
};
FinalChecks final_checks(const ChainSpec& spec, const Problem& p, const std::vector<double>& u);
// A limit the search only just met, missed at full fidelity: a short full-fidelity run from the
// plan, kept only when it then meets every check. Updates `best` and `checks` in place.
void repair(SearchContext& context, const Problem& p, Candidate& best, FinalChecks& checks, int& evaluations);

// The final phase: the first ranked candidate checked and, if needed, repaired, and the same
// start polished at full fidelity (up to kGlobalValues open values); should the first still miss
// a check, the first of the next feasible ones (up to 1 + kGlobalKept: the global phase's other
// long-run starts are among them) that meets every check. Of those that meet every check, the
// best objective at full fidelity; when none does, the first as checked. Returns the plan's
// candidate with its checks in `checks`.
Candidate final_phase(SearchContext& context, const std::vector<Problem>& problems,
                      const std::vector<Candidate>& ranked, FinalChecks& checks, int& evaluations);

// Feasible scores within 1 % of the best objective, or within its tie tolerance when that is
// wider (flatness: 0.05; plan_search.hpp).
int near_best(const ChainSpec& spec, const std::vector<Score>& finals);

// The spread of the global phase's starts, in the objective's SI terms (planner.hpp).
PlanSpread start_spread(const ChainSpec& spec, const std::vector<Score>& finals);

}  // namespace peakplan
