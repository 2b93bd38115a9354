#include "planner/planner.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <fmt/format.h>
#include <numbers>

#include "models/receiver.hpp"
#include "models/units.hpp"
#include "planner/plan_global_nlopt.hpp"
#include "planner/plan_phases.hpp"
#include "planner/plan_problem.hpp"
#include "planner/plan_search.hpp"
#include "planner/requirements.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {
namespace {

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
  if (!plan.binds) return "every target and limit is met, none binds (" + plan.binding + " has the least margin)";
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
                             s.modulation)
      .average_w;
}

double total_gm(const Chain& chain) {
  double sum = 0.0;
  for (const auto& s : chain.stages) sum += s.circuit.gm;
  return sum;
}

std::vector<PlanCheck> check_targets(const ChainSpec& spec, const FrequencyMetrics& f, const StepMetrics& t,
                                     std::optional<double> total_gm, std::optional<double> input_noise_rms_a) {
  return requirement_checks(spec, {f, t, total_gm, input_noise_rms_a, std::nullopt});
}

namespace {

// The planner's own input errors (each needs something only a plan asks for), into diagnostics.
void check_plan_input(const ChainSpec& spec, Diagnostics& diagnostics) {
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
  // Open values with nothing to aim at: flattest, leanest and quietest then have a trivial optimum
  // (a stage at its floor gain, the smallest device), which would be reported as met; widest
  // aims at the bandwidth itself.
  const auto& t = spec.target;
  const bool aims = t.gain_db || t.bandwidth || t.gain_bandwidth || t.transimpedance || t.sensitivity_w ||
                    t.output_swing || t.objective == Objective::widest;
  for (const auto& s : spec.stages) {
    if (aims || !is_planned(s)) continue;
    // At the first open value in the file (the map is in key order).
    const Adjustable* open = nullptr;
    for (const auto& [key, v] : s.values)
      if (!v.is_fixed() && (!open || v.where.line < open->where.line)) open = &v;
    diagnostics.error(open ? open->where : s.kinds.size() > 1 ? s.kind_where : s.count.where,
                      "stage '" + s.id + "' has values for the planner to choose, but [target] gives nothing to "
                      "plan for: expected gain, bandwidth, gain_bandwidth, transimpedance, sensitivity or "
                      "output_swing in [target] (or objective = \"widest\")");
    break;
  }
  if (spec.technology.current_budget.has_value() != spec.technology.gm_over_id.has_value())
    diagnostics.error({}, "[technology]: a current_budget needs gm_over_id (and gm_over_id a current_budget) "
                          "to bound the chain's supply current");
}

// Whether the problem leaves any value of [[stage]] table `table` open.
bool has_open_value(const Problem& problem, size_t table) {
  return std::any_of(problem.variables().begin(), problem.variables().end(),
                     [&](const Variable& v) { return v.table == table; });
}

// A planned stage needs some capacitance of its own, as every real stage has: on its output node
// (c_load, the next stages' c_in) or its drain (c_out). With none, nothing bounds its bandwidth
// (with the defaults, c_out_ratio 0 and no c_load, the planner once returned eight T-coils whose
// last peaked 252 dB out of band, "every target met"). One error per [[stage]] table.
void check_stage_capacitance(const ChainSpec& spec, const Problem& problem, std::vector<bool>& reported,
                              Diagnostics& diagnostics) {
  const Chain chain = problem.build(problem.seed(), Fidelity::search);
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    const auto& c = chain.stages[i].circuit;
    const size_t table = problem.graph()[i].table;
    const bool drain_apart = !load_kind_info(c.kind).drain_is_output;
    if (reported[table] || !has_open_value(problem, table) || output_node_capacitance(c) > 0.0 ||
        (drain_apart && c.c_out > 0.0))
      continue;
    reported[table] = true;
    const auto& s = spec.stages[table];
    const auto* c_load = s.find("c_load");
    diagnostics.error(c_load ? c_load->where : s.where,
                      "stage '" + s.id + "': it carries no capacitance (no c_load, no stage fed, no c_out), so "
                          "nothing bounds its bandwidth and a plan would be meaningless; give c_load, the capacitance "
                          "of what it drives (the next block's input, pads, a probe)");
  }
}

// A planned series or T-coil stage with no capacitance on its drain (c_out 0) works against the
// textbook's ideal current source, which such a load can boost far past what any device gives (a
// single T-coil was planned to 1.9 THz with ft = 200 GHz). The suite's free T-coil is posed that
// way on purpose, so this is a note, not an error: one per planned [[stage]] table.
std::vector<std::string> ideal_drain_notes(const ChainSpec& spec, const Problem& problem, const Plan& plan) {
  std::vector<std::string> notes;
  std::vector<bool> noted(spec.stages.size(), false);
  for (size_t i = 0; i < plan.chain.stages.size(); ++i) {
    const auto& c = plan.chain.stages[i].circuit;
    const size_t table = plan.graph[i].table;
    if (noted[table] || !has_open_value(problem, table) || load_kind_info(c.kind).drain_is_output || c.c_out > 0.0)
      continue;
    noted[table] = true;
    notes.push_back("stage '" + spec.stages[table].id + "': its drain node carries no capacitance (c_out is 0), so its " +
                    std::string(load_kind_info(c.kind).name) +
                    " load works against an ideal current source and may reach a bandwidth no device gives; give "
                    "c_out, or [technology] c_out_ratio when gm is open, for a plan to build");
  }
  return notes;
}

// One Problem per combination of the discrete choices; nullopt after an input error.
std::optional<std::vector<Problem>> build_problems(const ChainSpec& spec, Diagnostics& diagnostics) {
  std::vector<Problem> problems;
  std::vector<bool> reported(spec.stages.size(), false);
  for (auto& combo : combinations(spec)) {
    auto graph = build_stage_graph(spec, diagnostics, &combo.counts);
    if (!graph) return std::nullopt;
    if (problems.empty()) check_current_input(spec, *graph, diagnostics);
    if (!diagnostics.empty()) return std::nullopt;
    problems.emplace_back(spec, std::move(combo), std::move(*graph));
    check_stage_capacitance(spec, problems.back(), reported, diagnostics);
  }
  if (!diagnostics.empty()) return std::nullopt;
  return problems;
}

// plan_for = "yield": the corners stand for the yield; the Monte Carlo run of the plan (locals
// included) says whether they did, and is a check of its own. Returns the note for the message.
std::string check_yield(const ChainSpec& spec, Plan& plan, bool& met) {
  if (spec.target.plan_for != "yield" || !spec.target.yield) return {};
  VariationRunOptions run;
  run.threads = default_thread_count();
  const auto mc = analyze_variation(spec, plan.chain, run).monte_carlo;
  if (!mc) return {};
  const double y = mc->overall_yield, target = *spec.target.yield;
  plan.checks.push_back({"yield", "%", 100.0 * y, 100.0 * target, true, 100.0 * (y - target), y >= target});
  plan.check_corners.push_back("Monte Carlo");
  plan.nominal_checks.push_back(plan.checks.back());
  met = met && y >= target;
  return fmt::format("; Monte Carlo yield {:.2f} % (95 % interval {:.2f} .. {:.2f} %) of {} samples, corners at "
                     "{:.2f} of each global spread",
                     100.0 * y, 100.0 * mc->ci95.lo, 100.0 * mc->ci95.hi, mc->samples, yield_corner_scale(spec));
}

// The binding check: the one with the least relative margin, and whether that margin is close.
void find_binding(Plan& plan) {
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
  plan.binds = least <= kBindsWithin;
}

// The Plan from the chosen candidate and its final checks.
Plan assemble_plan(const ChainSpec& spec, const std::vector<Problem>& problems, const Candidate& best,
                   FinalChecks checks) {
  const auto& p = problems[best.problem];
  Plan plan;
  plan.chain = p.build(best.u);
  plan.graph = p.graph();
  for (size_t i = 0; i < spec.stages.size(); ++i)
    plan.stages.push_back({i, p.combination().kinds[i], p.combination().counts[i]});
  bool met = checks.all_met();
  plan.checks = std::move(checks.worst);
  plan.for_corners = !p.corners().empty();
  if (plan.for_corners) {
    plan.corner_count = static_cast<int>(p.corners().size());
    plan.nominal_checks = std::move(checks.nominal);
    plan.check_corners = std::move(checks.corners);
  }
  const std::string yield_note = check_yield(spec, plan, met);
  const auto& final_eval = checks.nominal_evaluation;
  plan.objective = plan_objective(spec, final_eval);
  plan.termination = met ? Plan::Termination::met : Plan::Termination::not_met;
  find_binding(plan);
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
  return plan;
}

}  // namespace

PlanOptions with_effort(PlanOptions options, int effort) {
  options.effort = std::max(1, effort);
  options.global_method = options.effort > 1 ? GlobalMethod::halving_crs2 : GlobalMethod::halving;
  return options;
}

namespace {

// The search refuses an unstable candidate (plan_violations); when it found nothing else, the
// stage that cannot be made stable within its ranges is an input error, not a plan.
bool check_planned_stability(const ChainSpec& spec, const Chain& chain, Diagnostics& diagnostics) {
  for (const auto& stage : chain.stages) {
    const auto pole = first_unstable_pole(stage_rational(stage).poles());
    if (!pole) continue;
    const auto s = std::find_if(spec.stages.begin(), spec.stages.end(), [&](const StageSpec& x) {
      return stage.id == x.id || stage.id.starts_with(x.id + ".");
    });
    const StageSpec* table = s == spec.stages.end() ? nullptr : &*s;
    const auto* rf = table ? table->find("rf") : nullptr;
    const bool open = table && std::any_of(table->values.begin(), table->values.end(),
                                           [](const auto& v) { return !v.second.is_fixed(); });
    diagnostics.error(rf ? rf->where : table ? table->where : SourcePosition{},
                      fmt::format("stage '{}' {} (a pole in the right half-plane at {}); expected a stage that can "
                                  "be stable{}",
                                  stage.id, open ? "is unstable at every value within its ranges the planner tried"
                                                 : "is unstable as written",
                                  format_si(std::abs(*pole) / (2.0 * std::numbers::pi), "Hz", 3),
                                  rf ? ": fewer core_stages, less gain per cell (gm rd), an rf range that reaches larger "
                                       "values or a cf across it"
                                     : ""));
    return false;
  }
  return true;
}

}  // namespace

std::optional<Plan> plan_chain(const ChainSpec& input, Diagnostics& diagnostics, const PlanOptions& options) {
  // Every plan is held to a sag limit, the file's or the default; an analysis only to the file's.
  ChainSpec spec = input;
  if (!spec.limits.sag_db) spec.limits.sag_db = LimitsSpec::kDefaultSagDb;
  if (!spec.limits.min_stage_gain_db) spec.limits.min_stage_gain_db = LimitsSpec::kDefaultMinStageGainDb;
  check_plan_input(spec, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;
  const auto problems = build_problems(spec, diagnostics);
  if (!problems) return std::nullopt;

  SearchContext context(spec, options);
  int evaluations = 0;
  const auto explored = search_combinations(context, *problems, evaluations);
  std::vector<Candidate> global;
  std::vector<Score> finals, crs2_runs;
  if (const size_t top = explored.front().problem; global_sized((*problems)[top])) {
    context.set_phase("global");
    global = options.global_method == GlobalMethod::halving
                 ? global_phase(context, (*problems)[top], top, &explored.front().u, evaluations, finals)
                 : global_phase_nlopt(context, (*problems)[top], top, &explored.front().u, evaluations, finals,
                                      crs2_runs);
  }
  context.set_phase("full space");
  const auto ranked = refine(context, *problems, explored, global, evaluations);
  FinalChecks checks;
  const Candidate best = final_phase(context, *problems, ranked, checks, evaluations);

  Plan plan = assemble_plan(spec, *problems, best, std::move(checks));
  if (!check_planned_stability(spec, plan.chain, diagnostics)) return std::nullopt;
  plan.spread = start_spread(spec, finals);
  plan.spread.effort = std::max(1, options.effort);
  plan.spread.crs2_runs = static_cast<int>(crs2_runs.size());
  if (const auto run = std::min_element(crs2_runs.begin(), crs2_runs.end(),
                                         [](const Score& a, const Score& b) { return a.better_than(b); });
      run != crs2_runs.end() && run->feasible())
    plan.spread.crs2_best = objective_in_si(spec, run->objective);
  plan.notes = ideal_drain_notes(spec, (*problems)[best.problem], plan);
  plan.evaluations = evaluations + 1;
  plan.seconds = context.seconds();
  context.report_final(evaluations);
  return plan;
}

std::string Plan::brief() const {
  return fmt::format("plan {}: {} ({} evaluations, {:.3f} s)", termination == Termination::met ? "met" : "NOT MET",
                     message, evaluations, seconds);
}

}  // namespace peakplan
