#include "reports/compare_report.hpp"

#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <limits>

#include "models/units.hpp"
#include "reports/caution.hpp"

namespace peakplan {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

nlohmann::json number(double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(nullptr); }

// One compared quantity: how it is named in JSON and text, its unit, and whether a relative
// change is meaningful (quantities on a ratio scale: not dB, percentages or eye fractions).
struct Quantity {
  const char* key;
  const char* label;
  const char* unit;  // "dB", "%", "UI", "" (a plain number) or an SI unit for format_si
  bool relative;
};

const Quantity kMetrics[] = {
    {"dc_gain_db", "gain", "dB", false},
    {"bandwidth_hz", "bandwidth", "Hz", true},
    {"peaking_db", "peaking", "dB", false},
    {"group_delay_s", "group delay", "s", true},
    {"group_delay_ripple_s", "delay ripple", "s", true},
    {"overshoot_pct", "overshoot", "%", false},
    {"rise_time_s", "rise time", "s", true},
    {"pda_height", "eye height (PDA)", "", false},
    {"prbs_height", "eye height (PRBS)", "", false},
    {"prbs_width_ui", "eye width (PRBS)", "UI", false},
};

const Quantity kStageValues[] = {
    {"gm", "gm", "S", true},
    {"rd", "Rd", "ohm", true},
    {"l", "L", "H", true},
    {"l1", "L1", "H", true},
    {"l2", "L2", "H", true},
    {"k", "k", "", false},
    {"cb", "Cb", "F", true},
    {"dc_gain_db", "gain", "dB", false},
    {"bandwidth_hz", "bandwidth", "Hz", true},
};

using Values = std::vector<std::pair<std::string, double>>;

double find(const Values& values, std::string_view key) {
  for (const auto& [k, v] : values)
    if (k == key) return v;
  return kNaN;
}
bool has(const Values& values, std::string_view key) {
  for (const auto& kv : values)
    if (kv.first == key) return true;
  return false;
}

Values main_metrics(const CompareSide& side) {
  const auto& out = side.analysis.outputs.back();
  const auto& f = out.response.frequency;
  const auto& t = out.response.step;
  Values v{{"dc_gain_db", to_db(f.dc_gain)},  {"bandwidth_hz", f.bandwidth_hz},
           {"peaking_db", f.peaking_db},      {"group_delay_s", f.group_delay_s},
           {"group_delay_ripple_s", f.group_delay_ripple_s}, {"overshoot_pct", t.overshoot_pct},
           {"rise_time_s", t.rise_time_s}};
  if (out.eye) {
    v.emplace_back("pda_height", out.eye->estimate.pda.height);
    v.emplace_back("prbs_height", out.eye->estimate.prbs.eye.height);
    v.emplace_back("prbs_width_ui", out.eye->estimate.prbs.eye.width_ui);
  }
  return v;
}

// The stage's element values that its kind has, and its own gain and bandwidth.
Values stage_values(const CompareSide& side, size_t index) {
  const auto& stage = side.chain.stages[index];
  const auto& c = stage.circuit;
  Values v{{"gm", c.gm}, {"rd", c.rd}};
  for (const auto& p : load_kind_info(c.kind).parameters)
    if (p.role == ParameterRole::element) v.emplace_back(p.key, c.*(p.field));
  for (const auto& s : side.analysis.stages)
    if (static_cast<size_t>(s.stage) == index) {
      v.emplace_back("dc_gain_db", to_db(s.alone.frequency.dc_gain));
      v.emplace_back("bandwidth_hz", s.alone.frequency.bandwidth_hz);
    }
  return v;
}

double delta(double a, double b) { return std::isfinite(a) && std::isfinite(b) ? b - a : kNaN; }
double relative_pct(const Quantity& q, double a, double b) {
  return q.relative && std::isfinite(a) && std::isfinite(b) && a != 0.0 ? 100.0 * (b - a) / std::fabs(a) : kNaN;
}

std::string shown(double x, std::string_view unit) {
  if (!std::isfinite(x)) return "-";
  if (unit == "dB") return fmt::format("{:.2f} dB", x);
  if (unit == "%") return fmt::format("{:.2f} %", x);
  if (unit == "UI") return fmt::format("{:.3f} UI", x);
  if (unit.empty()) return fmt::format("{:.3f}", x);
  return format_si(x, unit, 4);
}
// Blank for no change, so that the differences stand out.
std::string signed_shown(double x, std::string_view unit) {
  if (!std::isfinite(x)) return "-";
  if (x == 0.0) return "";
  const std::string text = shown(x, unit);
  // A change below the shown precision: no sign, so "-0.00 dB" does not suggest a direction.
  if (text == shown(0.0, unit) || text == "-" + shown(0.0, unit)) return shown(0.0, unit);
  return (x > 0.0 ? "+" : "") + text;
}

std::string change_text(double relative) {
  return std::isfinite(relative) && relative != 0.0 ? fmt::format("{:+.1f} %", relative) : "";
}

struct StageMatch {
  std::string id;
  std::optional<size_t> a, b;
};

std::vector<StageMatch> match_stages(const Chain& a, const Chain& b) {
  std::vector<StageMatch> out;
  auto index_in = [](const Chain& chain, const std::string& id) -> std::optional<size_t> {
    for (size_t i = 0; i < chain.stages.size(); ++i)
      if (chain.stages[i].id == id) return i;
    return std::nullopt;
  };
  for (size_t i = 0; i < a.stages.size(); ++i) out.push_back({a.stages[i].id, i, index_in(b, a.stages[i].id)});
  for (size_t i = 0; i < b.stages.size(); ++i)
    if (!index_in(a, b.stages[i].id)) out.push_back({b.stages[i].id, std::nullopt, i});
  return out;
}

nlohmann::json side_json(const CompareSide& side) {
  const auto& main = side.chain.stages[static_cast<size_t>(side.analysis.outputs.back().stage)];
  return {{"file", side.file},
          {"chain", side.chain.name},
          {"planned", side.planned.has_value()},
          {"status", side.planned ? nlohmann::json(*side.planned == Plan::Termination::met ? "met" : "not_met")
                                  : nlohmann::json(nullptr)},
          {"main_output", main.id}};
}

nlohmann::json stage_side_json(const CompareSide& side, size_t index) {
  nlohmann::json j{{"kind", std::string(to_string(side.chain.stages[index].circuit.kind))}};
  for (const auto& [k, v] : stage_values(side, index)) j[k] = number(v);
  return j;
}

// A side's metrics at their worst corner, named by the variation run (VariationResult::worst;
// nominal where every corner gives the same value), with the corner's name.
struct WorstValue {
  double value = kNaN;
  std::string corner;
};
std::optional<WorstValue> worst_value(const CompareSide& side, std::string_view key) {
  if (!side.variation || side.variation->corners.empty()) return std::nullopt;
  const auto& r = *side.variation;
  for (size_t i = 0; i < r.metrics.size() && i < r.worst.size(); ++i) {
    if (r.metrics[i]->key != key) continue;
    const std::string& name = r.worst[i].second;
    for (const auto& c : r.corners)
      if (name.empty() ? &c == &r.corners.front() : c.corner.name == name)
        return WorstValue{r.metrics[i]->get(c.metrics), name.empty() ? c.corner.name : name};
  }
  return std::nullopt;
}
double yield_of(const CompareSide& side) {
  return side.variation && side.variation->monte_carlo ? side.variation->monte_carlo->overall_yield : kNaN;
}
bool any_variation(const CompareSide& a, const CompareSide& b) { return a.variation || b.variation; }

std::string how(const CompareSide& side) {
  if (!side.planned) return "as written";
  return *side.planned == Plan::Termination::met ? "planned first: every target and limit met"
                                                 : "planned first: NOT MET";
}

bool signals_differ(const std::vector<SettingDifference>& settings) {
  return std::any_of(settings.begin(), settings.end(), is_signal_setting);
}

std::string settings_text(const std::vector<SettingDifference>& settings) {
  if (settings.empty()) return "\nsettings: the two files set every value alike\n";
  size_t width = 8;
  for (const auto& d : settings) width = std::max(width, d.key.size());
  std::string out = "\nsettings that differ (as written; \"-\" where a file leaves the key to its default)\n";
  out += fmt::format("  {:<{}}  {:<24}  {}\n", "key", width, "A", "B");
  for (const auto& d : settings)
    out += fmt::format("  {:<{}}  {:<24}  {}\n", d.key, width, d.a.value_or("-"), d.b.value_or("-"));
  if (signals_differ(settings))
    out += "  note: the chains are driven by different signals, so their eye figures measure different tests\n";
  return out;
}

}  // namespace

nlohmann::json compare_json(const CompareSide& a, const CompareSide& b, const std::vector<SettingDifference>& settings) {
  nlohmann::json doc{{"a", side_json(a)}, {"b", side_json(b)}};
  doc["settings"] = nlohmann::json::array();
  for (const auto& d : settings)
    doc["settings"].push_back({{"key", d.key},
                               {"a", d.a ? nlohmann::json(*d.a) : nlohmann::json(nullptr)},
                               {"b", d.b ? nlohmann::json(*d.b) : nlohmann::json(nullptr)}});
  doc["signals_differ"] = signals_differ(settings);
  const auto ma = main_metrics(a), mb = main_metrics(b);
  doc["metrics"] = nlohmann::json::object();
  for (const auto& q : kMetrics) {
    if (!has(ma, q.key) && !has(mb, q.key)) continue;
    const double va = find(ma, q.key), vb = find(mb, q.key);
    doc["metrics"][q.key] = {{"a", number(va)}, {"b", number(vb)}, {"delta", number(delta(va, vb))},
                             {"relative_pct", number(relative_pct(q, va, vb))}};
  }
  if (any_variation(a, b)) {
    nlohmann::json worst = nlohmann::json::object();
    for (const auto& q : kMetrics) {
      const auto wa = worst_value(a, q.key), wb = worst_value(b, q.key);
      if (!wa && !wb) continue;
      const double va = wa ? wa->value : kNaN, vb = wb ? wb->value : kNaN;
      worst[q.key] = {{"a", number(va)}, {"b", number(vb)}, {"delta", number(delta(va, vb))},
                      {"a_corner", wa ? nlohmann::json(wa->corner) : nlohmann::json(nullptr)},
                      {"b_corner", wb ? nlohmann::json(wb->corner) : nlohmann::json(nullptr)}};
    }
    const double ya = yield_of(a), yb = yield_of(b);
    doc["variation"] = {{"worst", std::move(worst)},
                        {"overall_yield", {{"a", number(ya)}, {"b", number(yb)}, {"delta", number(delta(ya, yb))}}}};
  }
  doc["stages"] = nlohmann::json::array();
  for (const auto& m : match_stages(a.chain, b.chain)) {
    nlohmann::json j{{"id", m.id}, {"in", m.a && m.b ? "both" : m.a ? "a_only" : "b_only"}};
    j["a"] = m.a ? stage_side_json(a, *m.a) : nlohmann::json(nullptr);
    j["b"] = m.b ? stage_side_json(b, *m.b) : nlohmann::json(nullptr);
    if (m.a && m.b) {
      const auto va = stage_values(a, *m.a), vb = stage_values(b, *m.b);
      j["delta"] = nlohmann::json::object();
      for (const auto& q : kStageValues)
        if (has(va, q.key) && has(vb, q.key)) {
          const double x = find(va, q.key), y = find(vb, q.key);
          j["delta"][q.key] = {{"delta", number(delta(x, y))}, {"relative_pct", number(relative_pct(q, x, y))}};
        }
    }
    doc["stages"].push_back(std::move(j));
  }
  return doc;
}

std::string compare_text(const CompareSide& a, const CompareSide& b, const std::vector<SettingDifference>& settings) {
  std::string out = fmt::format("A  {}  ({}: {})\nB  {}  ({}: {})\n{}\n", a.file, a.chain.name, how(a), b.file,
                                b.chain.name, how(b), kPlanningCaution);
  out += settings_text(settings);
  const auto& main_a = a.chain.stages[static_cast<size_t>(a.analysis.outputs.back().stage)].id;
  const auto& main_b = b.chain.stages[static_cast<size_t>(b.analysis.outputs.back().stage)].id;
  out += fmt::format("\nmain output (A: {}, B: {})\n", main_a, main_b);
  const auto row = [](std::string_view id, std::string_view label, const std::string& x, const std::string& y,
                      const std::string& d, const std::string& r) {
    return fmt::format("  {:<8} {:<18} {:>12} {:>12} {:>12} {:>9}\n", id, label, x, y, d, r);
  };
  out += fmt::format("  {:<18} {:>12} {:>12} {:>12} {:>9}\n", "metric", "A", "B", "B - A", "change");
  const auto ma = main_metrics(a), mb = main_metrics(b);
  for (const auto& q : kMetrics) {
    if (!has(ma, q.key) && !has(mb, q.key)) continue;
    const double va = find(ma, q.key), vb = find(mb, q.key);
    const double r = relative_pct(q, va, vb);
    out += fmt::format("  {:<18} {:>12} {:>12} {:>12} {:>9}\n", q.label, shown(va, q.unit), shown(vb, q.unit),
                       signed_shown(delta(va, vb), q.unit), change_text(r));
  }
  if (any_variation(a, b)) {
    out += "\nat the worst corner ([variation]; \"-\" for a file without one) and the Monte Carlo yield\n";
    out += fmt::format("  {:<18} {:>12} {:>12} {:>12}  {}\n", "metric", "A", "B", "B - A", "worst corner (A / B)");
    for (const auto& q : kMetrics) {
      const auto wa = worst_value(a, q.key), wb = worst_value(b, q.key);
      if (!wa && !wb) continue;
      const double va = wa ? wa->value : kNaN, vb = wb ? wb->value : kNaN;
      out += fmt::format("  {:<18} {:>12} {:>12} {:>12}  {} / {}\n", q.label, shown(va, q.unit), shown(vb, q.unit),
                         signed_shown(delta(va, vb), q.unit), wa ? wa->corner : "-", wb ? wb->corner : "-");
    }
    const double ya = yield_of(a), yb = yield_of(b);
    auto pct = [](double y) { return std::isfinite(y) ? fmt::format("{:.2f} %", 100.0 * y) : std::string("-"); };
    out += fmt::format("  {:<18} {:>12} {:>12} {:>12}\n", "yield (every check)", pct(ya), pct(yb),
                       std::isfinite(ya) && std::isfinite(yb) ? fmt::format("{:+.2f} %", 100.0 * (yb - ya)) : "-");
  }
  out += "\nstages (matched by id)\n" + row("id", "value", "A", "B", "B - A", "change");
  for (const auto& m : match_stages(a.chain, b.chain)) {
    if (!m.a || !m.b) {
      const auto& side = m.a ? a : b;
      const auto& c = side.chain.stages[m.a ? *m.a : *m.b].circuit;
      out += fmt::format("  {:<8} only in {}: {}, gm {}, Rd {}\n", m.id, m.a ? "A" : "B", to_string(c.kind),
                         format_si(c.gm, "S"), format_si(c.rd, "ohm"));
      continue;
    }
    const auto& ka = to_string(a.chain.stages[*m.a].circuit.kind);
    const auto& kb = to_string(b.chain.stages[*m.b].circuit.kind);
    out += row(m.id, "kind", std::string(ka), std::string(kb), ka == kb ? "" : "changed", "");
    const auto va = stage_values(a, *m.a), vb = stage_values(b, *m.b);
    for (const auto& q : kStageValues) {
      if (!has(va, q.key) && !has(vb, q.key)) continue;
      const double x = find(va, q.key), y = find(vb, q.key);
      const double r = relative_pct(q, x, y);
      out += row("", q.label, has(va, q.key) ? shown(x, q.unit) : "-", has(vb, q.key) ? shown(y, q.unit) : "-",
                 has(va, q.key) && has(vb, q.key) ? signed_shown(delta(x, y), q.unit) : "",
                 change_text(r));
    }
  }
  return out;
}

}  // namespace peakplan
