#include "planner/planner.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <fmt/format.h>
#include <nlopt.hpp>
#include <random>

#include "models/receiver.hpp"
#include "models/units.hpp"
#include "planner/plan_problem.hpp"
#include "planner/requirements.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {
namespace {

// The search's constraints (planner/requirements.hpp), from a candidate's evaluation.
std::vector<double> violations(const ChainSpec& spec, const Evaluation& e) {
  return requirement_violations(spec, as_measured(e));
}

size_t constraint_count(const ChainSpec& spec) {
  Evaluation none;
  return violations(spec, none).size();
}

double objective(const ChainSpec& spec, const Evaluation& e) {
  const auto& name = spec.target.objective;
  if (name == "widest") return -(std::isfinite(e.f.bandwidth_hz) ? e.f.bandwidth_hz / 1e9 : 0.0);
  if (name == "leanest") return e.total_gm * 1e3;
  if (name == "quietest") return std::isfinite(e.input_noise_rms_a) ? e.input_noise_rms_a * 1e6 : 1e6;  // uA
  // flattest: overshoot and group-delay ripple, each against its limit (or 1 % and 1 ps).
  const double os_scale = spec.limits.overshoot ? std::max(100.0 * *spec.limits.overshoot, 0.1) : 1.0;
  const double gd_scale = spec.limits.group_delay_ripple ? std::max(*spec.limits.group_delay_ripple, 1e-13) : 1e-12;
  return e.t.overshoot_pct / os_scale + e.f.group_delay_ripple_s / gd_scale;
}

struct Score {
  double objective = 0.0;
  double violation = std::numeric_limits<double>::infinity();  // sum of positive constraint values
  // Feasibility first; among equally feasible candidates the lower objective.
  bool better_than(const Score& o) const {
    if (violation < o.violation - 1e-9) return true;
    if (violation > o.violation + 1e-9) return false;
    return objective < o.objective;
  }
};

struct Candidate {
  size_t problem = 0;
  std::vector<double> u;  // full space
  Score score;
};

// Counts evaluations, keeps the best candidate seen and reports progress.
class Search {
 public:
  Search(const ChainSpec& spec, const PlanOptions& options)
      : spec_(spec), options_(options), start_(std::chrono::steady_clock::now()) {}

  // Scores u; `constraints` (optional) receives every constraint value (<= 0 when met).
  Score score(const Problem& p, size_t index, const std::vector<double>& u, Fidelity fidelity,
              std::vector<double>* constraints = nullptr) {
    if (stopping()) throw PlanStopped{};
    const auto e = p.evaluate(u, fidelity);
    Score s{objective(spec_, e), 0.0};
    const auto g = violations(spec_, e);
    for (double x : g) s.violation += std::max(0.0, x);
    if (constraints) *constraints = g;
    ++evaluations_;
    if (fidelity == Fidelity::search && s.better_than(best_.score)) best_ = {index, u, s};
    if (options_.progress && evaluations_ % std::max(1, options_.progress_every) == 0) report();
    return s;
  }

  // Minimises the objective subject to every target and limit, over `box` from `x` (in place),
  // through `to_full`. COBYLA takes the constraints itself: it follows a constraint edge, where
  // the optimum usually lies, far better than a penalty's kink lets it. When nothing is feasible
  // its merit function still drives the violation down, and the best point seen is kept.
  template <class ToFull>
  Score minimise(const Problem& p, size_t index, std::vector<double>& x, const std::vector<double>& lo,
                 const std::vector<double>& hi, double step_fraction, int budget, Fidelity fidelity,
                 ToFull to_full) {
    if (x.empty()) return score(p, index, to_full(x), fidelity);
    nlopt::opt local(nlopt::LN_COBYLA, static_cast<unsigned>(x.size()));
    local.set_lower_bounds(lo);
    local.set_upper_bounds(hi);
    local.set_maxeval(budget);
    local.set_xtol_rel(1e-7);
    std::vector<double> step(x.size());
    for (size_t v = 0; v < x.size(); ++v) step[v] = step_fraction * (hi[v] - lo[v]);
    local.set_initial_step(step);
    struct Context {
      Search* search;
      const Problem* problem;
      size_t index;
      Fidelity fidelity;
      ToFull* to_full;
      Score best;
      std::vector<double> best_x;
      std::vector<double> last_x, last_g;  // NLopt asks for the constraints at the x it just scored
      void evaluate(const double* z, size_t n, double* f) {
        std::vector<double> zz(z, z + n);
        if (zz == last_x && !f) return;
        const Score s = search->score(*problem, index, (*to_full)(zz), fidelity, &last_g);
        last_x = zz;
        if (s.better_than(best)) {
          best = s;
          best_x = zz;
        }
        if (f) *f = s.objective;
      }
    } context{this, &p, index, fidelity, &to_full, {}, x, {}, {}};
    local.set_min_objective(
        [](unsigned n, const double* z, double*, void* data) {
          double f = 0.0;
          static_cast<Context*>(data)->evaluate(z, n, &f);
          return f;
        },
        &context);
    const size_t m = constraint_count(spec_);
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
      if (stopping()) throw PlanStopped{};
      // A roundoff-limited stop still leaves a usable point; the best one seen is kept below.
    }
    // COBYLA returns its last iterate; keep the best point it visited instead.
    x = context.best_x;
    return context.best;
  }

  int evaluations() const { return evaluations_; }
  bool stopping() const { return options_.stop && options_.stop(); }
  double seconds() const { return std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count(); }
  void set_stage(std::string stage) { stage_ = std::move(stage); }
  void report() const {
    if (options_.progress)
      options_.progress({evaluations_, seconds(), stage_, best_.score.violation <= 1e-6, best_.score.objective});
  }

 private:
  const ChainSpec& spec_;
  const PlanOptions& options_;
  std::chrono::steady_clock::time_point start_;
  int evaluations_ = 0;
  std::string stage_ = "design space";
  Candidate best_;
};

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

// The global stage for one combination: a multi-start in the design space, from the closed-form
// seed (start 0) and fixed-seed random points (starts first .. last-1).
Candidate explore_design_space(Search& search, const Problem& p, Candidate best, int first, int last,
                               int evaluations_per_dimension, std::mt19937& random) {
  const auto& lo = p.design_lower();
  const auto& hi = p.design_upper();
  const auto expand = [&p](const std::vector<double>& z) { return p.expand(z); };
  const int budget = evaluations_per_dimension * static_cast<int>(p.design_dimensions() + 2);
  if (p.design_dimensions() == 0) last = std::min(last, 1);
  for (int start = first; start < last; ++start) {
    auto z = p.design_seed();
    if (start > 0)
      for (size_t d = 0; d < z.size(); ++d) {
        std::uniform_real_distribution<double> pick(lo[d], hi[d]);
        z[d] = start % 2 ? pick(random) : 0.5 * (z[d] + pick(random));
      }
    const Score s = search.minimise(p, best.problem, z, lo, hi, 0.2, budget, Fidelity::search, expand);
    if (s.better_than(best.score)) best = {best.problem, p.expand(z), s};
  }
  return best;
}

// The local stage: every open value from the design-space optimum, then a polish.
Candidate refine_full_space(Search& search, const Problem& p, Candidate start, bool first, const PlanOptions& options,
                            std::mt19937& random) {
  const auto lo = lower_units(p);
  const auto hi = upper_units(p);
  const auto identity = [](const std::vector<double>& u) { return u; };
  const int n = static_cast<int>(p.variables().size());
  if (n == 0) return start;
  Candidate best = start;
  auto run = [&](std::vector<double> u, double step, int budget) {
    const Score s = search.minimise(p, start.problem, u, lo, hi, step, budget, Fidelity::search, identity);
    if (s.better_than(best.score)) best = {start.problem, u, s};
  };
  run(start.u, 0.05, 40 * (n + 2));
  // Random starts over the whole box find optima far from the designs the design space spans
  // (an asymmetric T-coil; a bandwidth edge reached past an in-band sag), where the landscape
  // is rugged. They are drawn for the best combination while the search as a whole has spent
  // fewer than kExtraStartsUntil evaluations: 16 at most for up to 6 values, 8 for up to 12.
  constexpr int kExtraStartsUntil = 4000;
  const int per_start = 40 * (n + 2);
  const int cap = n <= 6 ? 4 * options.starts : n <= 12 ? 2 * options.starts : 0;
  for (int extra = 1; first && extra < cap && search.evaluations() + per_start <= kExtraStartsUntil; ++extra) {
    auto u = start.u;
    for (size_t v = 0; v < u.size(); ++v) {
      std::uniform_real_distribution<double> pick(lo[v], hi[v]);
      u[v] = extra % 2 ? pick(random) : 0.5 * (u[v] + pick(random));
    }
    run(u, 0.15, per_start);
  }
  run(best.u, 0.005, 20 * (n + 2));  // polish: the optimum usually sits on a constraint edge
  return best;
}

// The headline: what the plan met or missed. With nothing to choose there is no binding check
// (a fixed chain's least margin says nothing about the plan), and a miss names every failure.
std::string plan_message(Plan& plan, bool met, bool nothing_to_choose) {
  std::string failed;
  for (const auto& c : plan.checks)
    if (!c.met) failed += (failed.empty() ? "" : ", ") + c.name;
  if (nothing_to_choose) plan.binding.clear();
  const std::string fixed = nothing_to_choose ? " (nothing to choose: every value is fixed)" : "";
  if (plan.checks.empty()) return "no targets or limits to meet" + fixed;
  if (!met) return (nothing_to_choose ? "the chain as written misses " : "the best plan found misses ") + failed + fixed;
  if (nothing_to_choose) return "every target and limit is met" + fixed;
  return "every target and limit is met, " + plan.binding + " binds";
}

}  // namespace

double sensitivity_power(const ChainSpec& spec, double input_noise_rms_a) {
  if (!spec.photodiode || !spec.signal || !(input_noise_rms_a > 0.0) || !std::isfinite(input_noise_rms_a))
    return std::numeric_limits<double>::quiet_NaN();
  const auto& s = *spec.signal;
  const double er = s.extinction_ratio_db ? std::pow(10.0, *s.extinction_ratio_db / 10.0)
                                          : std::numeric_limits<double>::infinity();
  return optical_sensitivity(input_noise_rms_a, spec.photodiode->responsivity, q_from_ber(s.target_ber), er,
                             s.modulation == "pam4" ? Modulation::pam4 : Modulation::nrz)
      .average_w;
}

double total_gm(const Chain& chain) {
  double sum = 0.0;
  for (const auto& s : chain.stages) sum += s.circuit.gm;
  return sum;
}

std::vector<PlanCheck> check_targets(const ChainSpec& spec, const FrequencyMetrics& f, const StepMetrics& t,
                                     std::optional<double> total_gm, std::optional<double> input_noise_rms_a,
                                     const LargeSignalEye* large_signal) {
  return requirement_checks(spec, {f, t, total_gm, input_noise_rms_a, std::nullopt,
                                   large_signal ? std::optional(large_signal->height_v) : std::nullopt,
                                   large_signal ? std::optional(large_signal->ddj_pp_s) : std::nullopt});
}

namespace {

// The checks of a plan: those of check_targets, and the least stage gain on the main path.
std::vector<PlanCheck> plan_checks(const ChainSpec& spec, const Evaluation& e) {
  return requirement_checks(spec, as_measured(e));
}

}  // namespace

std::optional<Plan> plan_chain(const ChainSpec& input, Diagnostics& diagnostics, const PlanOptions& options) {
  // Every plan is held to a sag limit, the file's or the default; an analysis only to the file's.
  ChainSpec spec = input;
  if (!spec.limits.sag_db) spec.limits.sag_db = LimitsSpec::kDefaultSagDb;
  if (!spec.limits.min_stage_gain_db) spec.limits.min_stage_gain_db = LimitsSpec::kDefaultMinStageGainDb;
  for (const auto& s : spec.stages) {
    const auto* gm = s.find("gm");
    if (gm && !gm->is_fixed()) {
      if (!spec.technology.ft)
        diagnostics.error(gm->where, "stage '" + s.id + "': gm is chosen by the planner, which then sizes "
                                     "c_in = gm/(2 pi ft): give [technology] ft");
      for (const auto* key : {"c_in", "c_out"})
        if (const auto* a = s.find(key))
          diagnostics.error(a->where, "stage '" + s.id + "': " + key + " follows from gm when gm is chosen "
                                      "by the planner; remove it (or fix gm)");
    }
  }
  if (spec.target.plan_for == "yield") {
    if (!spec.target.yield)
      diagnostics.error(spec.target.plan_for_where, "[target] plan_for = \"yield\" needs [target] yield, e.g. yield = \"99 %\"");
    if (!spec.variation || yield_corner_scale(spec) == 0.0)
      diagnostics.error(spec.target.plan_for_where, "[target] plan_for = \"yield\" needs a [variation] table with a "
                                                    "global spread in at least one class");
  } else if (spec.target.yield) {
    diagnostics.error(spec.target.yield_where, "[target] yield is the target of plan_for = \"yield\"; add it, or "
                                               "remove yield");
  }
  if (spec.target.plan_for == "corners" && !spec.variation)
    diagnostics.error(spec.target.plan_for_where,
                      "[target] plan_for = \"corners\" needs a [variation] table (spreads with corners = "
                      "\"extremes\", or [[variation.corner]] tables) to say which corners");
  else if (spec.target.plan_for == "corners" && !spec.variation->extremes && spec.variation->corners.empty())
    diagnostics.error(spec.target.plan_for_where,
                      "[target] plan_for = \"corners\": [variation] has corners = \"none\" and no "
                      "[[variation.corner]] tables, so there is no corner to plan for");
  if (spec.technology.current_budget.has_value() != spec.technology.gm_over_id.has_value())
    diagnostics.error({}, "[technology]: a current_budget needs gm_over_id (and gm_over_id a current_budget) "
                          "to bound the chain's supply current");
  if (!diagnostics.empty()) return std::nullopt;

  std::vector<Problem> problems;
  for (auto& combo : combinations(spec)) {
    auto graph = build_stage_graph(spec, diagnostics, &combo.counts);
    if (!graph) return std::nullopt;
    if (problems.empty()) check_current_input(spec, *graph, diagnostics);
    if (!diagnostics.empty()) return std::nullopt;
    problems.emplace_back(spec, std::move(combo), std::move(*graph));
  }

  Search search(spec, options);
  std::mt19937 random(options.seed);

  // 1. Global, by successive halving: every combination from its closed-form seed, then the
  //    random starts for the most promising few only.
  auto by_score = [](const Candidate& a, const Candidate& b) { return a.score.better_than(b.score); };
  std::vector<Candidate> explored;
  for (size_t i = 0; i < problems.size(); ++i)
    explored.push_back(explore_design_space(search, problems[i], Candidate{i, {}, {}}, 0, 1,
                                            problems.size() > 3 ? 15 : 25, random));
  std::stable_sort(explored.begin(), explored.end(), by_score);
  const size_t kept = std::min(explored.size(), size_t{3});
  for (size_t r = 0; r < kept; ++r)
    explored[r] = explore_design_space(search, problems[explored[r].problem], explored[r], 1, options.starts, 25, random);
  std::stable_sort(explored.begin(), explored.begin() + static_cast<std::ptrdiff_t>(kept), by_score);

  // 2. Local: the most promising combinations in the full space.
  search.set_stage("full space");
  Candidate best = explored.front();
  const size_t refined = std::min(explored.size(), static_cast<size_t>(std::max(1, options.refined)));
  for (size_t r = 0; r < refined; ++r) {
    const auto candidate = refine_full_space(search, problems[explored[r].problem], explored[r], r == 0, options, random);
    if (candidate.score.better_than(best.score)) best = candidate;
  }

  // 3. Final: measured like analyze; a limit missed only there gets a short full-fidelity repair.
  const auto& p = problems[best.problem];
  // Per corner (nominal first; only nominal when planning for nominal), and each check's worst.
  struct FinalChecks {
    std::vector<PlanCheck> worst, nominal;
    std::vector<std::string> corners;  // per check, where its worst value is
  };
  auto final_checks = [&](const std::vector<double>& u) {
    const auto each = p.evaluate_corners(u, Fidelity::final);
    FinalChecks r;
    r.nominal = plan_checks(spec, each.front());
    r.worst = r.nominal;
    r.corners.assign(r.worst.size(), "nominal");
    for (size_t c = 1; c < each.size(); ++c) {
      const auto checks = plan_checks(spec, each[c]);
      for (size_t i = 0; i < checks.size(); ++i)
        if (checks[i].margin < r.worst[i].margin || (!checks[i].met && r.worst[i].met)) {
          r.worst[i] = checks[i];
          r.corners[i] = p.corners()[c].name;
        }
    }
    return std::pair{r, p.evaluate(u, Fidelity::final)};
  };
  auto [final_result, final_eval] = final_checks(best.u);
  const auto all_met = [](const FinalChecks& c) {
    return std::all_of(c.worst.begin(), c.worst.end(), [](const PlanCheck& x) { return x.met; });
  };
  if (!all_met(final_result) && best.score.violation < 1e-3 && !p.variables().empty()) {
    search.set_stage("repair");
    auto u = best.u;
    const auto identity = [](const std::vector<double>& x) { return x; };
    const int n = static_cast<int>(p.variables().size());
    search.minimise(p, best.problem, u, lower_units(p), upper_units(p), 0.002, 10 * (n + 2), Fidelity::final, identity);
    auto [repaired, repaired_eval] = final_checks(u);
    if (all_met(repaired)) {
      best.u = u;
      final_result = std::move(repaired);
      final_eval = repaired_eval;
    }
  }

  Plan plan;
  plan.chain = p.build(best.u);
  plan.graph = p.graph();
  for (size_t i = 0; i < spec.stages.size(); ++i)
    plan.stages.push_back({i, p.combination().kinds[i], p.combination().counts[i]});
  bool met = all_met(final_result);
  plan.checks = std::move(final_result.worst);
  plan.for_corners = !p.corners().empty();
  if (plan.for_corners) {
    plan.corner_count = static_cast<int>(p.corners().size());
    plan.nominal_checks = std::move(final_result.nominal);
    plan.check_corners = std::move(final_result.corners);
  }
  std::string yield_note;
  if (spec.target.plan_for == "yield" && spec.target.yield) {
    // The corners stand for the yield; the Monte Carlo run of the plan (locals included) says
    // whether they did, and is a check of its own.
    VariationRunOptions run;
    run.threads = default_thread_count();
    const auto mc = analyze_variation(spec, plan.chain, run).monte_carlo;
    if (mc) {
      const double y = mc->overall_yield, target = *spec.target.yield;
      plan.checks.push_back({"yield", "%", 100.0 * y, 100.0 * target, true, 100.0 * (y - target), y >= target});
      plan.check_corners.push_back("Monte Carlo");
      plan.nominal_checks.push_back(plan.checks.back());
      met = met && y >= target;
      yield_note = fmt::format("; Monte Carlo yield {:.2f} % (95 % interval {:.2f} .. {:.2f} %) of {} samples, corners at "
                               "{:.2f} of each global spread",
                               100.0 * y, 100.0 * mc->ci95.lo, 100.0 * mc->ci95.hi, mc->samples, yield_corner_scale(spec));
    }
  }
  plan.objective = objective(spec, final_eval);
  plan.termination = met ? Plan::Termination::met : Plan::Termination::not_met;
  // The binding check: the one with the least relative margin.
  double least = std::numeric_limits<double>::infinity();
  for (size_t i = 0; i < plan.checks.size(); ++i) {
    const auto& c = plan.checks[i];
    const double relative = c.margin / std::max(std::fabs(c.limit), 1e-30);
    if (relative < least) {
      least = relative;
      plan.binding = c.name;
      if (plan.for_corners) plan.binding_corner = plan.check_corners[i];
    }
  }
  plan.message = plan_message(plan, met, problems.size() == 1 && p.variables().empty());
  if (plan.for_corners && !plan.checks.empty())
    plan.message += fmt::format(" (planned for {} corners; binding corner: {})", plan.corner_count, plan.binding_corner);
  plan.message += yield_note;
  // A -3 dB edge far beyond a deep in-band sag meets the letter of a bandwidth target, not its
  // intent; say so rather than let the figure stand alone.
  if (final_eval.f.sag_db < -1.0)
    plan.message += fmt::format("; note: the passband sags to {:.2f} dB at {} before its -3 dB edge at {} "
                                "(a group_delay_ripple or peaking limit excludes such shapes)",
                                final_eval.f.sag_db, format_si(final_eval.f.sag_frequency_hz, "Hz"),
                                format_si(final_eval.f.bandwidth_hz, "Hz"));
  plan.evaluations = search.evaluations() + 1;
  plan.seconds = search.seconds();
  search.report();
  return plan;
}

std::string Plan::brief() const {
  return fmt::format("plan {}: {} ({} evaluations, {:.3f} s)", termination == Termination::met ? "met" : "NOT MET",
                     message, evaluations, seconds);
}

}  // namespace peakplan
