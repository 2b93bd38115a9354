#include "planner/planner.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <fmt/format.h>
#include <nlopt.hpp>
#include <numbers>
#include <random>

#include "models/peaking_design.hpp"
#include "models/units.hpp"

namespace peakplan {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

// One continuous value the planner chooses, searched in log space when it is a magnitude.
struct Variable {
  size_t spec;
  std::string key;
  double lo, hi;
  bool log_scale;
  double to_value(double u) const { return log_scale ? std::exp(u) : u; }
  double to_unit(double v) const { return log_scale ? std::log(v) : v; }
};

// The default search bounds of a key when the file says "auto" and the technology is silent.
std::pair<double, double> default_bounds(std::string_view key, const TechnologySpec& tech) {
  const double l_max = tech.max_inductance.value_or(2e-9);
  if (key == "gm") return {1e-3, tech.max_gm.value_or(0.2)};
  if (key == "rd") return {10.0, 2000.0};
  if (key == "l" || key == "l1" || key == "l2") return {1e-12, l_max};
  if (key == "k") return {tech.k_min.value_or(0.0), tech.k_max.value_or(0.9)};
  if (key == "cb") return {std::max(tech.min_cb.value_or(0.05e-15), 0.05e-15), 200e-15};
  if (key == "c_w") return {0.0, 50e-15};
  if (key == "r_load") return {10.0, 10e3};
  return {0.0, 1.0};
}

const std::vector<std::string_view>& plannable_keys(LoadKind kind) {
  static const std::vector<std::string_view> plain{"gm", "rd"};
  static const std::vector<std::string_view> peaked{"gm", "rd", "l"};
  static const std::vector<std::string_view> tcoil{"gm", "rd", "l1", "l2", "k", "cb"};
  return kind == LoadKind::tcoil ? tcoil : kind == LoadKind::plain ? plain : peaked;
}

struct Combination {
  std::vector<LoadKind> kinds;  // per spec stage
  std::vector<int> counts;      // per spec stage
};

std::vector<Combination> combinations(const ChainSpec& spec) {
  std::vector<std::vector<LoadKind>> kind_choices;
  std::vector<std::vector<int>> count_choices;
  for (const auto& s : spec.stages) {
    kind_choices.push_back(s.kinds);
    std::vector<int> counts;
    if (s.count.mode == Adjustable::Mode::fixed) counts = {static_cast<int>(s.count.value)};
    else {
      const int lo = s.count.mode == Adjustable::Mode::range ? static_cast<int>(s.count.min) : 1;
      const int hi = s.count.mode == Adjustable::Mode::range ? static_cast<int>(s.count.max) : 8;
      for (int c = lo; c <= hi; ++c) counts.push_back(c);
    }
    count_choices.push_back(counts);
  }
  std::vector<Combination> all{{}};
  for (size_t i = 0; i < spec.stages.size(); ++i) {
    std::vector<Combination> next;
    for (const auto& partial : all)
      for (auto kind : kind_choices[i])
        for (int count : count_choices[i]) {
          auto c = partial;
          c.kinds.push_back(kind);
          c.counts.push_back(count);
          next.push_back(std::move(c));
        }
    all = std::move(next);
  }
  return all;
}

// Everything one evaluation needs, for one combination of kinds and counts.
class Problem {
 public:
  Problem(const ChainSpec& spec, Combination combo, std::vector<GraphStage> graph)
      : spec_(spec), combo_(std::move(combo)), graph_(std::move(graph)) {
    for (size_t i = 0; i < spec.stages.size(); ++i) {
      for (auto key : plannable_keys(combo_.kinds[i])) {
        const auto* a = spec.stages[i].find(key);
        const bool designed = (key == "l" && spec.stages[i].m) ||
                              (key != "gm" && key != "rd" && combo_.kinds[i] == LoadKind::tcoil &&
                               (spec.stages[i].zeta || !spec.stages[i].response.empty()));
        if (designed) continue;
        // A value the file leaves out entirely is free when the kind was left to the planner.
        const bool free = (a && !a->is_fixed()) || (!a && !spec.stages[i].kind_is_fixed() && key != "gm" && key != "rd");
        if (!free) continue;
        auto [lo, hi] = default_bounds(key, spec.technology);
        if (a && a->mode == Adjustable::Mode::range) {
          lo = a->min;
          hi = a->max;
        }
        const bool log_scale = key != "k" && lo > 0.0;
        variables_.push_back({i, std::string(key), lo, hi, log_scale});
      }
    }
  }

  const std::vector<Variable>& variables() const { return variables_; }

  double value(const std::vector<double>& u, size_t stage, std::string_view key, double fallback) const {
    for (size_t v = 0; v < variables_.size(); ++v)
      if (variables_[v].spec == stage && variables_[v].key == key) return variables_[v].to_value(u[v]);
    const auto* a = spec_.stages[stage].find(key);
    return a && a->is_fixed() ? a->value : fallback;
  }

  Chain build(const std::vector<double>& u) const {
    std::vector<StageCircuit> circuits(spec_.stages.size());
    std::vector<double> c_in(spec_.stages.size()), c_load(spec_.stages.size());
    for (size_t i = 0; i < spec_.stages.size(); ++i) {
      auto& c = circuits[i];
      c.kind = combo_.kinds[i];
      c.gm = value(u, i, "gm", 0.0);
      c.rd = value(u, i, "rd", 0.0);
      const auto* gm = spec_.stages[i].find("gm");
      if (gm && !gm->is_fixed()) {
        // The device is being sized: its capacitances follow gm at the technology's fT.
        c_in[i] = c.gm / (kTwoPi * spec_.technology.ft.value_or(1e12));
        c.c_out = spec_.technology.c_out_ratio.value_or(0.0) * c_in[i];
      } else {
        c_in[i] = value(u, i, "c_in", 0.0);
        c.c_out = value(u, i, "c_out", 0.0);
      }
      c_load[i] = value(u, i, "c_load", 0.0);
      c.r_load = value(u, i, "r_load", std::numeric_limits<double>::infinity());
      c.l = value(u, i, "l", 0.0);
      c.r_l = value(u, i, "r_l", 0.0);
      c.l1 = value(u, i, "l1", 0.0);
      c.l2 = value(u, i, "l2", 0.0);
      c.k = value(u, i, "k", 0.0);
      c.cb = value(u, i, "cb", 0.0);
      c.c_w = value(u, i, "c_w", 0.0);
      const double r_l = value(u, i, "r_l", 0.0);
      c.r_l1 = value(u, i, "r_l1", r_l);
      c.r_l2 = value(u, i, "r_l2", r_l);
    }
    Chain chain = assemble_chain(spec_, graph_, circuits, c_in, c_load);
    apply_designs(chain, spec_, graph_);
    return chain;
  }

  // The closed-form seed: equal gain per stage, maximally flat shunt peaking, m = 0.5 series
  // peaking, a Butterworth-to-Bessel T-coil, all against each stage's actual load.
  std::vector<double> seed() const {
    std::vector<double> u(variables_.size());
    int stages_total = 0;
    for (int c : combo_.counts) stages_total += c;
    const double gain_db = spec_.target.gain_db.value_or(6.0 * stages_total);
    const double stage_gain = std::pow(10.0, gain_db / 20.0 / std::max(1, stages_total));
    for (size_t v = 0; v < variables_.size(); ++v) {
      const auto& var = variables_[v];
      double x = var.log_scale ? std::sqrt(var.lo * var.hi) : 0.5 * (var.lo + var.hi);
      if (var.key == "rd") {
        const double gm = value(u, var.spec, "gm", 0.04);
        x = stage_gain / (gm > 0 ? gm : 0.04);
      }
      u[v] = var.to_unit(std::clamp(x, var.lo, var.hi));
    }
    // Peaking elements from the published designs, now that gm and Rd are seeded.
    const Chain chain = build(u);
    for (size_t v = 0; v < variables_.size(); ++v) {
      const auto& var = variables_[v];
      const auto stage = std::find_if(graph_.begin(), graph_.end(), [&](const GraphStage& g) { return g.spec == var.spec; });
      const auto& c = chain.stages[static_cast<size_t>(stage - graph_.begin())].circuit;
      double x = var.to_value(u[v]);
      const double c_total = c.c_out + c.c_node;
      if (var.key == "l") x = inductance_for_m(c.kind == LoadKind::series ? 0.5 : std::sqrt(2.0) - 1.0, c.rd, c_total);
      if (c.kind == LoadKind::tcoil && c.c_node > 0.0) {
        const auto d = tcoil_for_zeta(0.78, c.rd, c.c_node);
        if (var.key == "l1" || var.key == "l2") x = d.l_half;
        if (var.key == "k") x = d.k;
        if (var.key == "cb") x = d.cb;
      }
      if (std::isfinite(x) && x > 0.0) u[v] = var.to_unit(std::clamp(x, var.lo, var.hi));
    }
    return u;
  }

  const Combination& combination() const { return combo_; }
  const std::vector<GraphStage>& graph() const { return graph_; }

 private:
  const ChainSpec& spec_;
  Combination combo_;
  std::vector<GraphStage> graph_;
  std::vector<Variable> variables_;
};

// What the optimiser sees of one candidate chain.
struct Evaluation {
  FrequencyMetrics f;
  StepMetrics t;
  double total_gm = 0.0;
};

Evaluation evaluate(const Chain& chain, const ChainSpec& spec, bool need_step, int step_points) {
  Evaluation e;
  const auto cascade = output_cascade(chain, chain.outputs().back());
  e.f = frequency_metrics(cascade, spec.limits.ripple_band.value_or(not_found));
  if (need_step) {
    auto axis = choose_time_axis(cascade, e.f.bandwidth_hz);
    if (step_points > 0 && axis.points > step_points) {
      axis.dt *= static_cast<double>(axis.points) / step_points;
      axis.points = step_points;
    }
    e.t = step_metrics(step_response(cascade, axis));
  }
  for (const auto& s : chain.stages) e.total_gm += s.circuit.gm;
  return e;
}

// Constraint values, each <= 0 when met, scaled so that 1 is a large miss.
std::vector<double> violations(const ChainSpec& spec, const Evaluation& e) {
  std::vector<double> g;
  const double gain_db = to_db(e.f.dc_gain);
  const double bw = std::isfinite(e.f.bandwidth_hz) ? e.f.bandwidth_hz : 0.0;
  if (spec.target.gain_db) g.push_back((*spec.target.gain_db - gain_db) / 3.0);
  if (spec.target.bandwidth) g.push_back(1.0 - bw / *spec.target.bandwidth);
  if (spec.target.gain_bandwidth) g.push_back(1.0 - std::fabs(e.f.dc_gain) * bw / *spec.target.gain_bandwidth);
  // Limits are aimed at from slightly inside, so that the refined final check lands within them.
  if (spec.limits.overshoot) g.push_back((e.t.overshoot_pct - 100.0 * *spec.limits.overshoot + 2e-3) / 5.0);
  if (spec.limits.peaking_db) g.push_back((e.f.peaking_db - *spec.limits.peaking_db + 2e-5) / 1.0);
  if (spec.limits.group_delay_ripple)
    g.push_back((e.f.group_delay_ripple_s - *spec.limits.group_delay_ripple) / std::max(*spec.limits.group_delay_ripple, 1e-12));
  return g;
}

double objective(const ChainSpec& spec, const Evaluation& e) {
  const auto& name = spec.target.objective;
  if (name == "widest") return -(std::isfinite(e.f.bandwidth_hz) ? e.f.bandwidth_hz / 1e9 : 0.0);
  if (name == "leanest") return e.total_gm * 1e3;
  // flattest: overshoot and group-delay ripple, each against its limit (or 1 % and 1 ps).
  const double os_scale = spec.limits.overshoot ? std::max(100.0 * *spec.limits.overshoot, 0.1) : 1.0;
  const double gd_scale = spec.limits.group_delay_ripple ? std::max(*spec.limits.group_delay_ripple, 1e-13) : 1e-12;
  return e.t.overshoot_pct / os_scale + e.f.group_delay_ripple_s / gd_scale;
}

bool needs_step(const ChainSpec& spec) {
  return spec.limits.overshoot.has_value() || spec.target.objective == "flattest";
}

struct Candidate {
  std::vector<double> u;
  size_t problem = 0;
  double score = std::numeric_limits<double>::infinity();  // objective plus a feasibility penalty
  double violation = std::numeric_limits<double>::infinity();
};

}  // namespace

std::vector<PlanCheck> check_targets(const ChainSpec& spec, const FrequencyMetrics& f, const StepMetrics& t) {
  std::vector<PlanCheck> checks;
  auto minimum = [&](std::string name, std::string unit, double value, double limit) {
    const double v = std::isfinite(value) ? value : 0.0;
    checks.push_back({std::move(name), std::move(unit), v, limit, true, v - limit, v >= limit * (1.0 - 1e-9)});
  };
  // A limit is met to the resolution the metric is computed at: 1e-4 dB or percentage points
  // (the step response is sampled, its peak refined by a parabola), 1e-9 relative for times.
  auto maximum = [&](std::string name, std::string unit, double value, double limit) {
    const double slack = unit == "s" ? 1e-9 * std::fabs(limit) : 1e-4;
    checks.push_back({std::move(name), std::move(unit), value, limit, false, limit - value, value <= limit + slack});
  };
  if (spec.target.gain_db) minimum("gain", "dB", to_db(f.dc_gain), *spec.target.gain_db);
  if (spec.target.bandwidth) minimum("bandwidth", "Hz", f.bandwidth_hz, *spec.target.bandwidth);
  if (spec.target.gain_bandwidth)
    minimum("gain_bandwidth", "Hz", std::fabs(f.dc_gain) * f.bandwidth_hz, *spec.target.gain_bandwidth);
  if (spec.limits.overshoot) maximum("overshoot", "%", t.overshoot_pct, 100.0 * *spec.limits.overshoot);
  if (spec.limits.peaking_db) maximum("peaking", "dB", f.peaking_db, *spec.limits.peaking_db);
  if (spec.limits.group_delay_ripple)
    maximum("group_delay_ripple", "s", f.group_delay_ripple_s, *spec.limits.group_delay_ripple);
  return checks;
}

std::optional<Plan> plan_chain(const ChainSpec& spec, Diagnostics& diagnostics, const PlanOptions& options) {
  const auto start_time = std::chrono::steady_clock::now();
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
  if (!diagnostics.empty()) return std::nullopt;

  std::vector<Problem> problems;
  for (auto& combo : combinations(spec)) {
    auto graph = build_stage_graph(spec, diagnostics, &combo.counts);
    if (!graph) return std::nullopt;
    problems.emplace_back(spec, std::move(combo), std::move(*graph));
  }

  const bool step = needs_step(spec);
  int evaluations = 0;
  const int budget_per_run =
      std::max(200, options.max_evaluations / static_cast<int>(problems.size() * static_cast<size_t>(options.starts)));
  std::mt19937 random(options.seed);
  Candidate best;

  auto score_of = [&](const Problem& p, const std::vector<double>& u, double& violation) {
    const auto chain = p.build(u);
    const auto e = evaluate(chain, spec, step, 1500);
    ++evaluations;
    violation = 0.0;
    for (double g : violations(spec, e)) violation += std::max(0.0, g);
    return objective(spec, e);
  };

  for (size_t pi = 0; pi < problems.size(); ++pi) {
    const auto& p = problems[pi];
    const auto& vars = p.variables();
    if (vars.empty()) {
      double violation = 0.0;
      const double obj = score_of(p, {}, violation);
      const double score = obj + 1e3 * violation;
      if (violation < best.violation - 1e-12 || (violation <= best.violation + 1e-12 && score < best.score))
        best = {{}, pi, score, violation};
      continue;
    }
    std::vector<double> lo(vars.size()), hi(vars.size());
    for (size_t v = 0; v < vars.size(); ++v) {
      lo[v] = vars[v].to_unit(vars[v].lo);
      hi[v] = vars[v].to_unit(vars[v].hi);
    }
    // COBYLA on the objective with a smooth exterior penalty keeps one code path for feasible
    // and infeasible problems, so an infeasible target still yields its best try.
    auto local_run = [&](std::vector<double>& u, double step_fraction, int budget) {
      nlopt::opt local(nlopt::LN_COBYLA, static_cast<unsigned>(vars.size()));
      local.set_lower_bounds(lo);
      local.set_upper_bounds(hi);
      local.set_maxeval(budget);
      local.set_xtol_rel(1e-8);
      std::vector<double> step_size(vars.size());
      for (size_t v = 0; v < vars.size(); ++v) step_size[v] = step_fraction * (hi[v] - lo[v]);
      local.set_initial_step(step_size);
      struct Context {
        decltype(score_of)* score;
        const Problem* problem;
      } context{&score_of, &p};
      local.set_min_objective(
          [](const std::vector<double>& x, std::vector<double>&, void* data) {
            auto* c = static_cast<Context*>(data);
            double violation = 0.0;
            const double obj = (*c->score)(*c->problem, x, violation);
            return obj + 1e3 * violation + 1e5 * violation * violation;
          },
          &context);
      double value = 0.0;
      try {
        local.optimize(u, value);
      } catch (const std::exception&) {
        // NLopt's roundoff-limited stop still leaves the best point in u.
      }
    };
    Candidate local_best;
    auto consider = [&](const std::vector<double>& u) {
      double violation = 0.0;
      const double obj = score_of(p, u, violation);
      const double score = obj + 1e3 * violation;
      if (violation < local_best.violation - 1e-9 || (violation <= local_best.violation + 1e-9 && score < local_best.score))
        local_best = {u, pi, score, violation};
    };
    for (int start = 0; start < options.starts; ++start) {
      std::vector<double> u = p.seed();
      if (start > 0)
        for (size_t v = 0; v < vars.size(); ++v) {
          // Random starts spread around the seed across the whole box.
          std::uniform_real_distribution<double> pick(lo[v], hi[v]);
          u[v] = start % 2 ? pick(random) : 0.5 * (u[v] + pick(random));
        }
      local_run(u, 0.15, budget_per_run);
      consider(u);
    }
    // Polish the best start with small steps: the optimum usually sits on a constraint edge.
    auto polished = local_best.u;
    local_run(polished, 0.01, budget_per_run);
    consider(polished);
    if (local_best.violation < best.violation - 1e-9 ||
        (local_best.violation <= best.violation + 1e-9 && local_best.score < best.score))
      best = local_best;
  }

  // The final check uses the full-resolution response, as analyze computes it.
  const auto& p = problems[best.problem];
  Plan plan;
  plan.chain = p.build(best.u);
  plan.graph = p.graph();
  for (size_t i = 0; i < spec.stages.size(); ++i)
    plan.stages.push_back({i, p.combination().kinds[i], p.combination().counts[i]});
  const auto final_eval = evaluate(plan.chain, spec, true, 0);
  plan.checks = check_targets(spec, final_eval.f, final_eval.t);
  plan.objective = objective(spec, final_eval);
  const bool met = std::all_of(plan.checks.begin(), plan.checks.end(), [](const PlanCheck& c) { return c.met; });
  plan.termination = met ? Plan::Termination::met : Plan::Termination::not_met;
  // The binding check: the one with the least relative margin.
  double least = std::numeric_limits<double>::infinity();
  for (const auto& c : plan.checks) {
    const double relative = c.margin / std::max(std::fabs(c.limit), 1e-30);
    if (relative < least) {
      least = relative;
      plan.binding = c.name;
    }
  }
  plan.message = met ? "every target and limit is met, " + plan.binding + " binds"
                     : "the best plan found misses " + plan.binding;
  plan.evaluations = evaluations + 1;
  plan.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_time).count();
  return plan;
}

std::string Plan::brief() const {
  return fmt::format("plan {}: {} ({} evaluations, {:.3f} s)", termination == Termination::met ? "met" : "NOT MET",
                     message, evaluations, seconds);
}

}  // namespace peakplan
