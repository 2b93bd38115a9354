#include "planner/plan_search.hpp"

#include <algorithm>
#include <cmath>
#include <nlopt.hpp>
#include <numeric>
#include <random>

#include "planner/requirements.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {
namespace {

size_t constraint_count(const ChainSpec& spec) { return plan_violations(spec, Evaluation{}).size(); }

}  // namespace

std::vector<double> plan_violations(const ChainSpec& spec, const Evaluation& e) {
  auto g = requirement_violations(spec, as_measured(e));
  // An unstable candidate misses every requirement by far (a plan always has its sag limit).
  if (e.unstable)
    for (auto& x : g) x = std::max(x, 10.0);
  return g;
}

double plan_objective(const ChainSpec& spec, const Evaluation& e) {
  switch (spec.target.objective) {
    case Objective::widest: return -(std::isfinite(e.f.bandwidth_hz) ? e.f.bandwidth_hz / 1e9 : 0.0);
    case Objective::leanest: return e.total_gm * 1e3;
    case Objective::quietest: return std::isfinite(e.input_noise_rms_a) ? e.input_noise_rms_a * 1e6 : 1e6;  // uA
    case Objective::flattest: break;
  }
  // flattest: overshoot and group-delay ripple, each against its limit. Without a ripple limit,
  // against the group delay of one pole at the target band B, 1/(2 pi B) (4 ps at 40 GHz): a fixed
  // 1 ps weighed a 100 GHz chain's ripple like a 10 GHz one's. Without a band either: 1 % and 1 ps.
  const double band = target_band(spec);
  const double gd_default = std::isfinite(band) ? 1.0 / (2.0 * std::numbers::pi * band) : 1e-12;
  const double os_scale = spec.limits.overshoot ? std::max(100.0 * *spec.limits.overshoot, 0.1) : 1.0;
  const double gd_scale = spec.limits.group_delay_ripple ? std::max(*spec.limits.group_delay_ripple, 1e-13) : gd_default;
  return e.t.overshoot_pct / os_scale + e.f.group_delay_ripple_s / gd_scale;
}

double objective_in_si(const ChainSpec& spec, double objective) {
  switch (spec.target.objective) {
    case Objective::widest: return -objective * 1e9;
    case Objective::leanest: return objective * 1e-3;
    case Objective::quietest: return objective * 1e-6;
    case Objective::flattest: break;
  }
  return objective;
}

// 0.5 % of the objective (of a bandwidth, a total gm, a noise); for flatness, a sum of ratios to
// the limits, 0.05 (5 % of one limit) at least: within that two plans are the same to a designer,
// and the one with fewer stages and less current is the one to build (common practice).
double objective_tolerance(const ChainSpec& spec, double objective) {
  const double relative = 0.005 * std::fabs(objective);
  return spec.target.objective == Objective::flattest ? std::max(relative, 0.05) : relative;
}

size_t tie_break(const ChainSpec& spec, const std::vector<Candidate>& candidates, const std::vector<int>& copies) {
  size_t best = 0;
  for (size_t i = 1; i < candidates.size(); ++i)
    if (candidates[i].score.better_than(candidates[best].score)) best = i;
  if (!candidates[best].score.feasible()) return best;
  // flattest: every stage copy costs kFlatnessPerStage, so more stages must buy real flatness.
  const bool flat = spec.target.objective == Objective::flattest;
  const auto cost = [&](size_t i) { return candidates[i].score.objective + (flat ? kFlatnessPerStage * copies[i] : 0.0); };
  for (size_t i = 0; i < candidates.size(); ++i)
    if (candidates[i].score.feasible() && cost(i) < cost(best)) best = i;
  const double reach = cost(best) + objective_tolerance(spec, candidates[best].score.objective);
  size_t chosen = best;
  for (size_t i = 0; i < candidates.size(); ++i) {
    const auto& c = candidates[i].score;
    if (!c.feasible() || cost(i) > reach) continue;
    const auto& k = candidates[chosen].score;
    const bool fewer = copies[i] < copies[chosen];
    const bool leaner = copies[i] == copies[chosen] && c.total_gm < k.total_gm * (1.0 - 1e-3);
    if (fewer || leaner) chosen = i;
  }
  return chosen;
}

SearchContext::SearchContext(const ChainSpec& spec, const PlanOptions& options)
    : spec_(spec), options_(options), threads_(options.threads > 0 ? options.threads : default_thread_count()),
      start_(std::chrono::steady_clock::now()) {}

double SearchContext::seconds() const {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
}

void SearchContext::set_phase(std::string phase) {
  const std::lock_guard lock(mutex_);
  phase_ = std::move(phase);
}

void SearchContext::counted(const Score& s) {
  const std::lock_guard lock(mutex_);  // uncontended for the tens of microseconds an evaluation takes
  const int n = ++seen_;
  if (s.better_than(best_)) best_ = s;
  if (options_.progress && n % std::max(1, options_.progress_every) == 0) report_locked(n);
}

void SearchContext::report_final(int evaluations) {
  const std::lock_guard lock(mutex_);
  report_locked(evaluations);
}

void SearchContext::report_locked(int evaluations) {
  if (!options_.progress) return;
  // Threads may finish their counts out of order: the display never goes back.
  reported_ = std::max(reported_, evaluations);
  options_.progress({reported_, seconds(), phase_, best_.violation <= 1e-6, best_.objective});
}

Score Search::score(const Problem& p, const std::vector<double>& u, Fidelity fidelity, std::vector<double>* constraints) {
  if (context_.stopping()) throw PlanStopped{};
  const auto e = p.evaluate(u, fidelity);
  const auto& spec = context_.spec();
  Score s{plan_objective(spec, e), 0.0, e.total_gm};
  const auto g = plan_violations(spec, e);
  for (double x : g) s.violation += std::max(0.0, x);
  if (constraints) *constraints = g;
  ++evaluations_;
  context_.counted(s);
  return s;
}

Score Search::minimise(const Problem& p, std::vector<double>& x, const std::vector<double>& lo,
                       const std::vector<double>& hi, double step_fraction, int budget, Fidelity fidelity,
                       const ToFull& to_full) {
  if (x.empty()) return score(p, to_full(x), fidelity);
  nlopt::opt local(nlopt::LN_COBYLA, static_cast<unsigned>(x.size()));
  local.set_lower_bounds(lo);
  local.set_upper_bounds(hi);
  local.set_maxeval(std::max(budget, static_cast<int>(x.size()) + 2));
  local.set_xtol_rel(1e-7);
  std::vector<double> step(x.size());
  for (size_t v = 0; v < x.size(); ++v) step[v] = step_fraction * (hi[v] - lo[v]);
  local.set_initial_step(step);
  struct Context {
    Search* search;
    const Problem* problem;
    Fidelity fidelity;
    const ToFull* to_full;
    Score best;
    std::vector<double> best_x;
    std::vector<double> last_x, last_g;  // NLopt asks for the constraints at the x it just scored
    void evaluate(const double* z, size_t n, double* f) {
      std::vector<double> zz(z, z + n);
      if (zz == last_x && !f) return;
      const Score s = search->score(*problem, (*to_full)(zz), fidelity, &last_g);
      last_x = zz;
      if (s.better_than(best)) {
        best = s;
        best_x = zz;
      }
      if (f) *f = s.objective;
    }
  } context{this, &p, fidelity, &to_full, {}, x, {}, {}};
  local.set_min_objective(
      [](unsigned n, const double* z, double*, void* data) {
        double f = 0.0;
        static_cast<Context*>(data)->evaluate(z, n, &f);
        return f;
      },
      &context);
  const size_t m = constraint_count(context_.spec());
  if (m > 0)
    local.add_inequality_mconstraint(
        [](unsigned mm, double* result, unsigned n, const double* z, double*, void* data) {
          auto* c = static_cast<Context*>(data);
          c->evaluate(z, n, nullptr);
          for (unsigned i = 0; i < mm; ++i) result[i] = c->last_g[i];
        },
        &context, std::vector<double>(m, 1e-9));
  double value = 0.0;
  try {
    local.optimize(x, value);
  } catch (const std::exception&) {
    // NLopt turns a PlanStopped thrown in its callbacks into a failure of its own.
    if (context_.stopping()) throw PlanStopped{};
    // A roundoff-limited stop still leaves a usable point; the best one seen is kept below.
  }
  // COBYLA returns its last iterate; keep the best point it visited instead.
  x = context.best_x;
  return context.best;
}

Score Search::minimise_full(const Problem& p, std::vector<double>& u, double step_fraction, int budget,
                            Fidelity fidelity) {
  static const ToFull identity = [](const std::vector<double>& x) { return x; };
  return minimise(p, u, lower_units(p), upper_units(p), step_fraction, budget, fidelity, identity);
}

std::vector<double> lower_units(const Problem& p) {
  std::vector<double> lo;
  for (const auto& v : p.variables()) lo.push_back(v.to_unit(v.lo));
  return lo;
}

std::vector<double> upper_units(const Problem& p) {
  std::vector<double> hi;
  for (const auto& v : p.variables()) hi.push_back(v.to_unit(v.hi));
  return hi;
}

std::vector<std::vector<double>> latin_hypercube(const std::vector<double>& lo, const std::vector<double>& hi,
                                                 int count, unsigned seed) {
  std::mt19937 random(seed);
  std::uniform_real_distribution<double> inside(0.0, 1.0);
  std::vector<std::vector<double>> points(static_cast<size_t>(std::max(0, count)), std::vector<double>(lo.size()));
  std::vector<int> strata(points.size());
  for (size_t d = 0; d < lo.size(); ++d) {
    std::iota(strata.begin(), strata.end(), 0);
    std::shuffle(strata.begin(), strata.end(), random);
    for (size_t i = 0; i < points.size(); ++i)
      points[i][d] = lo[d] + (hi[d] - lo[d]) * (strata[i] + inside(random)) / static_cast<double>(points.size());
  }
  return points;
}

}  // namespace peakplan
