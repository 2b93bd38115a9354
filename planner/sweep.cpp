#include "planner/sweep.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <fmt/format.h>
#include <functional>
#include <limits>
#include <numbers>

#include "planner/input/chain_graph.hpp"
#include "planner/input/overrides.hpp"
#include "planner/stage_value.hpp"
#include "planner/input/toml_text.hpp"
#include "planner/variation_analysis.hpp"
#include "planner/what_if.hpp"
#include "planner/input/chain_input.hpp"

namespace peakplan {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// A key of a top-level table that can be swept: its display unit and where the reader puts it.
struct TableKey {
  std::string_view table, key, unit;
  std::function<std::optional<double>(const ChainSpec&)> read;
};

std::optional<double> from_signal(const ChainSpec& s, const std::function<std::optional<double>(const SignalSpec&)>& f) {
  return s.signal ? f(*s.signal) : std::nullopt;
}

const std::vector<TableKey>& table_keys() {
  using S = const ChainSpec&;
  static const std::vector<TableKey> keys{
      {"input", "r_source", "ohm", [](S s) { return std::optional(s.r_source); }},
      {"input", "noise_density", "V/rtHz", [](S s) { return s.input_noise_density; }},
      {"signal", "bit_rate", "b/s", [](S s) { return from_signal(s, [](const SignalSpec& g) { return std::optional(g.bit_rate); }); }},
      {"signal", "input_rise", "s", [](S s) { return from_signal(s, [](const SignalSpec& g) { return g.input_rise; }); }},
      {"signal", "swing", "V", [](S s) { return from_signal(s, [](const SignalSpec& g) { return g.swing; }); }},
      {"signal", "target_ber", "", [](S s) { return from_signal(s, [](const SignalSpec& g) { return std::optional(g.target_ber); }); }},
      {"target", "gain", "dB", [](S s) { return s.target.gain_db; }},
      {"target", "bandwidth", "Hz", [](S s) { return s.target.bandwidth; }},
      {"target", "gain_bandwidth", "Hz", [](S s) { return s.target.gain_bandwidth; }},
      {"limits", "overshoot", "%", [](S s) { return s.limits.overshoot; }},
      {"limits", "peaking", "dB", [](S s) { return s.limits.peaking_db; }},
      {"limits", "group_delay_ripple", "s", [](S s) { return s.limits.group_delay_ripple; }},
      {"limits", "ripple_band", "Hz", [](S s) { return s.limits.ripple_band; }},
      {"limits", "ber", "", [](S s) { return s.limits.ber; }},
      {"limits", "noise_rms", "V", [](S s) { return s.limits.noise_rms; }},
      {"technology", "ft", "Hz", [](S s) { return s.technology.ft; }},
      {"technology", "c_out_ratio", "", [](S s) { return s.technology.c_out_ratio; }},
      {"technology", "inductor_q", "", [](S s) { return s.technology.inductor_q; }},
      {"technology", "max_inductance", "H", [](S s) { return s.technology.max_inductance; }},
      {"technology", "min_cb", "F", [](S s) { return s.technology.min_cb; }},
      {"technology", "max_gm", "S", [](S s) { return s.technology.max_gm; }},
      {"technology", "min_gm", "S", [](S s) { return s.technology.min_gm; }},
      {"technology", "coil_c_per_nh", "F", [](S s) { return s.technology.coil_c_per_nh; }},
      {"technology", "gm_over_id", "", [](S s) { return s.technology.gm_over_id; }},
      {"technology", "current_budget", "A", [](S s) { return s.technology.current_budget; }},
      {"technology", "gamma", "", [](S s) { return std::optional(s.technology.gamma); }},
      {"technology", "temperature", "K", [](S s) { return std::optional(s.technology.temperature); }},
  };
  return keys;
}

const StageSpec* find_stage(const ChainSpec& spec, std::string_view id) {
  for (const auto& s : spec.stages)
    if (s.id == id) return &s;
  return nullptr;
}

std::string stage_key_unit(const StageSpec& stage, std::string_view key) {
  if (key == "gm") return "S";
  if (key == "rd" || key == "r_load") return "ohm";
  if (key == "tail_current") return "A";
  if (key == "c_in" || key == "c_out" || key == "c_load") return "F";
  for (auto kind : stage.kinds)
    for (const auto& p : load_kind_info(kind).parameters)
      if (p.key == key) return p.dimension == Dimension::dimensionless ? "" : std::string(unit_symbol(p.dimension));
  return "";
}

// The varied key as the reader left it: its SI value (nullopt when it is not a fixed number)
// and its display unit. `known` is false when the key is not one that holds a number.
struct KeyValue {
  bool known = false;
  std::optional<double> value;
  std::string unit;
};

KeyValue read_key(const ChainSpec& spec, std::string_view target, std::string_view key) {
  if (const auto* stage = find_stage(spec, target)) {
    if (key == "count") return {true, stage->count.is_fixed() ? std::optional(stage->count.value) : std::nullopt, ""};
    if (key == "m") return {true, stage->m, ""};
    if (key == "zeta") return {true, stage->zeta, ""};
    if (key == "id" || key == "kind" || key == "feeds" || key == "tap" || key == "response") return {};
    const auto* a = stage->find(key);
    return {true, a && a->is_fixed() ? std::optional(a->value) : std::nullopt, stage_key_unit(*stage, key)};
  }
  for (const auto& k : table_keys())
    if (k.table == target && k.key == key) return {true, k.read(spec), std::string(k.unit)};
  return {};
}

// The point as a chain file writes it: dB and % keys take their unit string (docs/chain-format.md).
std::string point_text(double value, bool whole, std::string_view unit) {
  if (whole) return fmt::format("{}", static_cast<long long>(std::llround(value)));
  if (unit == "dB") return toml_decibels(value);
  if (unit == "%") return toml_percent(value);
  return toml_number(value);
}

struct Axis {
  Override base;  // target and key; value replaced per point
  std::string start, stop;
  int points = 0;
  // The list form ID.KEY=A,B,C: each point as written (a word such as a response, or a value).
  std::vector<std::string> list;
};

// Keys that name something rather than hold a number; `response` is a word that can still be
// swept as a list of designs.
constexpr std::array kWordKeys{"id", "kind", "feeds", "tap", "name", "modulation", "pattern", "objective", "k_range"};

std::optional<Axis> parse_list(const Override& o, Diagnostics& diagnostics) {
  Axis axis{o, {}, {}, 0, {}};
  const auto fail = [&](const std::string& message) {
    diagnostics.error({0, 0, o.origin}, message + "; expected ID.KEY=A,B,..., e.g. --vary a1.response=butterworth,bessel");
    return std::nullopt;
  };
  for (size_t from = 0;;) {
    const auto comma = o.value.find(',', from);
    std::string item = o.value.substr(from, comma == std::string::npos ? std::string::npos : comma - from);
    const auto first = item.find_first_not_of(" \t"), last = item.find_last_not_of(" \t");
    item = first == std::string::npos ? std::string() : item.substr(first, last - first + 1);
    if (item.empty()) return fail("an empty point in the list '" + o.value + "'");
    axis.list.push_back(std::move(item));
    if (comma == std::string::npos) break;
    from = comma + 1;
  }
  if (axis.list.size() < 2) return fail("a list needs at least 2 points, saw '" + o.value + "'");
  if (axis.list.size() > static_cast<size_t>(kMaxSweepPoints))
    return fail(fmt::format("{} points is over the limit of {} points", axis.list.size(), kMaxSweepPoints));
  axis.points = static_cast<int>(axis.list.size());
  return axis;
}

std::optional<Axis> parse_vary(const std::string& text, Diagnostics& diagnostics) {
  auto o = parse_override(text, "--vary", diagnostics);
  if (!o) return std::nullopt;
  for (const auto* word : kWordKeys)
    if (o->key == word) {
      diagnostics.error({0, 0, o->origin}, "'" + o->key + "' is not a number that can be swept; expected "
                                           "ID.KEY=START:STOP:N or ID.KEY=A,B,..., e.g. --vary a1.rd=80ohm:160ohm:5");
      return std::nullopt;
    }
  if (o->value.find(',') != std::string::npos || o->key == "response") return parse_list(*o, diagnostics);
  const auto first = o->value.find(':');
  const auto second = first == std::string::npos ? std::string::npos : o->value.find(':', first + 1);
  const auto fail = [&](const std::string& message) {
    diagnostics.error({0, 0, o->origin}, message + "; expected ID.KEY=START:STOP:N, e.g. --vary a1.rd=80ohm:160ohm:5");
    return std::nullopt;
  };
  if (second == std::string::npos || o->value.find(':', second + 1) != std::string::npos)
    return fail("the range '" + o->value + "' is not START:STOP:N");
  Axis axis{*o, o->value.substr(0, first), o->value.substr(first + 1, second - first - 1), 0, {}};
  const auto n = o->value.substr(second + 1);
  const auto [end, ec] = std::from_chars(n.data(), n.data() + n.size(), axis.points);
  if (ec != std::errc{} || end != n.data() + n.size()) return fail("N must be a whole number of points, saw '" + n + "'");
  if (axis.points < 2) return fail("N must be at least 2, saw " + n);
  if (axis.points > kMaxSweepPoints)
    return fail("N " + n + " is over the limit of " + std::to_string(kMaxSweepPoints) + " points");
  if (axis.start.empty() || axis.stop.empty()) return fail("START and STOP must both be given");
  return axis;
}

// The SI value of one end of the axis, read back through the chain-file reader so it is
// parsed and checked exactly as the file's own value would be.
std::optional<double> axis_end(const std::string& text, const std::vector<Override>& sets, const Axis& axis,
                               const std::string& end, const char* which, KeyValue& key, Diagnostics& diagnostics) {
  auto overrides = sets;
  overrides.push_back(axis.base);
  overrides.back().value = end;
  const auto spec = parse_chain_spec(text, overrides, diagnostics);
  if (!spec) return std::nullopt;
  key = read_key(*spec, axis.base.target, axis.base.key);
  if (!key.known) {
    diagnostics.error({0, 0, axis.base.origin}, "'" + axis.base.key + "' of '" + axis.base.target +
                                                    "' is not a number that can be swept");
    return std::nullopt;
  }
  if (!key.value) {
    diagnostics.error({0, 0, axis.base.origin},
                      fmt::format("{} '{}' is not a fixed number; give a quantity such as 80ohm or 0.2nH", which, end));
    return std::nullopt;
  }
  return key.value;
}

std::vector<OpenValue> open_values(const ChainSpec& spec) {
  std::vector<OpenValue> open;
  for (const auto& s : spec.stages) {
    if (!s.kind_is_fixed()) open.push_back({s.id, "kind", ""});
    if (!s.count.is_fixed()) open.push_back({s.id, "count", ""});
    for (const auto& [key, a] : s.values)
      if (!a.is_fixed()) open.push_back({s.id, key, stage_key_unit(s, key)});
  }
  return open;
}

ChosenValue chosen_value(const ChainSpec& spec, const Plan& plan, const OpenValue& open) {
  size_t index = 0;
  while (index < spec.stages.size() && spec.stages[index].id != open.stage) ++index;
  for (const auto& planned : plan.stages) {
    if (planned.table != index) continue;
    if (open.key == "kind") return {kNaN, std::string(to_string(planned.kind))};
    if (open.key == "count") return {static_cast<double>(planned.count), {}};
    for (size_t g = 0; g < plan.graph.size(); ++g)
      if (plan.graph[g].table == index) return {stage_value(plan.chain.stages[g], open.key), {}};
  }
  return {kNaN, {}};
}

// The point's corners and Monte Carlo run exactly as `analyze` runs them (same samples, seed
// and threads), reduced to each row metric's worst corner and the overall yield.
SweepRow::Variation variation_of(const ChainSpec& spec, const Chain& chain) {
  VariationRunOptions run;
  run.threads = default_thread_count();
  const auto result = analyze_variation(spec, chain, run);
  SweepRow::Variation v;
  v.corners = static_cast<int>(result.corners.size());
  auto worst = [&](std::string_view key) {
    for (const auto* m : result.metrics) {
      if (m->key != key) continue;
      double w = m->get(result.corners.front().metrics);
      for (const auto& c : result.corners) {
        const double x = m->get(c.metrics);
        if (m->higher_is_worse ? x > w : x < w) w = x;
      }
      return std::optional(w);
    }
    return std::optional<double>();
  };
  v.gain_db = worst("dc_gain_db").value_or(kNaN);
  v.bandwidth_hz = worst("bandwidth_hz").value_or(kNaN);
  v.overshoot_pct = worst("overshoot_pct").value_or(kNaN);
  v.group_delay_ripple_s = worst("group_delay_ripple_s").value_or(kNaN);
  v.eye_height = worst("prbs_height");
  if (const auto& mc = result.monte_carlo) {
    v.overall_yield = mc->overall_yield;
    v.yield_lo = mc->ci95.lo;
    v.yield_hi = mc->ci95.hi;
  }
  return v;
}

void fill_metrics(SweepRow& row, const Chain& chain, const ChainSpec& spec, bool with_variation) {
  auto options = analysis_options(spec);
  options.keep_waveforms = false;
  const auto analysis = analyze_chain(chain, options);
  const auto& main = analysis.outputs.back();
  const auto& f = main.response.frequency;
  row.gain_db = to_db(f.dc_gain);
  row.bandwidth_hz = f.bandwidth_hz;
  row.peaking_db = f.peaking_db;
  row.group_delay_ripple_s = f.group_delay_ripple_s;
  row.overshoot_pct = main.response.step.overshoot_pct;
  if (main.eye) row.eye_height = main.eye->estimate.prbs.eye.height;
  if (const auto& ls = main.large_signal)
    row.large_signal = SweepRow::LargeSignal{ls->height_v, ls->width_ui, ls->ddj_pp_s, ls->delay_shift_s};
  if (const auto& rx = main.receiver)
    row.receiver = SweepRow::Receiver{rx->input_rms_a, rx->sensitivity ? std::optional(to_dbm(rx->sensitivity->average_w))
                                                                        : std::nullopt};
  if (spec.variation && with_variation) row.variation = variation_of(spec, chain);
}

}  // namespace

namespace {

// One point of the axis: its value (SI; NaN for a word), its text as an override, and the word
// itself when the key is one (a response).
struct Point {
  double value = 0.0;
  std::string text, word;
};

std::optional<std::vector<Point>> axis_points(const std::string& text, const std::vector<Override>& sets,
                                              const Axis& axis, bool log, KeyValue& key, Diagnostics& diagnostics) {
  const bool whole = axis.base.key == "count";
  std::vector<Point> points;
  if (!axis.list.empty()) {
    for (size_t i = 0; i < axis.list.size(); ++i) {
      const auto& item = axis.list[i];
      if (axis.base.key == "response") {  // checked as a word at the point, by the reader
        points.push_back({kNaN, item, item});
        continue;
      }
      const auto value = axis_end(text, sets, axis, item, fmt::format("point {}", i + 1).c_str(), key, diagnostics);
      if (!value) return std::nullopt;
      points.push_back({*value, whole ? point_text(*value, true, key.unit) : item, {}});
    }
  } else {
    const auto start = axis_end(text, sets, axis, axis.start, "START", key, diagnostics);
    if (!start) return std::nullopt;
    const auto stop = axis_end(text, sets, axis, axis.stop, "STOP", key, diagnostics);
    if (!stop) return std::nullopt;
    if (log && !(*start * *stop > 0.0)) {
      diagnostics.error({0, 0, axis.base.origin},
                        fmt::format("--log needs START and STOP nonzero and of one sign, saw {:g} and {:g}", *start, *stop));
      return std::nullopt;
    }
    for (int i = 0; i < axis.points; ++i) {
      const double t = static_cast<double>(i) / (axis.points - 1);
      const double value = i + 1 == axis.points ? *stop
                           : log                ? *start * std::pow(*stop / *start, t)
                                                : *start + (*stop - *start) * t;
      points.push_back({value, point_text(value, whole, key.unit), {}});
    }
  }
  for (size_t i = 0; i < points.size(); ++i)
    if (whole && std::fabs(points[i].value - std::round(points[i].value)) > 1e-9) {
      diagnostics.error({0, 0, axis.base.origin},
                        fmt::format("count takes whole numbers, but point {} of the sweep is {:g}", i + 1, points[i].value));
      return std::nullopt;
    }
  return points;
}

// A gm the file leaves to the planner sizes its device (docs/chain-format.md, [technology] ft):
// a point of gm then carries the capacitances the same rule gives, c_in = gm/(2 pi ft) and
// c_out = c_out_ratio c_in, so the sweep shows the loading a bigger device brings.
std::vector<Override> device_overrides(const ChainSpec& file, const Axis& axis, double gm) {
  const auto* stage = find_stage(file, axis.base.target);
  const auto* open = stage && axis.base.key == "gm" ? stage->find("gm") : nullptr;
  if (!open || open->is_fixed() || !file.technology.ft) return {};
  const double c_in = gm / (2.0 * std::numbers::pi * *file.technology.ft);
  const double c_out = file.technology.c_out_ratio.value_or(0.0) * c_in;
  Override in{axis.base.origin, axis.base.target, "c_in", toml_number(c_in)};
  Override out{axis.base.origin, axis.base.target, "c_out", toml_number(c_out)};
  return {in, out};
}

}  // namespace

std::optional<SweepResult> run_sweep(const SweepRequest& request, Diagnostics& diagnostics) {
  const auto sets = parse_overrides(request.sets, diagnostics);
  const auto axis = parse_vary(request.vary, diagnostics);
  const auto text = request.chain_text ? request.chain_text : read_chain_text(request.chain, diagnostics);
  if (!sets || !axis || !text) return std::nullopt;
  if (request.log && !axis->list.empty()) {
    diagnostics.error({0, 0, axis->base.origin}, "--log spaces a START:STOP:N range; a list is swept as written");
    return std::nullopt;
  }

  KeyValue key;
  const auto points = axis_points(*text, *sets, *axis, request.log, key, diagnostics);
  if (!points) return std::nullopt;
  const bool whole = axis->base.key == "count";

  SweepResult result;
  result.target = axis->base.target;
  result.key = axis->base.key;
  result.unit = key.unit;
  result.replan = request.replan;
  result.log = request.log;

  // What each point overrides: the file with --set, or the plan of it when values are open
  // and held (the planned file already carries the --set values).
  std::string base_text = *text;
  std::vector<Override> base_overrides = *sets;
  const auto as_set = parse_chain_spec(*text, *sets, diagnostics);
  if (!as_set) return std::nullopt;
  result.chain_name = as_set->name;
  const bool open = std::any_of(as_set->stages.begin(), as_set->stages.end(), has_open_values);
  if (!request.replan && open) {
    const auto plan = plan_chain(*as_set, diagnostics, request.plan_options);
    if (!plan) return std::nullopt;
    result.held_plan = plan->termination;
    base_text = planned_chain_toml(*as_set, *plan);
    base_overrides.clear();
  }

  for (size_t i = 0; i < points->size(); ++i) {
    const auto& point = (*points)[i];
    auto overrides = base_overrides;
    overrides.push_back(axis->base);
    overrides.back().value = point.text;
    overrides.back().origin += fmt::format(" (point {}: {})", i + 1, point.text);
    for (auto& o : device_overrides(*as_set, *axis, point.value)) {
      o.origin = overrides.back().origin;
      overrides.push_back(std::move(o));
    }
    const auto spec = parse_chain_spec(base_text, overrides, diagnostics);
    if (!spec) return std::nullopt;
    if (i == 0) {
      result.has_signal = spec->signal.has_value();
      if (request.replan) result.open = open_values(*spec);
    }
    SweepRow row;
    row.value = whole ? std::round(point.value) : point.value;
    row.word = point.word;
    if (request.replan) {
      const auto plan = plan_chain(*spec, diagnostics, request.plan_options);
      if (!plan) return std::nullopt;
      row.status = plan->termination;
      for (const auto& o : result.open) row.chosen.push_back(chosen_value(*spec, *plan, o));
      fill_metrics(row, plan->chain, *spec, request.variation);
    } else {
      const auto chain = resolve_chain(*spec, diagnostics);
      if (!chain) return std::nullopt;
      fill_metrics(row, *chain, *spec, request.variation);
    }
    result.has_large_signal = result.has_large_signal || row.large_signal.has_value();
    result.has_receiver = result.has_receiver || row.receiver.has_value();
    result.has_variation = result.has_variation || row.variation.has_value();
    result.rows.push_back(std::move(row));
  }
  return result;
}

}  // namespace peakplan
