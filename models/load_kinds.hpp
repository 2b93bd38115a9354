// The stage kinds, and the table that describes them: the only seam a new kind plugs into.
//
// A stage is a gm cell (current gm*v_in drawn from the drain node) and a passive load network
// whose AC ground is the supply. Each kind lives in its own file (load_<kind>.cpp) with its
// schematic, its closed-form response, its parameter table and its hooks (stamp, netlist,
// validation, normalised design, DC resistance); adding a kind means adding that file and one
// entry in load_kinds.cpp. Everything else (the loader, the planner's problem, the budget,
// the netlist, the reports, the contract test) loops over the table.
#pragma once

#include <functional>
#include <limits>
#include <optional>
#include <span>
#include <string>
#include <string_view>

#include "models/nodal_system.hpp"
#include "models/rational.hpp"
#include "models/units.hpp"

namespace peakplan {

enum class LoadKind { plain, shunt, series, tcoil, tia };

// Every element value of one stage, SI. Values a kind does not use are ignored.
struct StageCircuit {
  LoadKind kind = LoadKind::plain;
  double gm = 0.0;
  double rd = 0.0;
  double l = 0.0;    // shunt, series
  double r_l = 0.0;  // series resistance of l
  double l1 = 0.0, l2 = 0.0, k = 0.0, cb = 0.0;  // tcoil
  double r_l1 = 0.0, r_l2 = 0.0;                 // tcoil coil losses
  double c_w = 0.0;                              // tcoil inter-winding capacitance, each half
  // tia: the feedback from the output to the input node, and the core's identical gm-Rd cells.
  double rf = 0.0, cf = 0.0;
  double core_stages = 1.0;
  // tia: the core cell's input capacitance (the stage's c_in) and what the chain's photodiode
  // puts on the input node beside it; filled by fill_node_capacitances.
  double c_cell_in = 0.0;
  double c_pd = 0.0, i_dark = 0.0;
  // Every coil's capacitance to AC ground per henry of its inductance ([technology]
  // coil_c_per_nh), half at each end: stamped through stamp_coil by each kind.
  double coil_c_per_l = 0.0;  // F/H
  double c_out = 0.0;   // the stage's own drain-node parasitic
  double c_node = 0.0;  // on the output node: c_in of every stage fed, plus c_load
  double r_load = std::numeric_limits<double>::infinity();  // on the output node; inf = open
  bool operator==(const StageCircuit&) const = default;
};

// What a key of a kind is to the rest of the program.
enum class ParameterRole {
  element,    // a main element (L, L1, k, Cb): shown in budgets and comparisons, plannable
  loss,       // a coil's series loss (loss_of names the coil); derived from inductor_q if absent
  parasitic,  // an extra element (a winding capacitance): written and reported, not planned
  alias,      // a shorthand that gives other keys their fallback (tcoil r_l); not an element
  design,     // a normalised design input (m, zeta, response): no field, sets the elements
  structure,  // a whole number that shapes the circuit (a tia's core cells): written, not planned or varied
};

// Where the planner's default bounds of an "auto" key come from when [technology] says more.
enum class TechnologyBound { none, inductance, coupling, bridge_capacitance };

// One key a kind accepts in a [[stage]] table, beyond the keys every stage has.
struct LoadParameter {
  std::string_view key;
  Dimension dimension;
  std::string_view description;
  ParameterRole role = ParameterRole::element;
  double StageCircuit::*field = nullptr;  // the element it sets; nullptr for design inputs
  double fallback = 0.0;                  // its value when the file leaves it out
  std::string_view fallback_key = {};     // ...or this key's value when the file gives that
  std::string_view label = {};            // display name ("L1", "Cb")
  std::string_view loss_of = {};          // loss: the key of the coil it belongs to
  // Planner: default bounds of "auto" (SI), searched on a log scale unless linear.
  double plan_lo = 0.0, plan_hi = 0.0;
  bool linear_scale = false;
  TechnologyBound technology = TechnologyBound::none;
  // Written to a chain file only when nonzero (an absent parasitic).
  bool omit_when_zero = false;
  // Zero is not a value (a tia's rf: without feedback its input node floats).
  bool positive = false;
};

// Which normalised design a kind is resolved from, if any.
enum class DesignFactor { none, m, zeta };

// Which of a stage's keys the chain file gave, for validation hooks.
using KeyGiven = std::function<bool(std::string_view key)>;

// What a kind's netlist hook writes through: reports/netlist.cpp implements it as SPICE lines
// inside the stage's subcircuit (ports in, out; node 0 = AC ground). Mirrors the stamp.
class ElementSink {
 public:
  virtual ~ElementSink() = default;
  // The stage's gm cell, controlled by v(in), drawing its current out of `node`.
  virtual void gm_cell(std::string_view node) = 0;
  // A gm cell inside the stage: gm * v(control) drawn out of `node` (negative gm: pushed into it).
  virtual void inner_gm_cell(std::string_view name, std::string_view control, std::string_view node, double gm) = 0;
  virtual void resistor(std::string_view name, std::string_view a, std::string_view b, double ohms) = 0;
  virtual void capacitor(std::string_view name, std::string_view a, std::string_view b, double farads) = 0;
  // Returns whether an L element was written (a coupling may refer to it only then).
  virtual bool inductor(std::string_view name, std::string_view a, std::string_view b, double henries,
                        double series_ohms) = 0;
  virtual void coupling(std::string_view name, std::string_view l1, std::string_view l2, double k) = 0;
};

struct LoadKindInfo {
  LoadKind kind;
  std::string_view name;
  std::string_view summary;
  std::span<const LoadParameter> parameters;
  // Stamps the load and the gm drive into an empty system; returns the output node.
  int (*stamp)(const StageCircuit&, NodalSystem&);
  // True when the stage's output node is its drain (plain, shunt), so c_out loads the output.
  bool drain_is_output = false;
  // The stage takes a current into an input node of its own (a transimpedance stage): its stamp
  // builds that node, drives it with 1 A and returns the output, so its transfer is in ohms. It
  // can only be the chain's first stage, "auto" kinds never include it, and its feedback makes
  // its driving-point impedance active (no passivity to check).
  bool current_input = false;
  // One-line schematic for the netlist's comment, and the elements the stamp stamps, minus the
  // output node's c_node and r_load (the netlist writes those from c_load and the stages fed).
  std::string_view netlist_comment;
  void (*netlist)(const StageCircuit&, ElementSink&) = nullptr;
  // Resistance from the drain to AC ground at DC (the load the gm cell sees, r_load aside).
  double (*dc_resistance)(const StageCircuit&) = nullptr;
  // What is missing for an analysis: an error text naming the keys, empty when complete.
  // `designed`: the file gave the kind's normalised design.
  std::string (*missing)(const KeyGiven& given, bool designed) = nullptr;
  // The normalised design: the factor, its planner range and seed, and how it sets the
  // elements (role element) against the stage's actual load.
  DesignFactor design = DesignFactor::none;
  double design_lo = 0.0, design_hi = 0.0, design_seed = 0.0;
  void (*apply_design)(StageCircuit&, double factor) = nullptr;
  // The capacitance the design is made against (must be positive for a design).
  double (*design_capacitance)(const StageCircuit&) = nullptr;
  // The closed form a designed stage promises, for the design check; nullptr: no check.
  Rational (*ideal_response)(const StageCircuit&) = nullptr;
};

const LoadKindInfo& load_kind_info(LoadKind kind);
std::span<const LoadKindInfo> all_load_kinds();
std::optional<LoadKind> load_kind_from_name(std::string_view name);
std::string_view to_string(LoadKind kind);
// The kind's parameter of that key, or nullptr.
const LoadParameter* find_parameter(const LoadKindInfo& info, std::string_view key);
// The loss parameter of a coil key, or nullptr.
const LoadParameter* loss_of(const LoadKindInfo& info, std::string_view coil_key);

// A coil as every kind stamps it: L with its series loss r from a to b, and its self-capacitance
// c_per_l * L to AC ground, half at each end (the shunt capacitances of a spiral's lumped pi
// model; an end at AC ground takes none). Returns the coil's branch, for a mutual coupling.
int stamp_coil(NodalSystem& sys, int a, int b, double l, double r, double c_per_l);
// The same through a netlist sink (ground is node "0"): the L line and its end capacitors
// C<name>a, C<name>b. Returns whether the L element was written.
bool netlist_coil(ElementSink& w, std::string_view name, std::string_view a, std::string_view b, double l, double r,
                  double c_per_l);

// Every capacitance on the stage's output node: c_node, plus c_out when the drain is the output.
double output_node_capacitance(const StageCircuit& stage);

// The stage's nodal system with its output node set, driven by v_in = 1 V.
NodalSystem build_stage_system(const StageCircuit& stage);
// Index of the drain node in a system built by build_stage_system.
constexpr int drain_node = 0;

// Kind tables, defined in load_<kind>.cpp.
extern const LoadKindInfo plain_load;
extern const LoadKindInfo shunt_load;
extern const LoadKindInfo series_load;
extern const LoadKindInfo tcoil_load;
extern const LoadKindInfo tia_load;

}  // namespace peakplan
