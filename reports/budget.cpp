#include "reports/budget.hpp"

#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <stdexcept>

#include "models/units.hpp"
#include "planner/requirements.hpp"
#include "planner/stage_value.hpp"
#include "reports/caution.hpp"

namespace peakplan {
namespace {

using Align = TableView::Align;

// Display scales: one place, shared by every rendering.
constexpr double kGhz = 1e9, kPs = 1e-12, kFf = 1e-15, kPh = 1e-12, kMs = 1e-3, kMa = 1e-3;

std::string scaled(double value, double scale, int decimals) { return show_number(value / scale, decimals); }

std::string check_label(const std::string& name) {
  if (name == "gain_bandwidth") return "gain-bandwidth";
  if (name == "group_delay_ripple") return "group-delay ripple";
  if (name == "current") return "supply current";
  return name;
}

// A check's quantity in the unit a reader expects: GHz for Hz, ps for seconds.
struct CheckUnit {
  std::string unit;
  double scale;
  int decimals;
};
CheckUnit check_unit(const PlanCheck& c) {
  if (c.unit == "Hz") return {"GHz", kGhz, 2};
  if (c.unit == "s") return {"ps", kPs, 3};
  if (c.unit == "%") return {"%", 1.0, 2};
  if (c.unit == "A") return {"mA", kMa, 2};
  if (c.unit == "V") return {"mV", 1e-3, 3};
  return {c.unit, 1.0, 2};
}
std::string show_check(const PlanCheck& c, double x) {
  if (c.unit.empty()) return fmt::format("{:.3g}", x);  // a ratio over decades: a bit-error ratio
  const auto u = check_unit(c);
  return scaled(x, u.scale, u.decimals) + " " + u.unit;
}

// How a budget shows an element of each dimension: its scale, unit and decimals.
struct ElementUnit {
  double scale;
  std::string_view unit;  // empty: a plain number
  int decimals;
};
ElementUnit element_unit(Dimension d) {
  if (d == Dimension::inductance) return {kPh, "pH", 1};
  if (d == Dimension::capacitance) return {kFf, "fF", 2};
  if (d == Dimension::resistance) return {1.0, "ohm", 1};
  return {1.0, "", 3};
}

// Every main element of every kind, once, in table order: the CSV's element columns.
std::vector<const LoadParameter*> element_columns() {
  std::vector<const LoadParameter*> out;
  for (const auto& info : all_load_kinds())
    for (const auto& p : info.parameters)
      if (p.role == ParameterRole::element &&
          std::none_of(out.begin(), out.end(), [&](const LoadParameter* q) { return q->key == p.key; }))
        out.push_back(&p);
  return out;
}

std::string elements_text(const BudgetRow& r) {
  const auto& info = load_kind_info(r.kind);
  std::string out;
  for (const auto& [key, value] : r.elements) {
    const auto& p = *find_parameter(info, key);
    const auto u = element_unit(p.dimension);
    out += (out.empty() ? "" : ", ") + std::string(p.label) + " " +
           (u.unit.empty() ? show_number(value, u.decimals) : scaled(value, u.scale, u.decimals) + " " + std::string(u.unit));
  }
  return out.empty() ? "-" : out;
}

std::string md_cell(const std::string& text) {
  std::string out;
  for (char c : text) {
    if (c == '|') out += "\\|";
    else if (c == '\n' || c == '\r') out += ' ';
    else out += c;
  }
  return out;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

std::string csv_number(double value, double scale = 1.0) {
  return std::isfinite(value) ? fmt::format("{:.9g}", value / scale) : std::string();
}

std::string show_si(double value, std::string_view unit) { return format_si(value, unit, 4); }

std::string written_adjustable(const Adjustable& a, std::string_view key, std::string_view unit) {
  auto one = [&](double v) {
    if (key == "k" || key == "count") return key == "count" ? fmt::format("{:.0f}", v) : fmt::format("{:.3f}", v);
    return show_si(v, unit);
  };
  switch (a.mode) {
    case Adjustable::Mode::fixed: return one(a.value);
    case Adjustable::Mode::automatic: return "auto";
    case Adjustable::Mode::range: return "range " + one(a.min) + " to " + one(a.max);
  }
  return "?";
}

std::string_view key_unit(std::string_view key) {
  if (key == "gm") return "S";
  if (key == "k") return "";
  if (key.starts_with("c_") || key == "cb") return "F";
  if (key.starts_with("l")) return "H";
  return "Ω";  // rd, r_load, r_l, r_l1, r_l2
}

std::string kinds_written(const std::vector<LoadKind>& kinds) {
  if (kinds.size() == 1) return std::string(to_string(kinds.front()));
  if (kinds.size() == all_load_kinds().size()) return "auto";
  std::string out = "one of ";
  for (size_t i = 0; i < kinds.size(); ++i) out += (i ? ", " : "") + std::string(to_string(kinds[i]));
  return out;
}

}  // namespace

double BudgetRow::element(std::string_view key) const {
  for (const auto& [k, v] : elements)
    if (k == key) return v;
  return not_found;
}

std::string show_number(double value, int decimals) {
  if (!std::isfinite(value)) return std::isnan(value) ? "n/a" : (value > 0 ? "inf" : "-inf");
  // Avoid "-0.00" for values that round to zero.
  if (std::fabs(value) < 0.5 * std::pow(10.0, -decimals)) value = 0.0;
  return fmt::format("{:.{}f}", value, decimals);
}
namespace {
// A missing value reads "n/a" alone, never "n/a ps".
std::string with_unit(double value, const std::string& text, std::string_view unit) {
  return std::isfinite(value) ? text + " " + std::string(unit) : text;
}
}  // namespace

std::string show_db(double value) { return with_unit(value, show_number(value, 2), "dB"); }
std::string show_ghz(double hz) { return with_unit(hz, scaled(hz, kGhz, 2), "GHz"); }
std::string show_ps(double s) { return with_unit(s, scaled(s, kPs, 2), "ps"); }
std::string show_pct(double pct) { return with_unit(pct, show_number(pct, 2), "%"); }
// Past Q = 20 (BER below 1e-88) and below a BER of 1e-30 the figures only say "no errors at all";
// the JSON keeps the numbers.
std::string show_q(double q) { return std::isfinite(q) && q > 20.0 ? "> 20" : show_number(q, 2); }
std::string show_eye_height(double height) { return height <= 0.0 ? "closed" : show_number(height, 3); }
std::string show_ber(double ber) {
  if (!std::isfinite(ber)) return "n/a";
  return ber < 1e-30 ? "< 1e-30" : fmt::format("{:.1e}", ber);
}

Budget build_budget(const ChainSpec& spec, const Chain& chain, const ChainAnalysis& analysis) {
  if (analysis.outputs.empty()) throw std::logic_error("build_budget: the analysis has no output");
  Budget b;
  b.chain = chain.name;
  const auto& main = analysis.outputs.back();
  const auto main_path = chain.path_to(main.stage);
  const double main_delay = main.response.frequency.group_delay_s;
  const auto gm_over_id = spec.technology.gm_over_id;
  b.has_current = gm_over_id.has_value() && *gm_over_id > 0.0;

  double path_share = 0.0;
  for (const auto& s : analysis.stages) {
    const auto& st = chain.stages[static_cast<size_t>(s.stage)];
    const auto& c = st.circuit;
    BudgetRow r;
    r.id = st.id;
    r.kind = c.kind;
    r.gm = c.gm;
    r.rd = c.rd;
    for (const auto& p : load_kind_info(c.kind).parameters)
      if (p.role == ParameterRole::element) r.elements.emplace_back(p.key, c.*(p.field));
    r.c_node = output_node_capacitance(c);  // every capacitance on the node, c_out included
    const auto& f = s.alone.frequency;
    r.gain_db = to_db(f.dc_gain);
    r.bandwidth_hz = f.bandwidth_hz;
    r.peaking_db = f.peaking_db;
    r.group_delay_s = f.group_delay_s;
    r.cumulative_gain_db = to_db(s.cumulative.frequency.dc_gain);
    r.cumulative_bandwidth_hz = s.cumulative.frequency.bandwidth_hz;
    r.on_main_path = std::find(main_path.begin(), main_path.end(), s.stage) != main_path.end();
    if (r.on_main_path && main_delay > 0.0) {
      r.delay_share_pct = 100.0 * r.group_delay_s / main_delay;
      path_share += r.delay_share_pct;
    }
    if (!r.on_main_path) b.has_off_path = true;
    if (b.has_current) r.current_a = c.gm / *gm_over_id;
    b.totals.total_gm += c.gm;
    b.rows.push_back(std::move(r));
  }

  auto& t = b.totals;
  const auto& f = main.response.frequency;
  t.node = chain.stages[static_cast<size_t>(main.stage)].id;
  t.gain_db = to_db(f.dc_gain);
  t.bandwidth_hz = f.bandwidth_hz;
  t.peaking_db = f.peaking_db;
  t.group_delay_s = f.group_delay_s;
  t.group_delay_ripple_s = f.group_delay_ripple_s;
  t.ripple_band_hz = f.ripple_band_hz;
  t.overshoot_pct = main.response.step.overshoot_pct;
  if (b.has_current) t.total_current_a = t.total_gm / *gm_over_id;
  t.input_network_share_pct = main_delay > 0.0 ? 100.0 - path_share : 0.0;
  b.checks = analysis_checks(spec, main, t.total_gm);
  return b;
}

std::vector<TableView> budget_views(const Budget& b) {
  std::vector<TableView> views;

  TableView stages;
  stages.id = "budget";
  stages.title = "Stage budget";
  stages.headings = {"stage", "kind", "gm (mS)", "Rd (Ω)", "peaking elements", "C node (fF)", "gain (dB)",
                     "BW alone (GHz)", "peaking (dB)", "cum. gain (dB)", "cum. BW (GHz)", "delay share (%)"};
  stages.align = {Align::left,  Align::left,  Align::right, Align::right, Align::left, Align::right,
                  Align::right, Align::right, Align::right, Align::right, Align::right, Align::right};
  if (b.has_current) {
    stages.headings.push_back("Id (mA)");
    stages.align.push_back(Align::right);
  }
  for (const auto& r : b.rows) {
    std::vector<std::string> row{r.id,
                                 std::string(to_string(r.kind)),
                                 scaled(r.gm, kMs, 1),
                                 show_number(r.rd, 1),
                                 elements_text(r),
                                 scaled(r.c_node, kFf, 1),
                                 show_number(r.gain_db, 2),
                                 scaled(r.bandwidth_hz, kGhz, 2),
                                 show_number(r.peaking_db, 2),
                                 show_number(r.cumulative_gain_db, 2),
                                 scaled(r.cumulative_bandwidth_hz, kGhz, 2),
                                 r.on_main_path ? show_number(r.delay_share_pct, 1) : "off main path"};
    if (b.has_current) row.push_back(scaled(r.current_a, kMa, 2));
    stages.rows.push_back(std::move(row));
    stages.row_state.push_back(r.on_main_path ? "" : "off-path");
  }
  stages.notes.push_back(
      "Gain, BW alone and peaking: each stage alone, driving its actual load. Cum. gain and cum. BW: the "
      "chain from its input to the stage's output node. Delay share: the stage's DC group delay as a part of "
      "the main output's (" + show_ps(b.totals.group_delay_s) + ").");
  if (b.has_current) stages.notes.push_back("Id = gm / (gm/Id) from [technology] gm_over_id.");
  views.push_back(std::move(stages));

  const auto& t = b.totals;
  TableView totals;
  totals.id = "totals";
  totals.title = "Chain totals at the main output (" + t.node + ")";
  totals.headings = {"quantity", "value"};
  totals.align = {Align::left, Align::right};
  totals.rows = {{"gain", show_db(t.gain_db)},
                 {"bandwidth (-3 dB)", show_ghz(t.bandwidth_hz)},
                 {"peaking", show_db(t.peaking_db)},
                 {"group delay at DC", show_ps(t.group_delay_s)},
                 {"group-delay ripple, DC to " + show_ghz(t.ripple_band_hz), show_ps(t.group_delay_ripple_s)},
                 {"step overshoot", show_pct(t.overshoot_pct)},
                 {"total gm", scaled(t.total_gm, kMs, 1) + " mS"}};
  if (b.has_current) totals.rows.push_back({"total supply current", scaled(t.total_current_a, kMa, 2) + " mA"});
  totals.rows.push_back({"delay share of the input network", show_pct(t.input_network_share_pct)});
  totals.row_state.assign(totals.rows.size(), "");
  views.push_back(std::move(totals));

  if (!b.checks.empty()) {
    TableView spec;
    spec.id = "spec";
    spec.title = "Targets and limits";
    spec.headings = {"check", "required", "achieved", "margin", "result"};
    spec.align = {Align::left, Align::right, Align::right, Align::right, Align::left};
    for (const auto& c : b.checks) {
      spec.rows.push_back({check_label(c.name), (c.is_minimum ? "≥ " : "≤ ") + show_check(c, c.limit),
                           show_check(c, c.value), show_check(c, c.margin), c.met ? "pass" : "FAIL"});
      spec.row_state.push_back(c.met ? "pass" : "fail");
    }
    views.push_back(std::move(spec));
  }
  return views;
}

std::string tables_markdown(const std::vector<TableView>& views) {
  std::string out;
  for (const auto& v : views) {
    out += "## " + md_cell(v.title) + "\n\n|";
    for (const auto& h : v.headings) out += " " + md_cell(h) + " |";
    out += "\n|";
    for (auto a : v.align) out += a == Align::right ? " ---: |" : " :--- |";
    out += "\n";
    for (const auto& row : v.rows) {
      out += "|";
      for (const auto& cell : row) out += " " + md_cell(cell) + " |";
      out += "\n";
    }
    for (const auto& n : v.notes) out += "\n" + md_cell(n) + "\n";
    out += "\n";
  }
  return out;
}

std::string budget_markdown(const Budget& b) {
  return "# Budget: " + md_cell(b.chain) + "\n\n" + std::string(kPlanningCaution) + "\n\n" +
         tables_markdown(budget_views(b));
}

std::string budget_csv(const Budget& b) {
  // The element columns come from the kind table: every kind's main elements, once each.
  static const std::vector<const LoadParameter*> element_keys = element_columns();
  static const std::vector<std::string> columns = [] {
    std::vector<std::string> c{"row", "id", "kind", "gm_mS", "rd_ohm"};
    for (const auto* p : element_keys) {
      const auto u = element_unit(p->dimension);
      c.push_back(std::string(p->key) + (u.unit.empty() ? "" : "_" + std::string(u.unit)));
    }
    for (const char* name : {"c_node_fF", "gain_dB", "bandwidth_GHz", "peaking_dB", "group_delay_ps",
                             "cumulative_gain_dB", "cumulative_bandwidth_GHz", "delay_share_pct", "current_mA",
                             "group_delay_ripple_ps", "overshoot_pct", "check_unit", "check_value", "check_limit",
                             "check_margin", "check_met"})
      c.emplace_back(name);
    return c;
  }();
  auto col = [](std::string_view name) {
    const auto it = std::find(columns.begin(), columns.end(), name);
    if (it == columns.end()) throw std::logic_error("budget_csv: no column " + std::string(name));
    return static_cast<size_t>(it - columns.begin());
  };
  auto line = [](const std::vector<std::string>& fields) {
    std::string out;
    for (size_t i = 0; i < fields.size(); ++i) out += (i ? "," : "") + fields[i];
    return out + "\r\n";
  };
  std::string out = line(columns);
  for (const auto& r : b.rows) {
    std::vector<std::string> f{"stage", csv_field(r.id), std::string(to_string(r.kind)), csv_number(r.gm, kMs),
                               csv_number(r.rd)};
    for (const auto* p : element_keys) f.push_back(csv_number(r.element(p->key), element_unit(p->dimension).scale));
    for (auto&& x : {csv_number(r.c_node, kFf), csv_number(r.gain_db), csv_number(r.bandwidth_hz, kGhz),
                     csv_number(r.peaking_db), csv_number(r.group_delay_s, kPs), csv_number(r.cumulative_gain_db),
                     csv_number(r.cumulative_bandwidth_hz, kGhz),
                     r.on_main_path ? csv_number(r.delay_share_pct) : std::string("off_main_path"),
                     csv_number(r.current_a, kMa)})
      f.push_back(x);
    f.resize(columns.size());
    out += line(f);
  }
  const auto& t = b.totals;
  std::vector<std::string> total{"total", csv_field(t.node), "", csv_number(t.total_gm, kMs)};
  total.resize(columns.size());
  total[col("gain_dB")] = csv_number(t.gain_db);
  total[col("bandwidth_GHz")] = csv_number(t.bandwidth_hz, kGhz);
  total[col("peaking_dB")] = csv_number(t.peaking_db);
  total[col("group_delay_ps")] = csv_number(t.group_delay_s, kPs);
  total[col("current_mA")] = csv_number(t.total_current_a, kMa);
  total[col("group_delay_ripple_ps")] = csv_number(t.group_delay_ripple_s, kPs);
  total[col("overshoot_pct")] = csv_number(t.overshoot_pct);
  out += line(total);
  for (const auto& c : b.checks) {
    const auto u = check_unit(c);
    std::vector<std::string> f(columns.size());
    f[0] = "check";
    f[1] = c.name;
    f[2] = c.is_minimum ? "minimum" : "maximum";
    f[col("check_unit")] = u.unit;
    f[col("check_value")] = csv_number(c.value, u.scale);
    f[col("check_limit")] = csv_number(c.limit, u.scale);
    f[col("check_margin")] = csv_number(c.margin, u.scale);
    f[col("check_met")] = c.met ? "pass" : "fail";
    out += line(f);
  }
  return out;
}

TableView plan_values_view(const ChainSpec& spec, const Plan& plan) {
  TableView v;
  v.id = "plan-values";
  v.title = "Plan: values as written and as planned";
  v.headings = {"stage", "value", "as written", "planned"};
  v.align = {Align::left, Align::left, Align::right, Align::right};
  auto add = [&](const std::string& id, std::string key, std::string written, std::string planned) {
    const bool changed = written != planned;
    v.rows.push_back({id, std::move(key), std::move(written), std::move(planned)});
    v.row_state.push_back(changed ? "planned" : "");
  };
  for (const auto& p : plan.stages) {
    const auto& s = spec.stages[p.table];
    size_t first = 0;
    while (first < plan.graph.size() && plan.graph[first].table != p.table) ++first;
    if (first == plan.graph.size()) continue;  // a stage with no copy cannot be planned; nothing to show
    const auto& planned = plan.chain.stages[first];
    add(s.id, "kind", kinds_written(s.kinds), std::string(to_string(p.kind)));
    add(s.id, "count", written_adjustable(s.count, "count", ""), std::to_string(p.count));

    std::vector<std::string> keys{"gm", "rd", "c_in", "c_out"};
    for (const auto& param : load_kind_info(p.kind).parameters)
      if (param.role == ParameterRole::element || param.role == ParameterRole::loss) keys.emplace_back(param.key);
    keys.insert(keys.end(), {"c_load", "r_load"});
    std::string design;
    if (s.m) design = fmt::format("from m = {}", *s.m);
    if (s.zeta) design = fmt::format("from zeta = {}", *s.zeta);
    if (!s.response.empty()) design = "from response = " + s.response;
    const auto* gm = s.find("gm");
    for (const auto& key : keys) {
      const double value = stage_value(planned, key);
      const auto unit = key_unit(key);
      const auto* a = s.find(key);
      // Loss resistances and optional loads that are zero or open and not in the file add nothing.
      const bool optional = key.starts_with("r_l") || key == "c_load" || key == "r_load";
      if (!a && optional && (value == 0.0 || std::isinf(value))) continue;
      const std::string shown = key == "k" ? fmt::format("{:.3f}", value) : show_si(value, unit);
      std::string written;
      if (a) written = written_adjustable(*a, key, unit);
      else if (key.starts_with("r_l") && spec.technology.inductor_q) written = "from inductor_q";
      else if ((key == "c_in" || key == "c_out") && gm && !gm->is_fixed()) written = "from gm and fT";
      else if (!design.empty() && (key == "l" || key == "l1" || key == "l2" || key == "k" || key == "cb"))
        written = design;
      else written = "not in the file";
      add(s.id, key, std::move(written), shown);
    }
  }
  v.notes.push_back("Values of the first copy of a counted stage; every copy is identical.");
  return v;
}

namespace {

// A check's requirement as a reader types it: "≥ 30.00 dB", "≤ 4.00 %".
std::string shown_requirement(const PlanCheck& check) {
  const std::string sign = check.is_minimum ? "≥ " : "≤ ";
  if (check.unit == "dB") return sign + show_db(check.limit);
  if (check.unit == "Hz") return sign + show_ghz(check.limit);
  if (check.unit == "%") return sign + show_pct(check.limit);
  if (check.unit == "s") return sign + show_ps(check.limit);
  if (check.unit == "A") return sign + scaled(check.limit, kMa, 2) + " mA";
  if (check.unit.empty()) return sign + fmt::format("{:.3g}", check.limit);
  return sign + show_number(check.limit, 3) + " " + check.unit;
}

std::string requirement_of(const std::vector<PlanCheck>& checks, std::string_view name) {
  for (const auto& c : checks)
    if (c.name == name) return shown_requirement(c) + (c.met ? "" : " (missed)");
  return "-";
}

}  // namespace

TableView plan_metrics_view(const Budget& after, const std::optional<Budget>& before,
                            const std::vector<PlanCheck>& checks) {
  TableView v;
  v.id = "plan-metrics";
  v.title = "Plan: the main output before and after";
  v.headings = before ? std::vector<std::string>{"metric", "required", "as written", "planned"}
                      : std::vector<std::string>{"metric", "required", "planned"};
  v.align = before ? std::vector<Align>{Align::left, Align::right, Align::right, Align::right}
                   : std::vector<Align>{Align::left, Align::right, Align::right};
  auto add = [&](std::string name, std::string_view check, auto show) {
    std::vector<std::string> row{std::move(name), requirement_of(checks, check)};
    if (before) row.push_back(show(before->totals));
    row.push_back(show(after.totals));
    v.rows.push_back(std::move(row));
    v.row_state.push_back("");
  };
  add("gain", "gain", [](const BudgetTotals& t) { return show_db(t.gain_db); });
  add("bandwidth (-3 dB)", "bandwidth", [](const BudgetTotals& t) { return show_ghz(t.bandwidth_hz); });
  add("peaking", "peaking", [](const BudgetTotals& t) { return show_db(t.peaking_db); });
  add("group delay at DC", "", [](const BudgetTotals& t) { return show_ps(t.group_delay_s); });
  add("group-delay ripple", "group_delay_ripple", [](const BudgetTotals& t) { return show_ps(t.group_delay_ripple_s); });
  add("step overshoot", "overshoot", [](const BudgetTotals& t) { return show_pct(t.overshoot_pct); });
  add("total gm", "", [](const BudgetTotals& t) { return scaled(t.total_gm, kMs, 1) + " mS"; });
  if (after.has_current)
    add("total supply current", "current", [](const BudgetTotals& t) { return scaled(t.total_current_a, kMa, 2) + " mA"; });
  if (!before)
    v.notes.push_back("The file as written leaves values to the planner, so it has no response of its own: the "
                      "\"required\" column is what the plan was asked for.");
  return v;
}

}  // namespace peakplan
