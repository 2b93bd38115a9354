// An alternative global phase driven by NLopt's own global algorithms (PlanOptions::global_method),
// for measuring them against the planner's multi-start (plan_phases.hpp, global_phase) on the
// planning suite (tests/planning). Not on the command line: the planner's own method is the one
// chosen by measurement; these are its comparison and an independent source of long-run references.
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
// halving_crs2: the multi-start (global_phase, its starts in `finals`), then CRS2 from its best
// point with as many evaluations as the multi-start spent; the better of the two.
// Deterministic: nlopt::srand(seed) before the run, single-threaded.
std::vector<Candidate> global_phase_nlopt(SearchContext& context, const Problem& p, size_t index,
                                          const std::vector<double>* around, int& evaluations,
                                          std::vector<Score>& finals);

}  // namespace peakplan
