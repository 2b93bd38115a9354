// The planner's search machinery: how a candidate is scored, a constrained local minimisation
// (NLopt's COBYLA), and the bookkeeping that lets independent searches run on several threads
// with results identical to one thread.
//
// Determinism: every independent piece of work (a start, a combination) runs in its own Search,
// which counts its own evaluations and keeps its own best point; the caller merges the pieces in
// index order. Nothing a piece computes depends on another piece, on the thread that ran it or
// on timing, so the plan and its evaluation count are the same for every thread count. Only the
// progress display (SearchContext) is shared, and it decides nothing.
#pragma once

#include <chrono>
#include <functional>
#include <limits>
#include <mutex>
#include <string>
#include <vector>

#include "planner/plan_problem.hpp"
#include "planner/planner.hpp"

namespace peakplan {

// The objective the search minimises: -bandwidth in GHz (widest), total gm in mS (leanest),
// input noise in uA (quietest), or overshoot and group-delay ripple each against its limit
// (flattest, dimensionless).
double plan_objective(const ChainSpec& spec, const Evaluation& e);
// The same in the user's terms: bandwidth in Hz, total gm in S, noise in A, flatness as is.
double objective_in_si(const ChainSpec& spec, double objective);
// The search's constraints (planner/requirements.hpp): <= 0 when met.
std::vector<double> plan_violations(const ChainSpec& spec, const Evaluation& e);

struct Score {
  double objective = 0.0;
  double violation = std::numeric_limits<double>::infinity();  // sum of positive constraint values
  double total_gm = 0.0;                                        // S, for the tie-break
  // Feasibility first; among equally feasible candidates the lower objective.
  bool better_than(const Score& o) const {
    if (violation < o.violation - 1e-9) return true;
    if (violation > o.violation + 1e-9) return false;
    return objective < o.objective;
  }
  bool feasible() const { return violation <= 1e-9; }
};

struct Candidate {
  size_t problem = 0;     // index of its combination's Problem
  std::vector<double> u;  // full space
  Score score;
};

// The stage-count tie-break between combinations: of the feasible candidates whose objective is
// within objective_tolerance of the best one's, the one with the fewest stage copies (`copies`,
// per candidate), then the least total gm (less current); the best by score when none is
// feasible. Returns its index. For flattest each copy first adds kFlatnessPerStage to the
// flatness compared: a stage is worth adding only for 5 % of a limit of flatness or more (common
// practice: every stage costs current, area and noise); a 20 dB, 40 GHz plan otherwise took 8
// T-coils, each lowering the overshoot by hundredths of a per cent, where one T-coil meets every
// check.
inline constexpr double kFlatnessPerStage = 0.05;
double objective_tolerance(const ChainSpec& spec, double objective);
size_t tie_break(const ChainSpec& spec, const std::vector<Candidate>& candidates, const std::vector<int>& copies);

// What every search of one plan shares: the user's options (stop, progress), the clock, and a
// running count and best for the progress display. Thread-safe.
class SearchContext {
 public:
  SearchContext(const ChainSpec& spec, const PlanOptions& options);
  const ChainSpec& spec() const { return spec_; }
  const PlanOptions& options() const { return options_; }
  int threads() const { return threads_; }
  bool stopping() const { return options_.stop && options_.stop(); }
  double seconds() const;
  void set_phase(std::string phase);
  // One evaluation done somewhere: counted for the display, which is updated every
  // progress_every evaluations.
  void counted(const Score& s);
  // The final report, with the plan's deterministic count.
  void report_final(int evaluations);

 private:
  void report_locked(int evaluations);
  const ChainSpec& spec_;
  const PlanOptions& options_;
  int threads_ = 1;
  std::chrono::steady_clock::time_point start_;
  int seen_ = 0;
  std::mutex mutex_;
  std::string phase_ = "design space";
  Score best_;
  int reported_ = 0;
};

using ToFull = std::function<std::vector<double>(const std::vector<double>&)>;

// One thread's piece of a search: scores candidates and minimises from a start, counting what
// it spends.
class Search {
 public:
  explicit Search(SearchContext& context) : context_(context) {}

  // Scores u; `constraints` (optional) receives every constraint value (<= 0 when met).
  Score score(const Problem& p, const std::vector<double>& u, Fidelity fidelity,
              std::vector<double>* constraints = nullptr);

  // Minimises the objective subject to every target and limit, over [lo, hi] from `x` (in
  // place: the best point visited), through `to_full` (the identity in the full space). COBYLA
  // takes the constraints itself: it follows a constraint edge, where the optimum usually lies,
  // far better than a penalty's kink lets it. When nothing is feasible its merit function still
  // drives the violation down, and the best point seen is kept.
  Score minimise(const Problem& p, std::vector<double>& x, const std::vector<double>& lo,
                 const std::vector<double>& hi, double step_fraction, int budget, Fidelity fidelity,
                 const ToFull& to_full);
  // The same in the full space.
  Score minimise_full(const Problem& p, std::vector<double>& u, double step_fraction, int budget,
                      Fidelity fidelity);

  int evaluations() const { return evaluations_; }

 private:
  SearchContext& context_;
  int evaluations_ = 0;
};

// The full space's bounds, in its units (log for magnitudes).
std::vector<double> lower_units(const Problem& p);
std::vector<double> upper_units(const Problem& p);

// `count` points of a Latin hypercube over [lo, hi] (every coordinate's range cut into `count`
// strata, each used once, the point uniform inside its stratum), from a fixed seed.
std::vector<std::vector<double>> latin_hypercube(const std::vector<double>& lo, const std::vector<double>& hi,
                                                 int count, unsigned seed);

}  // namespace peakplan
