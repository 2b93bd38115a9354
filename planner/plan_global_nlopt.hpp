// Global phases driven by NLopt's own global algorithms (PlanOptions::global_method): isres, mlsl
// and crs2 for measuring them against the planner's multi-start (plan_phases.hpp, global_phase) on
// the planning suite (tests/planning) and as an independent source of long-run references, not on
// the command line; halving_crs2, the multi-start followed by CRS2, is what `plan --effort N` runs
// from N = 2 (with_effort in planner.hpp).
#pragma once

#include <vector>

#include "planner/plan_problem.hpp"
#include "planner/plan_search.hpp"

namespace peakplan {

// The evaluations the NLopt global phase may spend on a problem of n open values:
// effort x kNloptPerStart x (12 + n) x (n + 2), i.e. as many starts as one batch of the multi-start
// (12 + n), each given about what the multi-start's three rounds spend on a start on average
// (16.5 (n + 2)) and the rest of its three batches (kNloptPerStart = 25, between one batch and three).
inline constexpr int kNloptPerStart = 25;
int nlopt_global_budget(int n, int effort);

// The global phase over the full space of one combination's open values (search units,
// lower_units/upper_units) by PlanOptions::global_method (isres, mlsl, crs2, halving_crs2), from
// `around` (the combination's design-space optimum) when given, each candidate scored by
// Search::score:
// - isres: GN_ISRES with every target and limit as an inequality constraint;
// - mlsl: G_MLSL_LDS with a local LN_COBYLA on a penalised objective (MLSL's local runs take no
//   constraints);
// - crs2: GN_CRS2_LM on the penalised objective;
// each then finished by a constrained COBYLA run (Search::minimise_full) from its best point.
// `finals` receives the one final score (the spread of an NLopt run has one start).
// halving_crs2: the multi-start (global_phase, its starts in `finals`), then kCrsRuns CRS2 runs side
// by side, from its best kCrsRuns long-run starts, each with as many evaluations as the
// multi-start spent; every candidate, best first. One long CRS2 run does better than two of half
// the length (effort 2, four seeds: p03 0.998 against 0.993 of its reference, p10 0.960 against
// 0.955), and two long ones side by side take the wall time of one on two cores (p03 0.999, p10
// 0.969). A fixed count, so that the plan does not depend on the thread count.
// Deterministic: nlopt::srand(seed, run) before each run, each run on one thread.
inline constexpr size_t kCrsRuns = 2;
// `crs2_finals` receives each CRS2 run's final score (halving_crs2 only).
std::vector<Candidate> global_phase_nlopt(SearchContext& context, const Problem& p, size_t index,
                                          const std::vector<double>* around, int& evaluations,
                                          std::vector<Score>& finals, std::vector<Score>& crs2_finals);

}  // namespace peakplan
