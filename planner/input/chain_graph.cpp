#include "planner/input/chain_graph.hpp"

#include <boost/graph/adjacency_list.hpp>
#include <boost/graph/depth_first_search.hpp>
#include <cmath>
#include <fmt/format.h>
#include <map>
#include <numbers>
#include <set>

#include "models/frequency_response.hpp"
#include "models/peaking_design.hpp"
#include "planner/input/plausible_range.hpp"
#include "planner/input/variation_file.hpp"

namespace peakplan {
namespace {

using Graph = boost::adjacency_list<boost::vecS, boost::vecS, boost::directedS>;

struct BackEdgeRecorder : boost::default_dfs_visitor {
  std::vector<std::pair<size_t, size_t>>* back_edges;
  template <class Edge, class G>
  void back_edge(Edge e, const G& g) {
    back_edges->emplace_back(boost::source(e, g), boost::target(e, g));
  }
};

std::string join_ids(const std::vector<std::string>& ids, std::string_view sep = " -> ") {
  std::string out;
  for (size_t i = 0; i < ids.size(); ++i) out += (i ? std::string(sep) : "") + "'" + ids[i] + "'";
  return out;
}

// Each [[stage]] table's copies, in file order; the tables' ids must be unique.
struct StageCopies {
  std::vector<GraphStage> stages;
  std::vector<size_t> first_copy, last_copy;          // per [[stage]] table
  std::map<std::string, size_t, std::less<>> table_by_id;
};

StageCopies list_stage_copies(const ChainSpec& spec, Diagnostics& diagnostics, const std::vector<int>* counts) {
  StageCopies copies;
  copies.first_copy.resize(spec.stages.size());
  copies.last_copy.resize(spec.stages.size());
  for (size_t i = 0; i < spec.stages.size(); ++i) {
    const auto& s = spec.stages[i];
    const auto [it, fresh] = copies.table_by_id.emplace(s.id, i);
    if (!fresh)
      diagnostics.error(s.where, fmt::format("stage '{}': id already used by the stage at line {}", s.id,
                                             spec.stages[it->second].where.line));
    int count = 1;
    if (counts) {
      count = (*counts)[i];
    } else if (!s.count.is_fixed()) {
      diagnostics.error(s.count.where, fmt::format("stage '{}': count is not fixed; analyze needs a number "
                                                   "of copies (peakplan plan chooses it)", s.id));
    } else {
      count = static_cast<int>(s.count.value);
    }
    copies.first_copy[i] = copies.stages.size();
    for (int c = 1; c <= count; ++c)
      copies.stages.push_back({count > 1 || s.count.mode != Adjustable::Mode::fixed || s.count.value > 1
                                   ? s.id + "." + std::to_string(c)
                                   : s.id,
                               i, count > 1 ? c : 0, -1});
    copies.last_copy[i] = copies.stages.size() - 1;
  }
  return copies;
}

// The edges: each copy feeds the next, the last copy feeds what its table's `feeds` names or,
// by default, the next table's first copy. Returns each copy's drivers.
std::vector<std::vector<size_t>> connect_stages(const ChainSpec& spec, const StageCopies& copies, Graph& graph,
                                                Diagnostics& diagnostics) {
  // Stages named in some explicit `feeds` are not given a default driver.
  std::vector<bool> named(spec.stages.size(), false);
  for (const auto& s : spec.stages)
    if (s.feeds)
      for (const auto& id : *s.feeds)
        if (auto it = copies.table_by_id.find(id); it != copies.table_by_id.end()) named[it->second] = true;

  std::vector<std::vector<size_t>> drivers(copies.stages.size());
  auto connect = [&](size_t from, size_t to) {
    boost::add_edge(from, to, graph);
    drivers[to].push_back(from);
  };
  std::vector<std::string_view> ids;
  for (const auto& s : spec.stages) ids.push_back(s.id);
  for (size_t i = 0; i < spec.stages.size(); ++i) {
    const auto& s = spec.stages[i];
    for (size_t c = copies.first_copy[i]; c < copies.last_copy[i]; ++c) connect(c, c + 1);
    if (s.feeds) {
      for (const auto& id : *s.feeds) {
        const auto it = copies.table_by_id.find(id);
        if (it == copies.table_by_id.end()) {
          const auto guess = closest_match(id, ids);
          diagnostics.error(s.feeds_where,
                            fmt::format("stage '{}': feeds unknown stage '{}'{}", s.id, id,
                                        guess.empty() ? "" : fmt::format("; did you mean '{}'?", guess)));
          continue;
        }
        connect(copies.last_copy[i], copies.first_copy[it->second]);
      }
    } else if (i + 1 < spec.stages.size() && !named[i + 1]) {
      connect(copies.last_copy[i], copies.first_copy[i + 1]);
    }
  }
  return drivers;
}

void check_one_driver(const ChainSpec& spec, const std::vector<GraphStage>& stages,
                      const std::vector<std::vector<size_t>>& drivers, Diagnostics& diagnostics) {
  for (size_t v = 0; v < stages.size(); ++v) {
    if (drivers[v].size() <= 1) continue;
    std::vector<std::string> who;
    for (auto d : drivers[v]) who.push_back(stages[d].id);
    diagnostics.error(spec.stages[stages[v].table].where,
                      fmt::format("stage '{}' is fed by {}; a stage input can have only one driver",
                                  stages[v].id, join_ids(who, " and ")));
  }
}

// Run after check_one_driver has passed: each cycle is then the driver chain of its back edge.
void check_no_cycles(const ChainSpec& spec, const std::vector<GraphStage>& stages, const Graph& graph,
                     const std::vector<std::vector<size_t>>& drivers, Diagnostics& diagnostics) {
  std::vector<std::pair<size_t, size_t>> back_edges;
  BackEdgeRecorder recorder;
  recorder.back_edges = &back_edges;
  boost::depth_first_search(graph, boost::visitor(recorder));
  for (const auto& [from, to] : back_edges) {
    std::vector<std::string> cycle{stages[to].id};
    std::vector<size_t> walk;
    for (size_t v = from; v != to && walk.size() <= stages.size(); v = drivers[v].front()) walk.push_back(v);
    for (auto it = walk.rbegin(); it != walk.rend(); ++it) cycle.push_back(stages[*it].id);
    cycle.push_back(stages[to].id);
    // The back edge leaves `from`: point at its feeds when that is what closes the cycle.
    const auto& table = spec.stages[stages[from].table];
    diagnostics.error(table.feeds_where.line ? table.feeds_where : table.where,
                      fmt::format("the stages form a cycle: {}; a chain must run from its input to its outputs",
                                  join_ids(cycle)));
  }
}

// Sets each copy's driver; exactly one copy may be driven by the chain input.
void set_drivers(const ChainSpec& spec, std::vector<GraphStage>& stages,
                 const std::vector<std::vector<size_t>>& drivers, Diagnostics& diagnostics) {
  std::vector<std::string> roots;
  for (size_t v = 0; v < stages.size(); ++v) {
    if (drivers[v].empty()) roots.push_back(stages[v].id);
    stages[v].driver = drivers[v].empty() ? -1 : static_cast<int>(drivers[v].front());
  }
  if (roots.size() > 1)
    diagnostics.error(spec.stages[stages[0].table].where,
                      fmt::format("stages {} have no driver; exactly one stage may be driven by the chain "
                                  "input (list the others in some stage's feeds)", join_ids(roots, ", ")));
}

}  // namespace

std::optional<std::vector<GraphStage>> build_stage_graph(const ChainSpec& spec, Diagnostics& diagnostics,
                                                         const std::vector<int>* counts) {
  auto copies = list_stage_copies(spec, diagnostics, counts);
  if (!diagnostics.empty()) return std::nullopt;
  Graph graph(copies.stages.size());
  const auto drivers = connect_stages(spec, copies, graph, diagnostics);
  check_one_driver(spec, copies.stages, drivers, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;
  check_no_cycles(spec, copies.stages, graph, drivers, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;
  set_drivers(spec, copies.stages, drivers, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;
  return std::move(copies.stages);
}

void apply_designs(Chain& chain, const ChainSpec& spec, const std::vector<GraphStage>& graph,
                   const ScanResolution& scan) {
  // Copies of a counted stage are identical: each is resolved as the first copy is, against
  // the first copy's load (the copies before the last all drive another copy).
  std::vector<int> first_copy(spec.stages.size(), -1);
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    auto& stage = chain.stages[i];
    auto& c = stage.circuit;
    const auto& s = spec.stages[graph[i].table];
    if (int& first = first_copy[graph[i].table]; first >= 0) {
      const auto& model = chain.stages[static_cast<size_t>(first)];
      const double c_node = c.c_node;
      c = model.circuit;
      c.c_node = c_node;
      stage.intent = model.intent;
      continue;
    } else {
      first = static_cast<int>(i);
    }
    const auto& info = load_kind_info(c.kind);
    if (const auto factor = design_factor(s, info)) {
      info.apply_design(c, *factor);
      if (info.design == DesignFactor::m)
        stage.intent = {DesignIntent::Kind::m, *factor, fmt::format("m = {:.4g}", *factor)};
      else
        stage.intent = {DesignIntent::Kind::zeta, *factor,
                        s.response.empty() ? fmt::format("zeta = {:.4g}", *factor)
                                           : fmt::format("{} (zeta = {:.4g})", s.response, *factor)};
    }
    // Losses from the technology's Q at the stage's own bandwidth (found with lossless coils),
    // for every coil whose loss the file leaves out (directly or through a shorthand).
    const auto& q = spec.technology.inductor_q;
    if (!q) continue;
    std::vector<const LoadParameter*> open_losses;
    for (const auto& p : info.parameters)
      if (p.role == ParameterRole::loss && !s.find(p.key) && (p.fallback_key.empty() || !s.find(p.fallback_key)))
        open_losses.push_back(&p);
    if (open_losses.empty()) continue;
    ScanResolution edge_only = scan;
    edge_only.bandwidth_only = true;
    const auto bw = frequency_metrics(Cascade({build_stage_system(c).rational()}), not_found, edge_only).bandwidth_hz;
    if (!std::isfinite(bw)) continue;
    for (const auto* p : open_losses)
      c.*(p->field) = loss_resistance(c.*(find_parameter(info, p->loss_of)->field), *q, bw);
  }
}

bool gives_design(const StageSpec& stage) { return stage.m || stage.zeta || !stage.response.empty(); }

std::optional<double> design_factor(const StageSpec& stage, const LoadKindInfo& kind) {
  switch (kind.design) {
    case DesignFactor::none: return std::nullopt;
    case DesignFactor::m: return stage.m;
    case DesignFactor::zeta:
      if (stage.zeta) return stage.zeta;
      if (!stage.response.empty()) return zeta_for_response(stage.response);
      return std::nullopt;
  }
  return std::nullopt;
}

void read_kind_values(StageCircuit& c, const std::function<double(std::string_view, double)>& value) {
  for (const auto& p : load_kind_info(c.kind).parameters) {
    if (!p.field) continue;
    const double fallback = p.fallback_key.empty() ? p.fallback : value(p.fallback_key, p.fallback);
    c.*(p.field) = value(p.key, fallback);
  }
}

// A transimpedance stage (a kind that takes a current) is the chain's front end: the first stage,
// one of it, never a candidate among voltage-gain kinds; a photodiode needs one, and what only a
// voltage input has (r_source, a source noise density, a swing in volts) cannot go with it.
void check_current_input(const ChainSpec& spec, const std::vector<GraphStage>& graph, Diagnostics& diagnostics) {
  bool current_input = false;
  for (const auto& g : graph) {
    const auto& s = spec.stages[g.table];
    const bool has_tia = std::any_of(s.kinds.begin(), s.kinds.end(),
                                     [](LoadKind k) { return load_kind_info(k).current_input; });
    if (!has_tia || g.copy > 1) continue;
    const std::string who = "stage '" + s.id + "': ";
    if (s.kinds.size() > 1)
      diagnostics.error(s.kind_where, who + "a tia is a receiver's front end, not a candidate among voltage-gain "
                                            "kinds; give kind = \"tia\" alone");
    if (g.driver >= 0)
      diagnostics.error(s.kind_where, who + "a tia stage takes the photocurrent, so it must be the first stage "
                                            "(no stage may feed it)");
    else
      current_input = true;
    if (const auto* tail = s.find("tail_current"))
      diagnostics.error(tail->where, who + "a tia stage is linear here; tail_current belongs to a limiting stage after it");
    if (!s.count.is_fixed() || s.count.value != 1.0)
      diagnostics.error(s.count.where.line > 0 ? s.count.where : s.where,
                        who + "a tia stage is one stage; for more gain cells in its core use core_stages");
  }
  if (spec.photodiode && !current_input)
    diagnostics.error(spec.photodiode->where, "[input.photodiode]: a photodiode drives a transimpedance stage; make "
                                              "the first stage kind = \"tia\"");
  const auto& target = spec.target;
  if (!current_input) {
    const std::string needs = " is a receiver's target: the chain must start with a tia stage (and a photodiode)";
    if (target.transimpedance) diagnostics.error(target.transimpedance_where, "[target] transimpedance" + needs);
    if (target.sensitivity_w) diagnostics.error(target.sensitivity_where, "[target] sensitivity" + needs);
    if (target.objective == Objective::quietest)
      diagnostics.error(target.objective_where, "[target] objective \"quietest\" (the least input-referred noise "
                                                "current)" + needs);
    return;
  }
  if (target.gain_db)
    diagnostics.error(target.gain_where, "[target] gain is a voltage gain; a chain driven by a photocurrent has a "
                                         "transimpedance: give [target] transimpedance (e.g. \"5 kohm\") instead");
  if (target.sensitivity_w && (!spec.photodiode || !spec.signal))
    diagnostics.error(target.sensitivity_where, "[target] sensitivity needs [input.photodiode] (its responsivity) and "
                                                "a [signal] (the bit rate, modulation and target BER)");
  if (spec.r_source > 0.0)
    diagnostics.error(spec.r_source_where, "[input] r_source: the chain starts with a tia, which takes a current; "
                                           "leave r_source out (the photodiode is the source)");
  if (spec.input_noise_density)
    diagnostics.error(spec.noise_density_where, "[input] noise_density is a voltage density for a voltage input; the "
                                                "chain starts with a tia (its input noise is the photodiode's and the tia's own)");
  if (spec.signal && spec.signal->swing)
    diagnostics.error(spec.signal->swing_where, "[signal] swing is an input voltage; the chain starts with a tia, "
                                                "whose input is a photocurrent: the sensitivity is reported instead");
}

namespace {

// A pair's half-circuit gm is at most I_T/(2 V_T) (the bipolar bound; a MOS pair's is lower).
void check_tail_gm(const ChainSpec& spec, const StageSpec& s, const StageCircuit& c, const std::string& who,
                   Diagnostics& diagnostics) {
  const auto* tail = s.find("tail_current");
  if (!tail || !(c.gm > 0.0)) return;
  const double bound = max_pair_gm(tail->value, spec.technology.temperature);
  if (c.gm > bound)
    diagnostics.error(tail->where, fmt::format("{}tail_current {} cannot give gm = {}: a {} pair's half-circuit "
                                               "gm is at most I_T/(2 V_T) = {} at {:g} K; expected at least {}",
                                               who, format_si(tail->value, "A", 4), format_si(c.gm, "S", 4),
                                               s.pair.empty() ? "bipolar" : s.pair, format_si(bound, "S", 4),
                                               spec.technology.temperature,
                                               format_si(tail->value * c.gm / bound, "A", 4)));
}

// A stage's own gain gm (Rd || r_load) decades past any broadband stage's (gm = 100 nS with
// rd = 1 mohm, or rd = 100 Mohm) puts poles and gains in one cascade so far apart that its
// polynomials cannot be solved: each value is plausible alone, the product is not.
void check_stage_gain(const StageSpec& s, const StageCircuit& c, const std::string& who, Diagnostics& diagnostics) {
  const auto* rd_at = s.find("rd");
  if (!rd_at || !(c.gm > 0.0) || !(c.rd > 0.0)) return;
  const double r = std::isfinite(c.r_load) ? c.rd * c.r_load / (c.rd + c.r_load) : c.rd;
  const double gain = c.gm * r;
  if (!(gain >= kMinStageGain && gain <= kMaxStageGain))
    diagnostics.error(rd_at->where,
                      fmt::format("{}gm x {} = {} x {} is a stage gain of {:.3g} ({:.1f} dB), outside the "
                                  "plausible range {:g} .. {:g} ({:.0f} .. {:.0f} dB); check the units of gm and rd",
                                  who, std::isfinite(c.r_load) ? "(rd || r_load)" : "rd", format_si(c.gm, "S", 4),
                                  format_si(r, "ohm", 4), gain, 20.0 * std::log10(gain), kMinStageGain,
                                  kMaxStageGain, 20.0 * std::log10(kMinStageGain), 20.0 * std::log10(kMaxStageGain)));
}

// The circuit of one [[stage]] table as written: every value fixed, the kind's required keys
// present, a design only where the kind has one. Capacitances of the node go to c_in and c_load.
void read_stage_circuit(const ChainSpec& spec, const StageSpec& s, StageCircuit& c, double& c_in, double& c_load,
                        Diagnostics& diagnostics) {
  const std::string who = "stage '" + s.id + "': ";
  if (!s.kind_is_fixed()) {
    diagnostics.error(s.kind_where, who + "kind lists candidates; analyze needs one kind "
                                          "(peakplan plan chooses among them)");
    return;
  }
  c.kind = s.kinds.front();
  std::set<std::string, std::less<>> reported;  // a shorthand key is read for several elements
  auto value = [&](std::string_view key, double fallback) {
    const auto* a = s.find(key);
    if (!a) return fallback;
    if (!a->is_fixed()) {
      if (reported.insert(std::string(key)).second)
        diagnostics.error(a->where, who + std::string(key) + " is " +
                                      (a->mode == Adjustable::Mode::automatic ? "\"auto\"" : "a range") +
                                      "; analyze needs a value (peakplan plan chooses it)");
      return fallback;
    }
    return a->value;
  };
  c.gm = value("gm", 0.0);
  c.rd = value("rd", 0.0);
  c_in = value("c_in", 0.0);
  c.c_out = value("c_out", 0.0);
  c_load = value("c_load", 0.0);
  c.r_load = value("r_load", std::numeric_limits<double>::infinity());
  if (const auto* tail = s.find("tail_current"); tail && !tail->is_fixed())
    value("tail_current", 0.0);  // reports the open value
  else
    check_tail_gm(spec, s, c, who, diagnostics);
  check_stage_gain(s, c, who, diagnostics);
  const auto& info = load_kind_info(c.kind);
  const auto factor = design_factor(s, info);
  const auto missing = info.missing ? info.missing([&](std::string_view key) { return s.find(key) != nullptr; },
                                                   factor.has_value())
                                    : std::string();
  if (!missing.empty()) diagnostics.error(s.where, who + missing);
  read_kind_values(c, value);
  if (info.design == DesignFactor::zeta && s.zeta && !(*s.zeta > 0.0))
    diagnostics.error(s.design_where, who + "zeta must be positive");
  if (gives_design(s) && info.design == DesignFactor::none)
    diagnostics.error(s.design_where, who + "a " + std::string(info.name) + " stage has no peaking design");
}

// A design that needs the output node's capacitance cannot be resolved without one.
void check_design_loads(const ChainSpec& spec, const std::vector<GraphStage>& graph, const Chain& chain,
                        Diagnostics& diagnostics) {
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    const auto& s = spec.stages[graph[i].table];
    const auto& c = chain.stages[i].circuit;
    const auto& info = load_kind_info(c.kind);
    if (design_factor(s, info) && !(info.design_capacitance(c) > 0.0))
      diagnostics.error(s.design_where, fmt::format("stage '{}': its design needs capacitance on the output "
                                                    "node (c_in of the stage it feeds, or c_load), found none",
                                                    chain.stages[i].id));
  }
}

// A stage whose own circuit has a pole in the right half-plane (a shunt-feedback tia of two or
// three cells with too much loop gain; a larger rf lowers the input pole, which steadies the
// loop) has no response to plan with: every figure of it would come from a growing waveform.
void check_stability(const ChainSpec& spec, const std::vector<GraphStage>& graph, const Chain& chain,
                     Diagnostics& diagnostics) {
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    if (graph[i].copy > 1) continue;
    const auto unstable = first_unstable_pole(stage_rational(chain.stages[i]).poles());
    if (!unstable) continue;
    const auto& s = spec.stages[graph[i].table];
    const auto* rf = s.find("rf");
    diagnostics.error(rf ? rf->where : s.where,
                      fmt::format("stage '{}' is unstable as written: its circuit has a pole in the right "
                                  "half-plane at {}{}; expected a stable stage{}",
                                  s.id, format_si(std::abs(*unstable) / (2.0 * std::numbers::pi), "Hz", 3),
                                  unstable->imag() != 0.0 ? " (an oscillation)" : "",
                                  rf ? ": fewer core_stages, less gain per cell (gm rd), a larger rf or a cf across it"
                                     : ""));
  }
}

// What a design sets must be a plausible element too (m = 10 with rd = 1 Mohm is 0.1 H).
void check_designed_inductances(const ChainSpec& spec, const std::vector<GraphStage>& graph, const Chain& chain,
                                Diagnostics& diagnostics) {
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    const auto& s = spec.stages[graph[i].table];
    const auto& c = chain.stages[i].circuit;
    const auto& info = load_kind_info(c.kind);
    if (!gives_design(s) || info.design == DesignFactor::none || graph[i].copy > 1) continue;
    for (const auto& p : info.parameters) {  // the inductances the design set, not given
      if (p.role != ParameterRole::element || p.dimension != Dimension::inductance || s.find(p.key)) continue;
      const double l = c.*p.field;
      auto why = implausibility(l, Dimension::inductance);
      why = why.substr(0, why.find("; did you mean"));  // another prefix is no fix for a derived value
      if (why.empty()) continue;
      diagnostics.error(s.design_where,
                        fmt::format("stage '{}': its design sets {} = {}: {}", s.id, p.key, format_si(l, "H", 4), why));
      break;  // one error per design
    }
  }
}

}  // namespace

std::optional<Chain> resolve_chain(const ChainSpec& spec, Diagnostics& diagnostics) {
  const auto graph = build_stage_graph(spec, diagnostics);
  if (!graph) return std::nullopt;
  check_current_input(spec, *graph, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;

  // Per [[stage]] table, so an error is reported once even when the stage has copies.
  std::vector<StageCircuit> circuits(spec.stages.size());
  std::vector<double> c_in(spec.stages.size()), c_load(spec.stages.size());
  for (size_t i = 0; i < spec.stages.size(); ++i)
    read_stage_circuit(spec, spec.stages[i], circuits[i], c_in[i], c_load[i], diagnostics);
  if (!diagnostics.empty()) return std::nullopt;

  Chain chain = assemble_chain(spec, *graph, circuits, c_in, c_load);
  check_design_loads(spec, *graph, chain, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;
  apply_designs(chain, spec, *graph);
  check_designed_inductances(spec, *graph, chain, diagnostics);
  check_stability(spec, *graph, chain, diagnostics);
  if (spec.variation) check_variation(*spec.variation, chain, diagnostics);
  if (!diagnostics.empty()) return std::nullopt;
  return chain;
}

Chain assemble_chain(const ChainSpec& spec, const std::vector<GraphStage>& graph,
                     const std::vector<StageCircuit>& circuits, const std::vector<double>& c_in,
                     const std::vector<double>& c_load) {
  Chain chain;
  chain.name = spec.name;
  chain.r_source = spec.r_source;
  if (spec.photodiode)
    chain.photodiode = Photodiode{spec.photodiode->capacitance, spec.photodiode->responsivity,
                                  spec.photodiode->dark_current};
  for (const auto& g : graph) {
    ChainStage stage;
    stage.id = g.id;
    stage.circuit = circuits[g.table];
    stage.circuit.coil_c_per_l = spec.technology.coil_c_per_l();
    stage.c_in = c_in[g.table];
    stage.c_load = c_load[g.table];
    stage.driver = g.driver;
    stage.tap = spec.stages[g.table].tap;
    if (const auto* tail = spec.stages[g.table].find("tail_current"))
      stage.limit = PairLimit{tail->value, pair_kind_from_name(spec.stages[g.table].pair).value_or(PairKind::bipolar)};
    chain.stages.push_back(std::move(stage));
  }
  fill_node_capacitances(chain);
  return chain;
}

std::optional<Chain> read_chain(const std::string& path, const std::vector<Override>& overrides,
                                Diagnostics& diagnostics) {
  const auto spec = read_chain_spec(path, overrides, diagnostics);
  if (!spec) return std::nullopt;
  return resolve_chain(*spec, diagnostics);
}

std::optional<Chain> read_chain(const std::string& path, Diagnostics& diagnostics) {
  const auto spec = read_chain_spec(path, diagnostics);
  if (!spec) return std::nullopt;
  return resolve_chain(*spec, diagnostics);
}

}  // namespace peakplan

namespace peakplan {

AnalysisOptions analysis_options(const ChainSpec& spec, int points) {
  AnalysisOptions options;
  options.points = points;
  if (spec.limits.ripple_band) options.ripple_band_hz = *spec.limits.ripple_band;
  options.noise.temperature = spec.technology.temperature;
  options.noise.gamma = spec.technology.gamma;
  if (spec.input_noise_density) options.noise.input_density = *spec.input_noise_density;
  if (spec.signal) {
    Signal signal;
    signal.bit_rate = spec.signal->bit_rate;
    signal.modulation = spec.signal->modulation;
    signal.pattern = prbs_from_name(spec.signal->pattern).value_or(PrbsKind::prbs7);
    signal.input_rise = spec.signal->input_rise.value_or(0.0);
    signal.swing = spec.signal->swing.value_or(1.0);
    signal.target_ber = spec.signal->target_ber;
    if (spec.signal->extinction_ratio_db) signal.extinction_ratio = std::pow(10.0, *spec.signal->extinction_ratio_db / 10.0);
    options.signal = signal;
    options.swing_given = spec.signal->swing.has_value();
    options.noise.receiver_bandwidth_hz = spec.signal->receiver_bandwidth.value_or(0.0);
  }
  return options;
}

}  // namespace peakplan
