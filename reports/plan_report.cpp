#include "reports/plan_report.hpp"

#include <cmath>
#include <fmt/format.h>

#include "models/units.hpp"
#include "reports/json_report.hpp"
#include "reports/text_report.hpp"

namespace peakplan {
namespace {

std::string shown(const PlanCheck& c, double x) {
  if (c.unit == "dB") return fmt::format("{:.2f} dB", x);
  if (c.unit == "%") return fmt::format("{:.2f} %", x);
  if (c.unit.empty()) return fmt::format("{:.3g}", x);  // a ratio over decades: a bit-error ratio
  return format_si(x, c.unit, 4);
}

nlohmann::json finite_or_null(double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(nullptr); }

// The objective's SI unit, as PlanSpread reports it.
std::string objective_unit(const ChainSpec& spec) {
  switch (spec.target.objective) {
    case Objective::widest: return "Hz";
    case Objective::leanest: return "S";
    case Objective::quietest: return "A";
    case Objective::flattest: break;
  }
  return "";
}

nlohmann::json spread_json(const ChainSpec& spec, const PlanSpread& s) {
  if (s.starts == 0) return nullptr;
  return {{"starts", s.starts},           {"feasible", s.feasible},
          {"within_1pct", s.near_best},   {"best", finite_or_null(s.best)},
          {"median", finite_or_null(s.median)}, {"unit", objective_unit(spec)},
          {"effort", s.effort},           {"crs2_runs", s.crs2_runs},
          {"crs2_best", finite_or_null(s.crs2_best)}};
}

// One line: how sure the plan is.
std::string spread_text(const ChainSpec& spec, const PlanSpread& s) {
  if (s.starts == 0) return {};
  const auto unit = objective_unit(spec);
  auto shown = [&](double x) { return unit.empty() ? fmt::format("{:.3f}", x) : format_si(x, unit, 4); };
  // What followed the starts: the CRS2 runs of a harder search, or, when fewer than three starts
  // came near the best (the global phase's own sign of a rugged landscape), a pointer to one.
  std::string tail;
  if (s.crs2_runs > 0)
    tail = fmt::format("; then {} CRS2 runs (effort {}), {}", s.crs2_runs, s.effort,
                       std::isfinite(s.crs2_best) ? "best " + shown(s.crs2_best) : "none met every target and limit");
  else if (s.feasible > 0 && s.near_best < 3)
    tail = "; few agree: plan --effort 2 or more searches harder";
  // The plan itself may still meet everything: the starts are one phase of several, and the
  // combination search and the refinement that follow them are checked too.
  if (s.feasible == 0)
    return fmt::format("search spread: none of the {} global starts met every target and limit on its own (the plan "
                       "comes from the closed-form designs and their refinement){}\n",
                       s.starts, tail);
  return fmt::format("search spread: {} of {} global starts met every target and limit; {} objective best {}, median "
                     "{}; {} within {} of their best{}\n",
                     s.feasible, s.starts, to_string(spec.target.objective), shown(s.best), shown(s.median), s.near_best,
                     spec.target.objective == Objective::flattest ? "0.05 (flatness)" : "1 %", tail);
}

}  // namespace

nlohmann::json plan_json(const ChainSpec& spec, const Plan& plan, const ChainAnalysis& analysis) {
  auto doc = analysis_json(plan.chain, analysis);
  doc["status"] = plan.termination == Plan::Termination::met ? "met" : "not_met";
  doc["message"] = plan.message;
  doc["binding"] = plan.binding.empty() ? nlohmann::json(nullptr) : nlohmann::json(plan.binding);  // null: nothing to choose
  doc["binds"] = !plan.binding.empty() && plan.binds;
  doc["objective"] = std::string(to_string(spec.target.objective));
  doc["evaluations"] = plan.evaluations;
  doc["plan_time_s"] = plan.seconds;
  doc["search_spread"] = spread_json(spec, plan.spread);
  doc["checks"] = nlohmann::json::array();
  for (const auto& c : plan.checks)
    doc["checks"].push_back({{"name", c.name}, {"unit", c.unit}, {"value", c.value}, {"limit", c.limit},
                             {"kind", c.is_minimum ? "minimum" : "maximum"}, {"margin", c.margin}, {"met", c.met}});
  doc["plan_for"] = spec.target.plan_for;
  if (plan.for_corners) {
    // Each check's value above is its worst over the corners; here the nominal value beside it.
    for (size_t i = 0; i < plan.checks.size(); ++i) {
      doc["checks"][i]["corner"] = plan.check_corners[i];
      doc["checks"][i]["nominal"] = plan.nominal_checks[i].value;
      doc["checks"][i]["nominal_margin"] = plan.nominal_checks[i].margin;
    }
    doc["binding_corner"] = plan.binding_corner;
    doc["corners_checked"] = plan.corner_count;
  }
  doc["chosen"] = nlohmann::json::array();
  for (const auto& p : plan.stages) {
    size_t first = 0;
    while (plan.graph[first].table != p.table) ++first;
    doc["chosen"].push_back({{"id", spec.stages[p.table].id},
                             {"kind", std::string(to_string(p.kind))},
                             {"count", p.count},
                             {"values", stage_values_json(plan.chain.stages[first])}});
  }
  return doc;
}

namespace {

std::string_view binding_mark(const Plan& plan, const PlanCheck& c) {
  if (c.name != plan.binding) return "";
  return plan.binds ? " (binding)" : " (least margin)";
}

}  // namespace

std::string plan_text(const ChainSpec& spec, const Plan& plan, const ChainAnalysis& analysis) {
  std::string out = plan.brief() + "\n" + spread_text(spec, plan.spread) + "\n" + analysis_text(plan.chain, analysis);
  if (plan.for_corners) {
    out += fmt::format("\ntargets and limits at nominal and at the worst of {} corners (objective: {}, at the worst "
                       "corner)\n", plan.corner_count, to_string(spec.target.objective));
    out += fmt::format("  {:<20} {:>12} {:>12} {:>12} {:>12}  {:<16}  {}\n", "check", "required", "nominal", "worst",
                       "margin", "worst corner", "");
    for (size_t i = 0; i < plan.checks.size(); ++i) {
      const auto& c = plan.checks[i];
      out += fmt::format("  {:<20} {:>12} {:>12} {:>12} {:>12}  {:<16}  {}{}\n", c.name,
                         (c.is_minimum ? ">= " : "<= ") + shown(c, c.limit), shown(c, plan.nominal_checks[i].value),
                         shown(c, c.value), shown(c, c.margin), plan.check_corners[i], c.met ? "met" : "NOT MET",
                         binding_mark(plan, c));
    }
    if (plan.checks.empty()) out += "  (the file sets no [target] or [limits])\n";
    return out;
  }
  out += fmt::format("\ntargets and limits (objective: {})\n", to_string(spec.target.objective));
  out += fmt::format("  {:<20} {:>12} {:>14} {:>14}  {}\n", "check", "required", "achieved", "margin", "");
  for (const auto& c : plan.checks)
    out += fmt::format("  {:<20} {:>12} {:>14} {:>14}  {}{}\n", c.name, (c.is_minimum ? ">= " : "<= ") + shown(c, c.limit),
                       shown(c, c.value), shown(c, c.margin), c.met ? "met" : "NOT MET",
                       binding_mark(plan, c));
  if (plan.checks.empty()) out += "  (the file sets no [target] or [limits])\n";
  return out;
}

std::string checks_text(const std::vector<PlanCheck>& checks) {
  if (checks.empty()) return {};
  std::string out = "\ntargets and limits (as written: analyze checks them, plan chooses values to meet them)\n";
  out += fmt::format("  {:<20} {:>12} {:>14} {:>14}  {}\n", "check", "required", "achieved", "margin", "");
  for (const auto& c : checks)
    out += fmt::format("  {:<20} {:>12} {:>14} {:>14}  {}\n", c.name, (c.is_minimum ? ">= " : "<= ") + shown(c, c.limit),
                       shown(c, c.value), shown(c, c.margin), c.met ? "met" : "NOT MET");
  return out;
}

}  // namespace peakplan
