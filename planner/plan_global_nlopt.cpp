#include "planner/plan_global_nlopt.hpp"

#include <algorithm>
#include <cmath>
#include <nlopt.hpp>
#include <stdexcept>

#include "models/parallel.hpp"
#include "planner/plan_phases.hpp"

namespace peakplan {
namespace {

// What NLopt's callbacks share: the search that scores (and counts) every candidate, the best
// one seen by Score::better_than (feasibility first), and the penalty for the methods whose
// candidates take no constraints.
struct Run {
  Search* search;
  const Problem* problem;
  double penalty = 0.0;  // objective units per unit of summed violation
  Score best;
  std::vector<double> best_u;
  std::vector<double> last_u, last_g;  // ISRES asks for the constraints at the x it just scored

  Score evaluate(const double* x, size_t n) {
    std::vector<double> u(x, x + n);
    const Score s = search->score(*problem, u, Fidelity::search, &last_g);
    if (s.better_than(best)) {
      best = s;
      best_u = u;
    }
    last_u = std::move(u);
    return s;
  }
};

double penalised(unsigned n, const double* x, double*, void* data) {
  const Score s = static_cast<Run*>(data)->evaluate(x, n);
  return s.objective + static_cast<Run*>(data)->penalty * s.violation;
}

double plain(unsigned n, const double* x, double*, void* data) {
  return static_cast<Run*>(data)->evaluate(x, n).objective;
}

void constraints(unsigned m, double* result, unsigned n, const double* x, double*, void* data) {
  auto* run = static_cast<Run*>(data);
  if (run->last_u.size() != n || !std::equal(x, x + n, run->last_u.begin())) run->evaluate(x, n);
  for (unsigned i = 0; i < m; ++i) result[i] = run->last_g[i];
}

nlopt::opt global_optimiser(GlobalMethod method, unsigned n, Run& run) {
  if (method == GlobalMethod::isres) {
    nlopt::opt o(nlopt::GN_ISRES, n);
    o.set_min_objective(plain, &run);
    const size_t m = run.last_g.size();
    if (m > 0) o.add_inequality_mconstraint(constraints, &run, std::vector<double>(m, 1e-9));
    return o;
  }
  if (method == GlobalMethod::mlsl) {
    nlopt::opt o(nlopt::G_MLSL_LDS, n);
    // Each local run is short, as the multi-start's first rounds are; MLSL starts a local run
    // only from a sample point with no better one near it.
    nlopt::opt local(nlopt::LN_COBYLA, n);
    local.set_xtol_rel(1e-4);
    local.set_maxeval(24 * static_cast<int>(n + 2));
    o.set_local_optimizer(local);
    o.set_min_objective(penalised, &run);
    return o;
  }
  if (method != GlobalMethod::crs2) throw std::logic_error("global_phase_nlopt: not an NLopt method");
  nlopt::opt o(nlopt::GN_CRS2_LM, n);
  o.set_min_objective(penalised, &run);
  return o;
}

}  // namespace

int nlopt_global_budget(int n, int effort) { return std::max(1, effort) * kNloptPerStart * (12 + n) * (n + 2); }

namespace {

// One NLopt global run of `method` with `budget` evaluations, then the constrained finish.
Candidate nlopt_run(SearchContext& context, const Problem& p, size_t index, const std::vector<double>* around,
                    GlobalMethod method, int budget, int& evaluations, unsigned stream = 0) {
  const auto lo = lower_units(p);
  const auto hi = upper_units(p);
  const int n = static_cast<int>(lo.size());
  // One Search on this thread: NLopt calls its objective one point at a time, and its random
  // numbers (population draws, MLSL's sample) come from its generator for this thread (thread-local
  // in NLopt), seeded here by nlopt::srand, so the run must not be shared between threads for the
  // plan to be the same every time; runs on other threads draw from their own.
  Search search(context);
  Run run{&search, &p, 0.0, {}, {}, {}, {}};
  std::vector<double> x(static_cast<size_t>(n));
  for (size_t d = 0; d < x.size(); ++d) x[d] = around ? (*around)[d] : 0.5 * (lo[d] + hi[d]);
  // The penalty: a 1 % shortfall of a target (violation 0.01) costs as much as the whole
  // objective at the start, so every method's penalised optimum is feasible where anything is.
  const Score at_start = run.evaluate(x.data(), x.size());
  run.penalty = 100.0 * std::max(1.0, std::fabs(at_start.objective));

  nlopt::srand(context.options().seed + 7919u * static_cast<unsigned>(index) + 104729u * stream);
  // One run for the whole budget. Restarting a population that had not improved its penalised
  // best by 1e-5 within 30, 100 or 300 (n + 1) evaluations was tried and did worse at effort 4 on
  // p03, p06, p09 and p10 (tests/planning): CRS2 improves after long plateaus.
  auto o = global_optimiser(method, static_cast<unsigned>(n), run);
  o.set_lower_bounds(lo);
  o.set_upper_bounds(hi);
  // A tenth of the budget is kept for the constrained finish.
  o.set_maxeval(std::max(1, budget - budget / 10));
  double value = 0.0;
  try {
    o.optimize(x, value);
  } catch (const std::exception&) {
    // NLopt turns a PlanStopped thrown in its callbacks into a failure of its own; any other
    // early stop (roundoff) leaves the best point seen, kept in `run`.
    if (context.stopping()) throw PlanStopped{};
  }
  // The finish: COBYLA with the targets and limits as constraints, from the best point, with a
  // small step (the global run has placed it) and what is left of the budget.
  auto u = run.best_u;
  const Score finished = search.minimise_full(p, u, 0.01, std::max(budget - search.evaluations(), 20 * (n + 2)),
                                              Fidelity::search);
  Candidate best{index, run.best_u, run.best};
  if (finished.better_than(best.score)) best = {index, u, finished};
  evaluations += search.evaluations();
  return best;
}

}  // namespace

std::vector<Candidate> global_phase_nlopt(SearchContext& context, const Problem& p, size_t index,
                                          const std::vector<double>* around, int& evaluations,
                                          std::vector<Score>& finals, std::vector<Score>& crs2_finals) {
  const auto method = context.options().global_method;
  const int n = static_cast<int>(p.variables().size());
  if (method != GlobalMethod::halving_crs2) {
    auto best = nlopt_run(context, p, index, around, method, nlopt_global_budget(n, context.options().effort),
                          evaluations);
    finals.push_back(best.score);
    return {best};
  }
  // The multi-start first (its starts give the spread), then CRS2 from its best kCrsRuns long-run
  // starts side by side, each with as many evaluations as the multi-start spent.
  int spent = 0;
  auto first = global_phase(context, p, index, around, spent, finals);
  evaluations += spent;
  const size_t runs = std::min(kCrsRuns, first.size());
  std::vector<Candidate> second(runs);
  std::vector<int> second_spent(runs, 0);
  parallel_for(runs, context.threads(), [&](size_t r) {
    second[r] = nlopt_run(context, p, index, &first[r].u, GlobalMethod::crs2, spent, second_spent[r],
                          static_cast<unsigned>(r));
  });
  for (int e : second_spent) evaluations += e;
  for (const auto& s : second) crs2_finals.push_back(s.score);
  // Every candidate, best first (ties to the CRS2 runs, then the multi-start's order).
  first.insert(first.begin(), second.begin(), second.end());
  std::stable_sort(first.begin(), first.end(),
                   [](const Candidate& a, const Candidate& b) { return a.score.better_than(b.score); });
  return first;
}

}  // namespace peakplan
